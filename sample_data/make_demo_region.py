r"""Generate the invented demo region: 40 fictional lakes with parameters, records or both.

Every number and every name is made up for demonstration; no real lake is
described.  The script writes two files for ``turnback screen``:

* ``region/LAKES.csv``: one row per lake (``lake_id``, ``name``,
  ``volume_m3``, ``area_km2``, ``load_kg_yr`` and, for some lakes, the four
  model parameters);
* ``region/RECORDS.csv``: annual monitoring rows in long format
  (``lake_id``, ``year``, ``load_kg``, ``tp_ug_l``, ``secchi_m``,
  ``chl_ug_l``).

The lakes are of four kinds:

* 14 with parameters and a record (analysed; the record's last year gives
  the state);
* 8 with parameters only (analysed; no state);
* 17 with a record only (fitted with the bootstrap);
* 1 with a record of only 6 years, too short to fit: it shows how a lake
  that cannot be screened is reported.

Each lake's parameters are drawn in the dimensionless form of Carpenter,
Ludwig & Brock (1999): exponent ``q`` in {2, 3, 4, 5}, and ``b = s m / r``
placed in the reversible (``b`` above the cusp value ``b_c(q)``),
hysteretic (between the irreversible boundary ``b_irr(q)`` and ``b_c``) or
irreversible (below ``b_irr``) region; the half-saturation ``m`` [kg]
corresponds to a lake TP of 40–120 µg L⁻¹, the loss rate ``s`` is
0.3–0.8 yr⁻¹, and ``r = s m / b`` [kg yr⁻¹].  Records follow the product's
annual map (:func:`turnback.model.dynamics.annual_step`) with lognormal
process noise (σ = 0.08) and yearly load noise (σ = 0.12), as the demo
lake's record (``make_demo_series.py``), under one of four load histories
relative to the lake's folds: steady below the tipping load, a rise
towards it, a rise past it, a deep cut below the recovery load and a
partial return, or steady turbid.
Today's load is the last record year's planned load.  Secchi depth and
chlorophyll a come from TP by Carlson's (1977) trophic state index
equivalence, with lognormal noise, for every other lake.

Run from the repository root::

    .venv/bin/python sample_data/make_demo_region.py [--out-dir DIR]

(default: ``sample_data/region`` beside this script).  The same seed gives
the same bytes.
"""

from __future__ import annotations

import argparse
import math
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from turnback.model.dynamics import annual_step
from turnback.model.equilibrium import cusp_b, equilibria, folds, irreversible_b
from turnback.model.params import LakeParameters

SEED = 20240914
LAST_YEAR = 2024
LOAD_SD = 0.12
PROCESS_SD = 0.08
CHL_SD = 0.20
SECCHI_SD = 0.15

#: Lake kinds in lake_id order: (kind, count).
KINDS = (("params+records", 14), ("params", 8), ("records", 17), ("short", 1))

_FIRST = (
    "Am",
    "Bel",
    "Cor",
    "Dun",
    "El",
    "Fen",
    "Gar",
    "Hol",
    "Ist",
    "Kel",
    "Lor",
    "Mar",
    "Nor",
    "Os",
    "Pel",
    "Quen",
    "Ros",
    "Sil",
    "Tor",
    "Ul",
    "Ven",
    "Wyn",
)
_SECOND = ("wick", "mere", "by", "ford", "stead", "holm", "dale", "ness", "thorpe", "wyn", "ton", "sey")

LAKE_HEADER = "lake_id,name,volume_m3,area_km2,load_kg_yr,loss_rate,recycling_max,recycling_half,recycling_exponent"
RECORD_HEADER = "lake_id,year,load_kg,tp_ug_l,secchi_m,chl_ug_l"


def _names(rng: np.random.Generator, n: int) -> list[str]:
    pairs = [a + b for a in _FIRST for b in _SECOND]
    picked = rng.choice(len(pairs), size=n, replace=False)
    return [f"Lake {pairs[int(i)]} (fictional)" for i in picked]


def _sig(x: float, digits: int = 4) -> float:
    """``x`` rounded to ``digits`` significant figures."""
    return float(f"{x:.{digits}g}")


def _parameters(rng: np.random.Generator, regime: str, volume_m3: float) -> LakeParameters:
    q = float(rng.choice([2.0, 3.0, 4.0, 5.0]))
    b_c, b_irr = cusp_b(q), irreversible_b(q)
    if regime == "reversible":
        b = b_c * rng.uniform(1.05, 1.5)
    elif regime == "hysteretic":
        b = b_irr + rng.uniform(0.2, 0.85) * (b_c - b_irr)
    else:
        b = b_irr * rng.uniform(0.7, 0.95)
    s = _sig(rng.uniform(0.3, 0.8), 3)
    m = _sig(rng.uniform(40.0, 120.0) * volume_m3 / 1e6)
    return LakeParameters(loss_rate=s, recycling_max=_sig(s * m / b), recycling_half=m, recycling_exponent=q)


def _history(rng: np.random.Generator, params: LakeParameters, n: int) -> tuple[str, np.ndarray]:
    """A planned load history [kg yr⁻¹] of ``n`` years relative to the lake's folds."""
    fs = folds(params)
    if fs:
        tip, rec = fs[0].load, fs[1].load
    else:  # reversible: the load that holds the lake at m, as a scale
        tip, rec = params.s * params.m - params.r * 0.5, -1.0
    if rec > 0:
        kind = str(rng.choice(["steady_clear", "rise", "loop", "turbid"], p=[0.25, 0.2, 0.4, 0.15]))
    else:
        kind = str(rng.choice(["steady_clear", "rise", "turbid"], p=[0.45, 0.35, 0.2]))
    t = np.linspace(0.0, 1.0, n)
    if kind == "steady_clear":
        plan = tip * rng.uniform(0.45, 0.75) * (1.0 + 0.25 * np.sin(2 * np.pi * t * rng.uniform(1.0, 2.5)))
    elif kind == "rise":
        plan = tip * (0.5 + rng.uniform(0.4, 0.7) * t)
    elif kind == "loop":
        k1, k2 = int(0.4 * n), int(0.75 * n)
        low = max(0.6 * rec, 0.05 * tip)
        up = np.linspace(0.5 * tip, 1.3 * tip, k1)
        down = np.linspace(1.3 * tip, low, k2 - k1)
        back = np.linspace(low, rng.uniform(0.6, 0.95) * tip, n - k2)
        plan = np.concatenate([up, down, back])
    else:
        plan = tip * rng.uniform(1.05, 1.25) * np.ones(n)
    return kind, np.maximum(plan, 1.0)


def _record(
    rng: np.random.Generator, params: LakeParameters, volume_m3: float, n: int, optical: bool
) -> tuple[list[tuple[int, float, float, float | None, float | None]], float]:
    kind, plan = _history(rng, params, n)
    loads = plan * np.exp(rng.normal(0.0, LOAD_SD, n))
    eqs = equilibria(params, float(loads[0]))
    p = np.empty(n)
    p[0] = eqs[-1].p if kind == "turbid" else eqs[0].p
    for t in range(1, n):
        p[t] = float(annual_step(params, p[t - 1], loads[t])) * math.exp(rng.normal(0.0, PROCESS_SD))
    tp = p * 1e6 / volume_m3
    rows: list[tuple[int, float, float, float | None, float | None]] = []
    tsi = 14.42 * np.log(tp) + 4.15  # Carlson (1977)
    chl = np.exp((tsi - 30.6) / 9.81) * np.exp(rng.normal(0.0, CHL_SD, n))
    sd = np.exp((60.0 - tsi) / 14.41) * np.exp(rng.normal(0.0, SECCHI_SD, n))
    for i in range(n):
        year = LAST_YEAR - n + 1 + i
        rows.append(
            (
                year,
                round(float(loads[i]), 1),
                round(float(tp[i]), 1),
                round(float(sd[i]), 2) if optical else None,
                round(float(chl[i]), 1) if optical else None,
            )
        )
    return rows, float(plan[-1])


def make_region(seed: int = SEED) -> tuple[str, str]:
    """The text of LAKES.csv and RECORDS.csv."""
    rng = np.random.default_rng(seed)
    n_lakes = sum(c for _, c in KINDS)
    names = _names(rng, n_lakes)
    lake_lines = [LAKE_HEADER]
    record_lines = [RECORD_HEADER]
    i = 0
    for kind, count in KINDS:
        for _ in range(count):
            lake_id = f"R{i + 1:02d}"
            regime = str(rng.choice(["reversible", "hysteretic", "hysteretic", "hysteretic", "irreversible"]))
            area = _sig(rng.uniform(0.5, 15.0), 3)
            depth = rng.uniform(2.0, 12.0)
            volume = _sig(area * 1e6 * depth, 3)
            params = _parameters(rng, regime, volume)
            fs = folds(params)
            if kind in ("params+records", "records", "short"):
                n_years = 6 if kind == "short" else int(rng.integers(25, 41))
                rows, load = _record(rng, params, volume, n_years, optical=i % 2 == 0)
                for year, ld, tp, sd, ch in rows:
                    sd_t = "" if sd is None else f"{sd:.2f}"
                    ch_t = "" if ch is None else f"{ch:.1f}"
                    record_lines.append(f"{lake_id},{year},{ld:.1f},{tp:.1f},{sd_t},{ch_t}")
            else:
                tip = fs[0].load if fs else params.s * params.m
                load = tip * rng.uniform(0.6, 1.15)
            if kind in ("params+records", "params"):
                ptext = f"{params.s:g},{params.r:g},{params.m:g},{params.q:g}"
            else:
                ptext = ",,,"
            lake_lines.append(f"{lake_id},{names[i]},{volume:.0f},{area:g},{round(load):d},{ptext}")
            i += 1
    return "\n".join(lake_lines) + "\n", "\n".join(record_lines) + "\n"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Write the invented demo region (40 fictional lakes).")
    parser.add_argument("--out-dir", default=str(Path(__file__).resolve().parent / "region"))
    args = parser.parse_args(argv)
    out = Path(args.out_dir)
    out.mkdir(parents=True, exist_ok=True)
    lakes, records = make_region()
    (out / "LAKES.csv").write_text(lakes, encoding="utf-8", newline="")
    (out / "RECORDS.csv").write_text(records, encoding="utf-8", newline="")
    return 0


if __name__ == "__main__":
    sys.exit(main())
