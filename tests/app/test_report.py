"""The HTML report, its figures, CSV and PNG output, and ``turnback report``."""

from __future__ import annotations

import csv
import html
import json
import os
import re
import shutil
import subprocess
import sys
from datetime import UTC, datetime
from pathlib import Path

import numpy as np
import plotly.graph_objects as go
import pytest
from turnback.app.report import CAUTIONS, build_report_html, report_figures, write_csv, write_pngs
from turnback.app.views.plans.figures import clear_probability_figure, recovery_figure, trajectory_figure
from turnback.model.ensemble import compare_plan
from turnback.model.params import LakeParameters
from turnback.model.plan import Plan, Precaution, Scenario, ScenarioLake
from turnback.model.schedules import ConstantLoad, LinearCut, Removal

ROOT = Path(__file__).resolve().parents[2]
LAKE = ScenarioLake(LakeParameters(0.8, 30000.0, 25000.0, 6.0), 2.0e8, 120.0, "Lake Amberlin (fictional)")
PLAN = Plan(
    LAKE,
    (
        Scenario("hold <b>", 20, ConstantLoad(9000.0)),
        Scenario(
            "cut",
            20,
            LinearCut(9000.0, 80.0, 5),
            variability_cv=0.3,
            members=300,
            seed=2,
            treatments=(Removal(3, 5000.0),),
            precaution=Precaution(10, 10.0),
        ),
    ),
)


@pytest.fixture(scope="module")
def comparison():  # type: ignore[no-untyped-def]
    return compare_plan(PLAN)


def test_html_is_standalone_with_cautions_parameters_and_date(comparison) -> None:  # type: ignore[no-untyped-def]
    when = datetime(2031, 4, 5, 6, 7, tzinfo=UTC)
    text = build_report_html(comparison, generated=when, source="plan.json")
    # Standalone: plotly.js is inline and no script is fetched from anywhere (plotly, a general-purpose library,
    # writes its version into the bundle header).
    assert re.search(r"plotly\.js v\d+\.\d+\.\d+", text) is not None and len(text) > 1_000_000
    assert re.search(r"<script[^>]*\bsrc\s*=", text, flags=re.IGNORECASE) is None
    assert "tex-svg" not in text and "tex-mml" not in text  # no MathJax script (what plotly adds when asked)
    for c in CAUTIONS:
        assert html.escape(c) in text
    assert "local health authorities" in text and "permits and licensed practice" in text
    assert "safe to swim" not in text.lower()
    assert "2031-04-05 06:07" in text and "plan.json" in text
    assert "0.8 yr⁻¹" in text and "30,000 kg yr⁻¹" in text and "Tipping load" in text
    assert 'id="outcomes"' in text and "click to sort" in text
    assert "hold &lt;b&gt;" in text and "hold <b>" not in text  # user text is escaped
    assert "Carpenter, S. R., Ludwig, D." in text
    assert text.count('class="plotly-graph-div"') == 4


def test_figures_are_pure_and_show_the_results(comparison) -> None:  # type: ignore[no-untyped-def]
    before = [r.tp_median_ug_l.copy() for r in comparison.results]
    fig = trajectory_figure(comparison.results)
    assert isinstance(fig, go.Figure)
    medians = [t for t in fig.data if t.showlegend is not False]
    assert [t.name for t in medians] == ["hold <b>", "cut"]
    for t, r in zip(medians, comparison.results, strict=True):
        assert np.allclose(t.y, r.tp_median_ug_l)
    bands = [t for t in fig.data if t.fill == "tonexty"]
    assert len(bands) == 2 and np.allclose(bands[1].y, comparison.results[1].tp_p05_ug_l)
    pc = clear_probability_figure(comparison.results)
    assert np.allclose(pc.data[1].y, 100 * comparison.results[1].p_clear)
    rf = recovery_figure(comparison.results)
    rec = comparison.results[1].recovery_year
    assert rf.data[1].y[-1] == pytest.approx(100 * np.isfinite(rec).mean())
    assert all(np.array_equal(a, r.tp_median_ug_l) for a, r in zip(before, comparison.results, strict=True))
    assert trajectory_figure(comparison.results).to_json() == fig.to_json()  # same input, same figure


def test_csv_tables(comparison, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    paths = write_csv(comparison, tmp_path / "out")
    assert [p.name for p in paths] == ["trajectories.csv", "outcomes.csv"]
    with open(paths[0], newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    assert len(rows) == 2 * 21
    cut = [r for r in rows if r["scenario"] == "cut"]
    assert [int(r["year"]) for r in cut] == list(range(21))
    assert cut[0]["load_kg_per_yr"] == "" and float(cut[5]["load_kg_per_yr"]) == pytest.approx(1800.0)
    assert np.allclose([float(r["tp_median_ug_l"]) for r in cut], comparison.results[1].tp_median_ug_l)
    with open(paths[1], newline="", encoding="utf-8") as fh:
        table = list(csv.DictReader(fh))
    assert [r["scenario"] for r in table] == ["hold <b>", "cut"]
    assert float(table[1]["p_clear_final"]) == comparison.results[1].p_clear_final
    assert table[0]["p_flip"] == ""  # undefined: no member starts clear


@pytest.mark.skipif(
    shutil.which("chromium") is None and shutil.which("google-chrome") is None, reason="PNG export needs Chromium"
)
def test_png_figures(comparison, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    figs = report_figures(comparison)
    paths = write_pngs({k: figs[k] for k in ("tp_trajectories", "clear_probability")}, tmp_path / "png", scale=1)
    for p in paths:
        assert p.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # the PNG signature (PNG specification, W3C)


def turnback(*args: str, cwd: Path) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "turnback", *args],
        capture_output=True,
        text=True,
        timeout=120,
        cwd=cwd,
        env=os.environ | {"PYTHONPATH": str(ROOT)},
    )


def test_report_command(tmp_path: Path) -> None:
    (tmp_path / "plan.json").write_text(PLAN.to_json(), encoding="utf-8")
    out = turnback("report", "plan.json", "-o", "report.html", "--csv", "tables", cwd=tmp_path)
    assert out.returncode == 0, out.stderr
    text = (tmp_path / "report.html").read_text(encoding="utf-8")
    assert "Scenario comparison — Lake Amberlin (fictional)" in text and "from plan.json" in text
    assert (tmp_path / "tables" / "outcomes.csv").exists()
    assert str(tmp_path) not in text  # no machine paths in the report


def test_report_command_refuses_bad_requests_and_keeps_old_files(tmp_path: Path) -> None:
    plan = tmp_path / "plan.json"
    plan.write_text(PLAN.to_json(), encoding="utf-8")
    old = tmp_path / "report.html"
    old.write_text("an earlier report", encoding="utf-8")
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps({"lake": LAKE.to_dict(), "scenarios": []}), encoding="utf-8")
    cases = [
        (("report", "bad.json", "-o", "report.html"), "scenarios must be a non-empty list"),
        (("report", "plan.json", "-o", "plan.json"), "must not be the plan file"),
        (("report", "plan.json", "-o", "missing/report.html"), "does not exist"),
    ]
    for args, fragment in cases:
        out = turnback(*args, cwd=tmp_path)
        assert out.returncode == 2 and fragment in out.stderr, out.stderr
        assert "Traceback" not in out.stderr and len(out.stderr.strip().splitlines()) == 1
    assert old.read_text(encoding="utf-8") == "an earlier report"
    assert json.loads(plan.read_text(encoding="utf-8")) == PLAN.to_dict()
