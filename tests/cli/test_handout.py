"""``turnback handout``: the lake on one page, agreeing with ``turnback analyze``."""

from __future__ import annotations

import json
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
RECORD = ROOT / "sample_data" / "amberlin_monitoring.csv"


def turnback(*args: str, cwd: Path) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "turnback", *args], capture_output=True, text=True, timeout=180, cwd=cwd
    )


def _kg(text: str, label: str) -> float:
    m = re.search(re.escape(label) + r"</th><td>([\d,]+) kg per year", text)
    assert m, label
    return float(m.group(1).replace(",", ""))


def test_the_three_numbers_are_analyzes(tmp_path: Path) -> None:
    out = turnback("handout", "--demo", "--record", str(RECORD), "-o", str(tmp_path / "h.html"), cwd=tmp_path)
    assert out.returncode == 0, out.stderr
    page = (tmp_path / "h.html").read_text(encoding="utf-8")
    ref = json.loads(turnback("analyze", "--demo", "--json", cwd=tmp_path).stdout)
    assert _kg(page, "Today&#x27;s phosphorus inflow") == 420
    assert _kg(page, "Tipping point") == round(ref["tipping_load"])
    assert _kg(page, "the inflow the lake needs to come back") == round(ref["recovery_load"])
    # the meeting register: no jargon; the cautions; opens offline (plotly inline, nothing fetched)
    words = re.sub(r"<script.*?</script>", "", page, flags=re.S)  # the text a reader sees, not plotly's code
    for jargon in ("separatrix", "bootstrap", "hysteretic", "chlorophyll", "Secchi"):
        assert jargon not in words
    assert "local health authority" in page and "permits and licensed practice" in page
    assert re.search(r"<script[^>]*\ssrc=", page) is None  # common practice, no source


def test_an_irreversible_lake_says_load_cuts_alone_cannot_bring_it_back(tmp_path: Path) -> None:
    lake = tmp_path / "lake.json"
    lake.write_text(
        json.dumps(
            {
                "name": "Stuck Pond (fictional)",
                "area_km2": 6.2,
                "volume_m3": 2.79e7,
                "load_kg_yr": 420,
                "parameters": {
                    "loss_rate": 0.3,
                    "recycling_max": 1800,
                    "recycling_half": 2500,
                    "recycling_exponent": 4,
                },
            }
        )
    )
    out = turnback("handout", "--lake", str(lake), "--units", "us", "-o", str(tmp_path / "h.html"), cwd=tmp_path)
    assert out.returncode == 0, out.stderr
    page = (tmp_path / "h.html").read_text(encoding="utf-8")
    assert "Cutting the inflow alone cannot bring this lake back" in page
    assert "lb per year" in page and "kg per year" not in page and "kg/yr" not in page


def test_bad_input_exits_2_with_one_line(tmp_path: Path) -> None:
    (tmp_path / "link").symlink_to(tmp_path / "elsewhere.html")
    for args in (
        ["handout", "-o", "x.html"],
        ["handout", "--demo", "-o", str(tmp_path / "link")],
        ["handout", "--demo", "--record", "/dev/zero", "-o", "h.html"],
    ):
        out = turnback(*args, cwd=tmp_path)
        assert out.returncode == 2 and len(out.stderr.strip().splitlines()) == 1 and "Traceback" not in out.stderr


@pytest.mark.skipif(shutil.which("pdfinfo") is None, reason="poppler-utils is not installed (.ci/run installs it)")
def test_the_pdf_is_exactly_one_page(tmp_path: Path) -> None:
    from turnback.app.handout import chromium

    if chromium() is None:
        pytest.skip("Chromium is not installed")
    for paper in ("A4", "Letter"):
        pdf = tmp_path / f"h-{paper}.pdf"
        out = turnback(
            "handout",
            "--demo",
            "--record",
            str(RECORD),
            "--paper",
            paper,
            "-o",
            str(tmp_path / f"h-{paper}.html"),
            "--pdf",
            str(pdf),
            cwd=tmp_path,
        )
        assert out.returncode == 0, out.stderr
        info = subprocess.run(["pdfinfo", str(pdf)], capture_output=True, text=True).stdout  # poppler's pdfinfo
        assert re.search(r"^Pages:\s+1$", info, re.M), info
        artifacts = ROOT / "test-artifacts"
        artifacts.mkdir(exist_ok=True)
        subprocess.run(
            ["pdftoppm", "-png", "-r", "60", "-singlefile", str(pdf), str(artifacts / f"handout-{paper}")], check=True
        )
