"""The ``turnback clarity`` contract, run as a user would (a subprocess)."""

from __future__ import annotations

import json
import math
import subprocess
import sys

import pytest


def turnback(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "turnback", *args], capture_output=True, text=True, timeout=60)


def test_json_contract() -> None:
    out = turnback("clarity", "--tp-ug-l", "24", "--json")
    assert out.returncode == 0, out.stderr
    assert len(out.stdout.strip().splitlines()) == 1
    data = json.loads(out.stdout)
    assert set(data) == {"tsi_tp", "chl_ug_l", "secchi_m", "oecd_class", "tsi_class"}
    # Carlson (1977) formula by hand: TSI(TP) = 14.42 ln 24 + 4.15; Secchi and Chl at the same TSI
    tsi = 14.42 * math.log(24.0) + 4.15
    assert data["tsi_tp"] == pytest.approx(tsi, rel=1e-12)
    assert data["secchi_m"] == pytest.approx(math.exp((60.0 - tsi) / 14.41), rel=1e-12)
    assert data["chl_ug_l"] == pytest.approx(math.exp((tsi - 30.6) / 9.81), rel=1e-12)
    # Carlson (1977) table row TSI 50: TP 24 µg/L, Secchi 2 m (rounded table: 1 %)
    assert data["secchi_m"] == pytest.approx(2.0, rel=0.01)
    assert data["oecd_class"] == "mesotrophic"  # OECD (1982): 10 < TP <= 35
    assert data["tsi_class"] == "mesotrophic"  # TSI 49.98 < 50 (Carlson & Simpson 1996 bands)


@pytest.mark.parametrize(
    "tp, oecd",
    [
        ("4", "ultra-oligotrophic"),
        ("10", "oligotrophic"),
        ("35", "mesotrophic"),
        ("50", "eutrophic"),
        ("100", "hypertrophic"),
    ],
)
def test_json_oecd_classes(tp: str, oecd: str) -> None:
    # OECD (1982) fixed boundaries, exact edge values as documented in model.clarity
    data = json.loads(turnback("clarity", "--tp-ug-l", tp, "--json").stdout)
    assert data["oecd_class"] == oecd


def test_readable_output_includes_who_caution_when_relevant() -> None:
    out = turnback("clarity", "--tp-ug-l", "60")
    assert out.returncode == 0
    text = out.stdout
    assert "Secchi depth" in text and "chlorophyll-a" in text and "eutrophic" in text
    # expected chl at TP 60 is about 27 µg/L: the WHO (2003) 10 µg/L guidance level applies
    assert "WHO (2003)" in text and "10 µg/L" in text and "local health advisories" in text
    assert "safe" not in text.lower().replace("water-safety", "")
    low = turnback("clarity", "--tp-ug-l", "8").stdout
    assert "implies nothing" in low and "local health advisories" in low


@pytest.mark.parametrize(
    "value, fragment",
    [
        ("-1", "greater than 0"),
        ("0", "greater than 0"),
        ("nan", "is not a number"),
        ("inf", "is not a number"),
        ("-inf", "is not a number"),
        ("abc", "not a number"),
        ("1e9", "between"),
    ],
)
def test_bad_values_exit_2_with_one_line(value: str, fragment: str) -> None:
    out = turnback("clarity", f"--tp-ug-l={value}", "--json")
    assert out.returncode == 2
    assert fragment in out.stderr and "--tp-ug-l" in out.stderr
    assert "Traceback" not in out.stderr
    assert len(out.stderr.strip().splitlines()) == 1
    assert out.stdout == ""


def test_missing_value_and_table_mode_errors_exit_2() -> None:
    out = turnback("clarity", "--json")
    assert out.returncode == 2 and "--tp-ug-l" in out.stderr and "Traceback" not in out.stderr
    out = turnback("clarity", "--tp-ug-l", "-5")  # without --json: same one-line error
    assert out.returncode == 2 and out.stdout == "" and len(out.stderr.strip().splitlines()) == 1
