"""The monitoring-record and regime-map views, driven in headless Chromium."""

from __future__ import annotations

import time
from pathlib import Path
from typing import Any

from turnback.app.views.lake.figures import EQ_OBSERVED, EQ_TRACES

SAMPLE = Path(__file__).resolve().parents[2] / "sample_data" / "amberlin_monitoring.csv"


def open_tab(dash: Any, label: str) -> None:
    dash.page.click(f".view-tabs >> text={label}")
    dash.wait_idle()


def test_upload_fit_and_bad_file(dash_page: tuple[Any, list[str]], tmp_path: Path) -> None:
    dash, errors = dash_page
    open_tab(dash, "Monitoring record")
    record = tmp_path / "pond_record.csv"
    record.write_bytes(SAMPLE.read_bytes())
    dash.page.set_input_files("#record-upload input[type='file']", str(record))
    dash.page.wait_for_function("document.getElementById('record-summary').innerText.includes('pond_record.csv')")
    dash.page.fill("#record-replicates", "6000")
    dash.page.click("#record-fit")
    seen: set[str] = set()
    deadline = time.time() + 60
    while time.time() < deadline:
        text = dash.page.inner_text("#record-progress-text")
        seen.add(text)
        if text == "done":
            break
        time.sleep(0.05)
    assert "done" in seen
    assert any(t.endswith(" bootstrap refits") for t in seen), seen  # progress was shown while it ran
    dash.page.wait_for_selector("#fit-regime")
    assert "hysteretic" in dash.page.inner_text("#fit-regime")
    assert "90% interval" in dash.page.inner_text("#fit-tipping")
    dash.screenshot("record-fitted.png")
    # the fit is proposed; once used, the fitted lake is the current lake, with its observed years and fold bands
    dash.page.wait_for_function("!document.getElementById('record-use-fit').disabled")
    dash.page.click("#record-use-fit")
    dash.wait_idle()
    open_tab(dash, "The lake now")
    dash.page.wait_for_function("document.getElementById('lake-title').innerText.includes('pond_record.csv')")
    dash.wait_idle()
    assert len(dash.trace("equilibrium-graph", EQ_OBSERVED, "x")) == len(SAMPLE.read_text().strip().splitlines()) - 1
    assert "From the monitoring record" in dash.readout()
    fold_x = dash.trace("equilibrium-graph", EQ_TRACES.index("folds"), "x")
    dash.screenshot("lake-after-fit.png")
    # a bad file: a clear message, and the lake and record on show stay
    open_tab(dash, "Monitoring record")
    bad = tmp_path / "mg_per_litre.csv"
    bad.write_text("year,load_kg,tp_ug_l\n" + "\n".join(f"{2000 + i},300,0.0{3 + i % 5}" for i in range(15)) + "\n")
    dash.page.set_input_files("#record-upload input[type='file']", str(bad))
    dash.page.wait_for_function("document.getElementById('record-message').innerText.length > 0")
    msg = dash.page.inner_text("#record-message")
    assert "mg_per_litre.csv was not loaded" in msg and "mg/L" in msg
    assert "Traceback" not in msg
    assert "pond_record.csv" in dash.page.inner_text("#record-summary")
    dash.screenshot("record-bad-file.png")
    open_tab(dash, "The lake now")
    assert "pond_record.csv" in dash.page.inner_text("#lake-title")
    assert dash.trace("equilibrium-graph", EQ_TRACES.index("folds"), "x") == fold_x
    assert errors == []


def test_warning_signs_regime_map_and_clarity(dash_page: tuple[Any, list[str]]) -> None:
    dash, errors = dash_page
    assert "Secchi depth about" in dash.page.inner_text("#clarity-words")
    open_tab(dash, "Monitoring record")
    dash.page.wait_for_function("document.getElementById('warning-words').innerText.includes('τ =')")
    words = dash.page.inner_text("#warning-words")
    assert "variance" in words and "autocorrelation" in words and "skewness" in words
    open_tab(dash, "Regime map")
    dash.page.wait_for_function(
        "(() => { const gd = document.getElementById('map-graph').querySelector('.js-plotly-plot');"
        " return gd && gd._fullData && gd._fullData.some(t => t.name === 'tipping fold'); })()"
    )
    title = dash.page.evaluate(
        "document.getElementById('map-graph').querySelector('.js-plotly-plot').layout.yaxis.title.text"
    )
    assert "Loss rate" in title
    dash.page.click("#map-axis >> text=maximum recycling r")
    dash.page.wait_for_function(
        "document.getElementById('map-graph').querySelector('.js-plotly-plot').layout.yaxis.title.text"
        ".includes('recycling')"
    )
    dash.screenshot("regime-map.png")
    assert "This lake" in dash.page.inner_text("#map-note")
    assert errors == []
