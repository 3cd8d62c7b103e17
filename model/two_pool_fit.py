r"""Fitting the two-pool lake to a monitoring record, with the sediment parameters set by the user.

A monitoring record gives the water P (``TP · V / 10⁶``) and the external
load each year; it says nothing directly about the sediment.  How much P the
mobile sediment holds, how fast it is buried (``b``) and how much of it can
come back a year (``r``) are rarely informed by the water record alone: many
combinations give the same water P for years.  So the user fixes them, or
bounds them by ranges from outside evidence (sediment cores, release
measurements, similar lakes), and the fit says so in plain words.

The model
    The annual map of :mod:`turnback.model.dynamics` for the two-pool lake
    (Carpenter 2005).  Conditional on the observed water P, the sediment is a
    deterministic function of the record: starting from ``M₀`` (given, or
    in balance with the first year's water P, ``M* = s P₀/(b + r g(P₀))``),

    .. math:: M_{t+1} = \max(M_t + s P_t - b M_t - r M_t g(P_t),\ 0),

    and each year's water P is predicted from the year before,
    :math:`\hat P_{t+1} = P_t + L_{t+1} - (s + h) P_t + r M_t g(P_t)`.

Error model
    Lognormal process error, as in the one-box fit
    (:mod:`turnback.model.fit`): :math:`\ln P_{t+1} = \ln \hat P_{t+1} + \varepsilon_t`,
    :math:`\varepsilon_t \sim N(0, \sigma^2)`; the fit is conditional least
    squares on the log scale (:func:`scipy.optimize.least_squares`, several
    starts).  No bootstrap: the spread that matters is the one across the
    user's sediment range, reported below.

Bounds
    ``s`` in [0.001, 1 − h], ``q`` in [1, 20], ``m`` in [0.1 P_min, 10 P_max];
    ``h`` fixed or in the user's range (default [0, 0.5]); ``b`` and ``r``
    fixed or in the user's ranges with ``b + r <= 1`` (the map's limits).

Recovery years across the sediment range
    From the end of the record (the last observed water P and the
    reconstructed sediment P), the load is held at ``(1 − cut/100)`` times
    the mean load of the last five years, and the lake is run forward with the
    annual map; the recovery year is the first year that starts
    ``stay_years`` consecutive clear years, with the clear-state rule of the
    plans (:mod:`turnback.model.clear_state`: water P below the separatrix,
    or a fixed TP).  This is done at the best fit and again on a grid over
    the allowed burial × recycling-rate range, refitting the other
    parameters at each grid point; the spread of the recovery year over the
    grid is what the record cannot settle.

References
----------
Carpenter, S. R. (2005). Eutrophication of aquatic ecosystems: bistability
and soil phosphorus. PNAS 102(29), 10002–10005.

Søndergaard, M., Jensen, J. P. & Jeppesen, E. (2003). Role of sediment and
internal loading of phosphorus in shallow lakes. Hydrobiologia 506–509,
135–145.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.optimize import least_squares

from .clear_state import recovery_years, thresholds_by_year
from .dynamics import simulate
from .equilibrium import Regime, regime_from_folds
from .point_fit import as_1d
from .progress import Progress, RngLike, report
from .two_pool import TwoPoolParameters
from .two_pool_equilibrium import folds
from .validation import FieldError

__all__ = ["RecoverySpread", "SedimentSetting", "TwoPoolFitResult", "fit_two_pool"]

NAMES = ("sedimentation", "outflow", "burial", "recycling_rate", "recycling_half", "recycling_exponent")

#: A user's setting of one sediment parameter: a fixed value or a (low, high) range [yr⁻¹].
SedimentSetting = float | tuple[float, float]


@dataclass(frozen=True)
class RecoverySpread:
    """Recovery years after a load cut, at the best fit and across the allowed sediment range.

    Attributes
    ----------
    cut_load_kg_per_yr : float
        The load held after the record [kg yr⁻¹].
    at_fit : float or None
        Recovery year at the best fit (None: not within ``horizon`` years).
    low, high : float or None
        Smallest and largest recovery year over the grid (None where a grid
        lake does not recover within the horizon; ``high`` None then).
    grid : tuple of (burial, recycling_rate, recovery year or None)
    horizon : int
        Years simulated [yr].
    """

    cut_load_kg_per_yr: float
    at_fit: float | None
    low: float | None
    high: float | None
    grid: tuple[tuple[float, float, float | None], ...]
    horizon: int

    def to_dict(self) -> dict[str, Any]:
        return {
            "cut_load_kg_per_yr": self.cut_load_kg_per_yr,
            "at_fit": self.at_fit,
            "low": self.low,
            "high": self.high,
            "horizon_years": self.horizon,
            "grid": [{"burial": b, "recycling_rate": r, "recovery_years": y} for b, r, y in self.grid],
        }


@dataclass(frozen=True, eq=False)
class TwoPoolFitResult:
    """The two-pool fit (module docstring); ``to_dict()`` is the ``turnback fit --model two-pool --json`` object."""

    status: Literal["ok", "warning"]
    message: str
    params: TwoPoolParameters
    initial_sediment_p_kg: float
    final_sediment_p_kg: float
    sigma: float
    regime: Regime
    tipping_load: float | None
    recovery_load: float | None
    fixed: tuple[str, ...]
    ranges: dict[str, tuple[float, float]]
    at_bound: tuple[str, ...]
    recovery: RecoverySpread
    warnings: tuple[str, ...]

    def to_dict(self) -> dict[str, Any]:
        return {
            "model": "two-pool",
            "params": self.params.to_dict(),
            "initial_sediment_p_kg": self.initial_sediment_p_kg,
            "final_sediment_p_kg": self.final_sediment_p_kg,
            "sigma": self.sigma,
            "regime": self.regime,
            "tipping_load": self.tipping_load,
            "recovery_load": self.recovery_load,
            "fixed": list(self.fixed),
            "ranges": {k: list(v) for k, v in self.ranges.items()},
            "at_bound": list(self.at_bound),
            "recovery_years": self.recovery.to_dict(),
            "warnings": list(self.warnings),
        }


def _setting(name: str, value: SedimentSetting, lo_ok: float, hi_ok: float) -> float | tuple[float, float]:
    if isinstance(value, tuple):
        if len(value) != 2:
            raise FieldError((name,), "range must be two numbers: low and high")
        lo, hi = float(value[0]), float(value[1])
        if not (math.isfinite(lo) and math.isfinite(hi) and lo_ok <= lo < hi <= hi_ok):
            raise FieldError(
                (name,), f"range must satisfy {lo_ok:g} <= low < high <= {hi_ok:g} [yr⁻¹]; got {lo:g} {hi:g}"
            )
        return lo, hi
    v = float(value)
    if not (math.isfinite(v) and lo_ok <= v <= hi_ok) or (v == 0.0 and name != "outflow"):
        raise FieldError((name,), f"must be between {lo_ok:g} and {hi_ok:g} [yr⁻¹] (and not 0); got {v:g}")
    return v


def _sediment_path(p: NDArray[np.float64], theta: dict[str, float], m0: float | None) -> NDArray[np.float64]:
    """Sediment P [kg] of years 0 … n−1 reconstructed from the observed water P."""
    s, b, r = theta["sedimentation"], theta["burial"], theta["recycling_rate"]
    mh, q = theta["recycling_half"], theta["recycling_exponent"]
    with np.errstate(divide="ignore"):
        z = q * (np.log(p) - math.log(mh))
    g = 1.0 / (1.0 + np.exp(-np.clip(z, -700.0, 700.0)))
    out = np.empty(p.size)
    m = s * p[0] / (b + r * g[0]) if m0 is None else m0
    keep = 1.0 - b
    for t in range(p.size):
        out[t] = m
        m = m * keep + s * p[t] - r * m * g[t]
        if m < 0.0:
            m = 0.0
    return out


def _residuals(
    p: NDArray[np.float64], lt: NDArray[np.float64], theta: dict[str, float], m0: float | None
) -> NDArray[np.float64]:
    msed = _sediment_path(p, theta, m0)
    s, h, r = theta["sedimentation"], theta["outflow"], theta["recycling_rate"]
    mh, q = theta["recycling_half"], theta["recycling_exponent"]
    pp = p[:-1]
    with np.errstate(divide="ignore"):
        z = q * (np.log(pp) - math.log(mh))
    g = 1.0 / (1.0 + np.exp(-np.clip(z, -700.0, 700.0)))
    pred = pp + lt[1:] - (s + h) * pp + r * msed[:-1] * g
    return np.log(p[1:]) - np.log(np.maximum(pred, 1e-12 * float(np.min(p))))


class _Problem:
    """The free parameters in working coordinates (``ln`` for ``m`` and ``q``) and their bounds."""

    def __init__(self, p: NDArray[np.float64], settings: dict[str, float | tuple[float, float]]) -> None:
        self.fixed = {k: v for k, v in settings.items() if not isinstance(v, tuple)}
        h_hi = settings["outflow"][1] if isinstance(settings["outflow"], tuple) else settings["outflow"]
        bounds: dict[str, tuple[float, float]] = {
            "sedimentation": (0.001, max(0.002, min(0.999, 1.0 - float(h_hi)))),
            "recycling_half": (math.log(0.1 * float(np.min(p))), math.log(10.0 * float(np.max(p)))),
            "recycling_exponent": (0.0, math.log(20.0)),
        }
        for k, v in settings.items():
            if isinstance(v, tuple):
                bounds[k] = v
        self.free = [n for n in NAMES if n in bounds]
        self.lo = np.array([bounds[n][0] for n in self.free])
        self.hi = np.array([bounds[n][1] for n in self.free])

    def theta(self, x: NDArray[np.float64]) -> dict[str, float]:
        out: dict[str, float] = {k: float(v) for k, v in self.fixed.items()}
        for n, v in zip(self.free, x, strict=True):
            out[n] = math.exp(v) if n in ("recycling_half", "recycling_exponent") else float(v)
        return out


def _fit(
    p: NDArray[np.float64],
    lt: NDArray[np.float64],
    settings: dict[str, float | tuple[float, float]],
    m0: float | None,
    gen: np.random.Generator,
    n_starts: int,
) -> tuple[dict[str, float], float, NDArray[np.float64], _Problem]:
    prob = _Problem(p, settings)
    best: tuple[float, NDArray[np.float64]] | None = None
    for i in range(n_starts):
        u = np.full(prob.lo.size, 0.5) if i == 0 else gen.uniform(0.05, 0.95, prob.lo.size)
        x0 = prob.lo + u * (prob.hi - prob.lo)

        def fun(x: NDArray[np.float64]) -> NDArray[np.float64]:
            return _residuals(p, lt, prob.theta(x), m0)

        try:
            res = least_squares(fun, x0, bounds=(prob.lo, prob.hi), x_scale="jac", max_nfev=400)
        except ValueError:
            continue
        cost = float(res.cost)
        if math.isfinite(cost) and (best is None or cost < best[0]):
            best = (cost, res.x)
    if best is None:
        raise ValueError("the two-pool model could not be fitted to this record")
    theta = prob.theta(best[1])
    res_v = _residuals(p, lt, theta, m0)
    sigma = float(np.sqrt(np.sum(res_v**2) / max(res_v.size - len(prob.free), 1)))
    return theta, sigma, best[1], prob


def _recovery_year(
    params: TwoPoolParameters,
    p_end: float,
    m_end: float,
    cut_load: float,
    horizon: int,
    stay_years: int,
    clear_below_kg: float | None,
) -> float | None:
    loads = np.full(horizon, cut_load)
    if clear_below_kg is None and not folds(params):
        return None
    traj = simulate(params, p_end, loads[None, :], m0=m_end)
    thr = thresholds_by_year(params, loads, clear_below_kg)
    rec = recovery_years(traj.p < thr[None, :], stay_years)
    return None if not np.isfinite(rec[0]) else float(rec[0])


def _grid_values(setting: float | tuple[float, float], n: int) -> list[float]:
    if isinstance(setting, tuple):
        return [float(v) for v in np.linspace(setting[0], setting[1], n)]
    return [float(setting)]


def fit_two_pool(
    p_kg: ArrayLike,
    load_kg_per_yr: ArrayLike,
    *,
    burial: SedimentSetting,
    recycling_rate: SedimentSetting,
    outflow: SedimentSetting = (0.0, 0.5),
    initial_sediment_p_kg: float | None = None,
    cut_percent: float = 50.0,
    horizon: int = 100,
    stay_years: int = 3,
    clear_below_kg: float | None = None,
    grid: int = 4,
    n_starts: int = 6,
    rng: RngLike = None,
    progress: Progress | None = None,
) -> TwoPoolFitResult:
    """Fit the two-pool lake with burial and recycling rate fixed or bounded by the user.

    Parameters
    ----------
    p_kg, load_kg_per_yr : array_like, shape (n,)
        Water P [kg] (all > 0) and external load [kg yr⁻¹] (>= 0) in
        consecutive years; the load of year ``t`` drives the step into year ``t``.
    burial, recycling_rate : float or (low, high)
        ``b`` and ``r`` [yr⁻¹]: a fixed value or a range to fit within.
    outflow : float or (low, high)
        ``h`` [yr⁻¹]; default a range [0, 0.5].
    initial_sediment_p_kg : float, optional
        Sediment P in the first year [kg]; default in balance with the water.
    cut_percent : float
        Load cut after the record for the recovery years [%], in (0, 100].
    horizon, stay_years : int
        Years run after the record, and consecutive clear years that count as recovered.
    clear_below_kg : float, optional
        Fixed clear threshold [kg]; default the separatrix rule (needs folds).
    grid : int
        Values per ranged sediment parameter in the spread (2 … 9).
    n_starts : int
        Starting points of each fit.
    rng : Generator, int or None
        For the random starts; the same seed gives the same result.
    progress : callable(fraction, message), optional

    Returns
    -------
    TwoPoolFitResult
    """
    p = as_1d("p_kg", p_kg)
    lt = as_1d("load_kg_per_yr", load_kg_per_yr)
    if p.size != lt.size:
        raise FieldError(("load_kg_per_yr",), "must have one value per year, as many as p_kg")
    if p.size < 7:
        raise FieldError(("p_kg",), "must cover at least 7 consecutive years for the fit")
    if np.any(p <= 0.0):
        raise FieldError(("p_kg",), "must be greater than 0 in every year (lake P)")
    if np.any(lt < 0.0):
        raise FieldError(("load_kg_per_yr",), "must be >= 0 in every year")
    if not 0.0 < cut_percent <= 100.0:
        raise FieldError(("cut_percent",), f"must be greater than 0 and at most 100 [%]; got {cut_percent:g}")
    if not 2 <= grid <= 9:
        raise FieldError(("grid",), f"must be between 2 and 9; got {grid}")
    settings: dict[str, float | tuple[float, float]] = {
        "outflow": _setting("outflow", outflow, 0.0, 0.998),
        "burial": _setting("burial", burial, 0.0, 1.0),
        "recycling_rate": _setting("recycling_rate", recycling_rate, 0.0, 1.0),
    }
    b_hi = settings["burial"][1] if isinstance(settings["burial"], tuple) else settings["burial"]
    r_hi = (
        settings["recycling_rate"][1] if isinstance(settings["recycling_rate"], tuple) else settings["recycling_rate"]
    )
    if float(b_hi) + float(r_hi) > 1.0:
        raise FieldError(
            ("recycling_rate",), "and burial must add up to at most 1 [yr⁻¹] (the annual model's limit); lower them"
        )
    m0 = None if initial_sediment_p_kg is None else float(initial_sediment_p_kg)
    if m0 is not None and not (math.isfinite(m0) and m0 >= 0.0):
        raise FieldError(("initial_sediment_p_kg",), f"must be a number >= 0 [kg]; got {m0:g}")
    gen = np.random.default_rng(rng)
    report(progress, 0.0, "fitting the two-pool lake")
    theta, sigma, x_best, prob = _fit(p, lt, settings, m0, gen, n_starts)
    params = TwoPoolParameters(**theta)
    msed = _sediment_path(p, theta, m0)
    m_first = float(msed[0])
    m_last = float(msed[-1] + params.s * p[-1] - params.b * msed[-1] - params.r * msed[-1] * params.recycling(p[-1]))
    m_last = max(m_last, 0.0)
    fs = folds(params)
    cut_load = (1.0 - cut_percent / 100.0) * float(np.mean(lt[-5:]))
    at_fit = _recovery_year(params, float(p[-1]), m_last, cut_load, horizon, stay_years, clear_below_kg)

    # the spread over the allowed sediment range: refit the rest at each grid point
    b_vals, r_vals = _grid_values(settings["burial"], grid), _grid_values(settings["recycling_rate"], grid)
    rows: list[tuple[float, float, float | None]] = []
    combos = list(itertools.product(b_vals, r_vals))
    for i, (b, r) in enumerate(combos):
        if len(combos) == 1:
            rows.append((b, r, at_fit))
            break
        sub = settings | {"burial": b, "recycling_rate": r}
        th, _, _, _ = _fit(p, lt, sub, m0, gen, max(2, n_starts // 2))
        lake = TwoPoolParameters(**th)
        ms = _sediment_path(p, th, m0)
        end = max(float(ms[-1] + lake.s * p[-1] - lake.b * ms[-1] - lake.r * ms[-1] * lake.recycling(p[-1])), 0.0)
        rows.append((b, r, _recovery_year(lake, float(p[-1]), end, cut_load, horizon, stay_years, clear_below_kg)))
        report(progress, (i + 1) / len(combos), f"sediment range: {i + 1} of {len(combos)} lakes")
    years = [y for _, _, y in rows]
    finite = [y for y in years if y is not None]
    low = min(finite) if finite else None
    high = None if any(y is None for y in years) or not finite else max(finite)
    spread = RecoverySpread(cut_load, at_fit, low, high, tuple(rows), horizon)

    # warnings, in plain words
    fixed = tuple(n for n in ("outflow", "burial", "recycling_rate") if not isinstance(settings[n], tuple))
    ranges = {n: v for n, v in settings.items() if isinstance(v, tuple)}
    at_bound = []
    for n, lo_w, hi_w, v in zip(prob.free, prob.lo, prob.hi, x_best, strict=True):
        if hi_w > lo_w and (v - lo_w <= 1e-6 * (hi_w - lo_w) or hi_w - v <= 1e-6 * (hi_w - lo_w)):
            at_bound.append(n)
    warnings = [
        "The monitoring record shows only the water: it rarely tells how much phosphorus the sediment holds, how fast "
        "it is buried or how much of it comes back each year. Burial and recycling rate were "
        + ("fixed by you" if {"burial", "recycling_rate"} <= set(fixed) else "kept within the ranges you gave")
        + ", and every result below depends on them; base them on outside evidence (sediment cores, release "
        "measurements, similar lakes).",
    ]
    for n in at_bound:
        if n in ranges:
            warnings.append(
                f"The fitted {n.replace('_', ' ')} sits at an end of its allowed range "
                f"({ranges[n][0]:g} to {ranges[n][1]:g} per year): the record pulls beyond it. "
                "Widen the range only with outside evidence."
            )
        else:
            warnings.append(f"The fitted {n.replace('_', ' ')} sits at a bound of the fit; treat it with caution.")
    if low is not None and (high is None or high - low >= 5):
        top = f"beyond the {horizon}-year horizon" if high is None else f"{high:g} years"
        warnings.append(
            f"Across the allowed sediment range the recovery after a {cut_percent:g} % load cut takes from "
            f"{low:g} years to {top}: the record cannot narrow this down."
        )
    if not fs and clear_below_kg is None:
        warnings.append(
            "The fitted lake has no folds, so there is no turbid state to recover from by the separatrix rule; "
            "give a clear TP to count recovery years."
        )
    regime = regime_from_folds(fs)
    msg = f"{regime} two-pool lake; recovery after a {cut_percent:g} % cut: " + (
        "not within the horizon" if at_fit is None else f"year {at_fit:g}"
    )
    return TwoPoolFitResult(
        status="warning" if warnings else "ok",
        message=msg,
        params=params,
        initial_sediment_p_kg=m_first,
        final_sediment_p_kg=m_last,
        sigma=sigma,
        regime=regime,
        tipping_load=fs[0].load if fs else None,
        recovery_load=fs[1].load if fs else None,
        fixed=fixed,
        ranges=ranges,
        at_bound=tuple(at_bound),
        recovery=spread,
        warnings=tuple(warnings),
    )
