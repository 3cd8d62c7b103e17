r"""Generate the invented monitoring record of Lake Amberlin (a fictional lake).

Every number is made up for demonstration; no real lake is described.

The record runs 1979–2023 (45 years) and tells a story of enrichment, a
flip to turbid water and a slow recovery after load cuts:

* 1979–1984 moderate load (about 300 kg yr⁻¹), clear water;
* 1985–1992 the load rises to about 800 kg yr⁻¹, past the tipping load,
  and the lake turns turbid;
* 1993–1999 high load (about 760 kg yr⁻¹);
* 2000–2005 a first cut to about 380 kg yr⁻¹: TP falls only a little and
  the lake stays turbid (hysteresis);
* 2006–2014 a deep cut to about 120 kg yr⁻¹, below the recovery load: TP
  falls slowly (the lake lingers near the lost turbid state) and the lake
  returns towards clear water;
* 2015–2023 the load is allowed back up to about 420 kg yr⁻¹ and the lake
  stays on the clear-water branch.

Lake P follows the product's annual map (:func:`model.dynamics.annual_step`)
with the demo parameters (:data:`model.demo.DEMO_PARAMETERS`: s = 0.5 yr⁻¹,
r = 1800 kg yr⁻¹, m = 2500 kg, q = 4) and lognormal process noise,
``P_{t+1} = F(P_t, L_t) · exp(ε_t)``, ``ε_t ~ N(0, 0.08²)``; each year's
load is the planned load times ``exp(η_t)``, ``η_t ~ N(0, 0.12²)``.
TP [µg L⁻¹] = 10⁶ P / V with the demo volume V = 2.79·10⁷ m³.

Secchi depth and chlorophyll a come from TP through the trophic state
index equivalence of Carlson (1977, A trophic state index for lakes,
Limnology and Oceanography 22:361–369)::

    TSI = 14.42 ln TP + 4.15
    Chl = exp((TSI - 30.6) / 9.81)      [µg L⁻¹]
    SD  = exp((60 - TSI) / 14.41)       [m]

each times lognormal noise (σ = 0.20 for chlorophyll, 0.15 for Secchi).

Run from the repository root::

    .venv/bin/python sample_data/make_demo_series.py [--out FILE]

(default: ``sample_data/amberlin_monitoring.csv`` beside this script).
"""

from __future__ import annotations

import argparse
import math
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from turnback.model.demo import DEMO_PARAMETERS, DEMO_PROFILE
from turnback.model.dynamics import annual_step
from turnback.model.equilibrium import equilibria

SEED = 19790401
#: (first year, last year, planned load at the start, planned load at the end) [kg yr⁻¹]
PLAN = (
    (1979, 1984, 300.0, 300.0),
    (1985, 1992, 360.0, 800.0),
    (1993, 1999, 760.0, 760.0),
    (2000, 2005, 380.0, 380.0),
    (2006, 2014, 120.0, 120.0),
    (2015, 2023, 300.0, 420.0),
)
LOAD_SD = 0.12
PROCESS_SD = 0.08
CHL_SD = 0.20
SECCHI_SD = 0.15


def planned_loads() -> tuple[np.ndarray, np.ndarray]:
    """Years and planned (noise-free) load [kg yr⁻¹]."""
    years, loads = [], []
    for y0, y1, a, b in PLAN:
        n = y1 - y0 + 1
        years.extend(range(y0, y1 + 1))
        loads.extend(np.linspace(a, b, n).tolist())
    return np.array(years), np.array(loads)


def make_series(seed: int = SEED) -> list[tuple[int, float, float, float, float]]:
    """Rows ``(year, load_kg, tp_ug_l, secchi_m, chl_ug_l)`` of the invented record."""
    rng = np.random.default_rng(seed)
    years, plan = planned_loads()
    loads = plan * np.exp(rng.normal(0.0, LOAD_SD, plan.size))
    p = np.empty(plan.size)
    p[0] = equilibria(DEMO_PARAMETERS, loads[0])[0].p  # clear-water state at the first year's load
    for t in range(1, plan.size):
        step = float(annual_step(DEMO_PARAMETERS, p[t - 1], loads[t]))
        p[t] = step * math.exp(rng.normal(0.0, PROCESS_SD))
    tp = DEMO_PROFILE.concentration(p)
    tsi = 14.42 * np.log(tp) + 4.15  # Carlson (1977)
    chl = np.exp((tsi - 30.6) / 9.81) * np.exp(rng.normal(0.0, CHL_SD, tp.size))
    sd = np.exp((60.0 - tsi) / 14.41) * np.exp(rng.normal(0.0, SECCHI_SD, tp.size))
    return [
        (int(y), float(ld), float(c), float(s), float(ch))
        for y, ld, c, s, ch in zip(years, loads, tp, sd, chl, strict=True)
    ]


def to_csv(rows: list[tuple[int, float, float, float, float]]) -> str:
    lines = ["year,load_kg,tp_ug_l,secchi_m,chl_ug_l"]
    for y, ld, c, s, ch in rows:
        lines.append(f"{y},{ld:.1f},{c:.1f},{s:.2f},{ch:.1f}")
    return "\n".join(lines) + "\n"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Write the invented Lake Amberlin monitoring record.")
    parser.add_argument("--out", default=str(Path(__file__).resolve().parent / "amberlin_monitoring.csv"))
    args = parser.parse_args(argv)
    text = to_csv(make_series())
    Path(args.out).write_text(text, encoding="utf-8", newline="")
    return 0


if __name__ == "__main__":
    sys.exit(main())
