r"""Warning signs where they mean something: per stretch of one state.

A manager asks two questions of a record (Dakos et al. 2012):

* **Hindcast** — would the signs have warned before the lake's last shift?
  Indicators on each stretch that ends in an observed shift.
* **Forecast** — is anything rising now?  Indicators on the current
  stretch, since the last shift.

The record is cut by :func:`turnback.model.stretches.split_record`; each
stretch of at least :data:`MIN_STRETCH_YEARS` years gets the indicators of
:func:`turnback.model.early_warning.early_warning` with the record view's
conventions, applied to the stretch: lake TP [µg L⁻¹], Gaussian-kernel
detrending with a bandwidth of 20 % of the stretch, a rolling window of
half the stretch, Kendall τ of each indicator against the year, and
p-values against :data:`DEFAULT_SURROGATES` AR(1) surrogates.  A shorter
stretch gets "too short to say" instead of numbers.

Sensitivity
-----------
As Dakos et al. (2012, their sensitivity figures), τ is recomputed over a
small grid of rolling windows (:data:`WINDOW_FRACTIONS` of the stretch,
at least 5 years and leaving at least 5 windows) and detrending bandwidths
(:data:`BANDWIDTH_FRACTIONS` of the stretch), each with its surrogate
p-value.  Every cell uses the same seed, so the cell of the default choices
repeats the stretch's own numbers and differences between cells come from
the choices, not from fresh random numbers.  An indicator's sign **depends
on the choices** when the grid holds both a τ > 0 and a τ < 0.

Random numbers
--------------
The whole-record indicators use :data:`DEFAULT_SEED` and
:data:`DEFAULT_SURROGATES`, the record view's values, so both give the same
numbers.  A stretch and its sensitivity cells use the same seed.

Words
-----
:func:`stretch_words` gives one sentence for the split, one per stretch
("Before the 1989 shift to turbid water …", "Now (clear water since
2009, …) …") and a closing reminder.  A rise of the variance or the lag-1
autocorrelation counts as **seen** when τ ≥ 0.1 and p ≤ 0.05 (the
thresholds of the record view's summaries), "a little, could well be
chance" when τ ≥ 0.1 and p > 0.05, and not seen otherwise.

A rising indicator is not a forecast: indicators can rise for other
reasons and stay flat before a shift, and a few decades of annual data give
the tests little power.

References
----------
Dakos, V., Carpenter, S. R., Brock, W. A., Ellison, A. M., Guttal, V.,
Ives, A. R., Kéfi, S., Livina, V., Seekell, D. A., van Nes, E. H. &
Scheffer, M. (2012). Methods for detecting early warnings of critical
transitions in time series illustrated using simulated ecological data.
PLoS ONE 7(7), e41010.

Scheffer, M. et al. (2009). Early-warning signals for critical transitions.
Nature 461, 53–59.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .early_warning import ALPHA, FLAT_TAU, INDICATORS, MIN_WINDOW, MIN_WINDOWS, EarlyWarning, early_warning
from .progress import RngLike
from .record import MonitoringSeries
from .stretches import Stretch, StretchSplit

__all__ = [
    "BANDWIDTH_FRACTIONS",
    "DEFAULT_SEED",
    "DEFAULT_SURROGATES",
    "MIN_STRETCH_YEARS",
    "NOT_A_FORECAST",
    "WINDOW_FRACTIONS",
    "RecordWarnings",
    "Sensitivity",
    "SensitivityCell",
    "StretchWarnings",
    "record_warnings",
    "sensitivity_grid",
    "stretch_words",
]

#: Shortest stretch given indicators [years].
MIN_STRETCH_YEARS = 15
#: Surrogates for every p-value (the record view's number).
DEFAULT_SURROGATES = 500
#: Seed of the surrogates (the record view's seed).
DEFAULT_SEED = 20261202
#: Rolling windows of the sensitivity grid, as fractions of the stretch.
WINDOW_FRACTIONS = (0.25, 0.5, 0.75)
#: Detrending bandwidths of the sensitivity grid, as fractions of the stretch.
BANDWIDTH_FRACTIONS = (0.1, 0.2, 0.5)

NOT_A_FORECAST = (
    "Rising signs are not a forecast: they can rise for other reasons and can stay flat before a shift "
    "(Dakos et al. 2012)."
)
_LABEL = {"variance": "variance", "ac1": "lag-1 autocorrelation", "skewness": "skewness"}
_STATE_WORDS = {"clear": "clear water", "turbid": "turbid", "lower": "lower TP", "higher": "higher TP"}


@dataclass(frozen=True)
class SensitivityCell:
    """τ and p-value of each indicator for one (window, bandwidth) choice.

    ``tau`` and ``p_value`` map ``"variance"``, ``"ac1"``, ``"skewness"`` to
    floats (NaN where undefined).  ``window`` [years], ``bandwidth`` [years].
    """

    window: int
    bandwidth: float
    tau: dict[str, float]
    p_value: dict[str, float]


@dataclass(frozen=True)
class Sensitivity:
    """τ over a grid of windows and bandwidths (Dakos et al. 2012).

    Attributes
    ----------
    windows : tuple of int
        [years], ascending.
    bandwidths : tuple of float
        [years], ascending.
    cells : tuple of SensitivityCell
        Window-major: ``cells[i * len(bandwidths) + j]``.
    sign_depends : dict
        Per indicator: the grid holds both a τ > 0 and a τ < 0.
    """

    windows: tuple[int, ...]
    bandwidths: tuple[float, ...]
    cells: tuple[SensitivityCell, ...]
    sign_depends: dict[str, bool]

    def taus(self, name: str) -> np.ndarray:
        """τ of one indicator as a (windows, bandwidths) array."""
        return np.array([c.tau[name] for c in self.cells]).reshape(len(self.windows), len(self.bandwidths))

    def to_dict(self) -> dict[str, object]:
        return {
            "windows": list(self.windows),
            "bandwidths": [_bw(b) for b in self.bandwidths],
            "cells": [
                {
                    "window": c.window,
                    "bandwidth": _bw(c.bandwidth),
                    **{k: {"tau": _num(c.tau[k]), "p_value": _num(c.p_value[k])} for k in INDICATORS},
                }
                for c in self.cells
            ],
            "sign_depends_on_choices": dict(self.sign_depends),
        }


@dataclass(frozen=True, eq=False)
class StretchWarnings:
    """Indicators of one stretch.

    Attributes
    ----------
    stretch : Stretch
    result : EarlyWarning or None
        None when the stretch is too short or has no variation to test.
    sensitivity : Sensitivity or None
    note : str or None
        Why there are no numbers ("too short to say", …).
    """

    stretch: Stretch
    result: EarlyWarning | None
    sensitivity: Sensitivity | None
    note: str | None

    def to_dict(self) -> dict[str, object]:
        s, r = self.stretch, self.result
        out: dict[str, object] = {
            "from_year": s.from_year,
            "to_year": s.to_year,
            "state": s.state,
            "ends_in_shift": s.ends_in_shift,
        }
        for ind in INDICATORS:
            out[ind] = None if r is None else _pair(getattr(r, ind).tau, getattr(r, ind).p_value)
        out["window"] = None if r is None else r.window
        out["bandwidth"] = None if r is None else _bw(r.bandwidth)
        out["note"] = self.note
        out["sensitivity"] = None if self.sensitivity is None else self.sensitivity.to_dict()
        return out


@dataclass(frozen=True, eq=False)
class RecordWarnings:
    """Warning signs of a record: over the whole of it and per stretch.

    Attributes
    ----------
    whole : EarlyWarning
        The record view's indicators over the whole record.
    split : StretchSplit
    stretches : tuple of StretchWarnings
        In time order.
    min_stretch_years : int
    seed, n_surrogates : int
    """

    whole: EarlyWarning
    split: StretchSplit
    stretches: tuple[StretchWarnings, ...]
    min_stretch_years: int
    seed: int
    n_surrogates: int

    @property
    def words(self) -> tuple[str, ...]:
        """Plain sentences for a meeting (:func:`stretch_words`)."""
        return stretch_words(self)

    def to_dict(self) -> dict[str, object]:
        """The ``turnback warnings --json`` object."""
        w = self.whole
        out: dict[str, object] = {"window": w.window, "bandwidth": _bw(w.bandwidth)}
        for ind in INDICATORS:
            out[ind] = _pair(getattr(w, ind).tau, getattr(w, ind).p_value)
        out["n_surrogates"] = self.n_surrogates
        out["seed"] = self.seed
        out["min_stretch_years"] = self.min_stretch_years
        out["split"] = self.split.to_dict()
        out["stretches"] = [s.to_dict() for s in self.stretches]
        out["words"] = list(self.words)
        return out


def _num(v: float) -> float | None:
    return float(v) if math.isfinite(v) else None


def _bw(v: float | None) -> float | None:
    """A bandwidth [years] for output, without the float noise of ``0.2 · n``."""
    return None if v is None else round(float(v), 10)


def _pair(tau: float, p: float) -> dict[str, float | None]:
    return {"tau": _num(tau), "p_value": _num(p)}


def _seed_of(rng: RngLike) -> int:
    if isinstance(rng, np.random.Generator):
        return int(rng.integers(0, 2**63 - 1))
    if rng is None:
        return int(np.random.default_rng().integers(0, 2**63 - 1))
    return int(rng)


# --------------------------------------------------------------------------
# sensitivity
# --------------------------------------------------------------------------
def _grid_windows(n: int) -> tuple[int, ...]:
    hi = n - MIN_WINDOWS + 1
    return tuple(sorted({min(max(int(f * n), MIN_WINDOW), hi) for f in WINDOW_FRACTIONS}))


def sensitivity_grid(
    values: np.ndarray,
    years: np.ndarray,
    *,
    n_surrogates: int = DEFAULT_SURROGATES,
    seed: int = DEFAULT_SEED,
) -> Sensitivity:
    """τ and p-values over :data:`WINDOW_FRACTIONS` × :data:`BANDWIDTH_FRACTIONS` of the series length.

    Windows are rounded down and kept within what
    :func:`turnback.model.early_warning.early_warning` accepts (at least 5
    years, at least 5 windows); duplicates are dropped.  A cell whose
    detrending leaves no variation has NaN entries.
    """
    n = int(np.asarray(values).size)
    windows = _grid_windows(n)
    bandwidths = tuple(sorted({round(f * n, 10) for f in BANDWIDTH_FRACTIONS}))
    cells = []
    for w in windows:
        for bw in bandwidths:
            try:
                r = early_warning(values, years, window=w, bandwidth=bw, n_surrogates=n_surrogates, rng=seed)
                tau: dict[str, float] = {k: getattr(r, k).tau for k in INDICATORS}
                p: dict[str, float] = {k: getattr(r, k).p_value for k in INDICATORS}
            except ValueError:
                tau = dict.fromkeys(INDICATORS, math.nan)
                p = dict.fromkeys(INDICATORS, math.nan)
            cells.append(SensitivityCell(window=w, bandwidth=float(bw), tau=tau, p_value=p))
    depends: dict[str, bool] = {}
    for k in INDICATORS:
        t = np.array([c.tau[k] for c in cells])
        t = t[np.isfinite(t)]
        depends[k] = bool(np.any(t > 0.0) and np.any(t < 0.0))
    return Sensitivity(windows=windows, bandwidths=bandwidths, cells=tuple(cells), sign_depends=depends)


# --------------------------------------------------------------------------
# main entry
# --------------------------------------------------------------------------
def _stretch_warnings(
    series: MonitoringSeries,
    stretch: Stretch,
    *,
    min_years: int,
    n_surrogates: int,
    seed: int,
    sensitivity: bool,
) -> StretchWarnings:
    if stretch.n_years < min_years:
        return StretchWarnings(
            stretch=stretch,
            result=None,
            sensitivity=None,
            note=f"too short to say: {stretch.n_years} years, at least {min_years} are needed",
        )
    tp = np.asarray(series.tp_ug_l[stretch.start : stretch.stop], dtype=float)
    yrs = np.asarray(series.years[stretch.start : stretch.stop], dtype=float)
    try:
        res = early_warning(tp, yrs, n_surrogates=n_surrogates, rng=seed)
    except ValueError as exc:
        return StretchWarnings(stretch=stretch, result=None, sensitivity=None, note=f"cannot be tested: {exc}")
    sens = sensitivity_grid(tp, yrs, n_surrogates=n_surrogates, seed=seed) if sensitivity else None
    return StretchWarnings(stretch=stretch, result=res, sensitivity=sens, note=None)


def record_warnings(
    series: MonitoringSeries,
    split: StretchSplit,
    *,
    min_stretch_years: int = MIN_STRETCH_YEARS,
    n_surrogates: int = DEFAULT_SURROGATES,
    rng: RngLike = DEFAULT_SEED,
    sensitivity: bool = True,
) -> RecordWarnings:
    """Indicators over the whole record and on each stretch of one state.

    Parameters
    ----------
    series : MonitoringSeries
        The record; its TP [µg L⁻¹] is the series analysed.
    split : StretchSplit
        From :func:`turnback.model.stretches.split_record` on the same record.
    min_stretch_years : int
        Shortest stretch given numbers (default 15; at least 10, the
        shortest series :func:`early_warning` accepts).
    n_surrogates : int
        AR(1) surrogates per p-value (default 500, as the record view).
    rng : int, numpy.random.Generator or None
        Seed of the surrogates (default the record view's); a generator
        gives one seed drawn from it.
    sensitivity : bool
        Compute the window × bandwidth grid of each tested stretch.

    Raises
    ------
    ValueError
        When the whole record cannot be tested (fewer than 10 years,
        constant), or for a bad ``min_stretch_years``.
    """
    if split.years.size != series.n_years or not np.array_equal(split.years, series.years):
        raise ValueError("the split belongs to another record: its years differ")
    if isinstance(min_stretch_years, bool) or int(min_stretch_years) != min_stretch_years or min_stretch_years < 10:
        raise ValueError(f"min_stretch_years must be a whole number >= 10; got {min_stretch_years!r}")
    seed = _seed_of(rng)
    whole = early_warning(series.tp_ug_l, series.years, n_surrogates=n_surrogates, rng=seed)
    parts = tuple(
        _stretch_warnings(
            series,
            s,
            min_years=int(min_stretch_years),
            n_surrogates=n_surrogates,
            seed=seed,
            sensitivity=sensitivity,
        )
        for s in split.stretches
    )
    return RecordWarnings(
        whole=whole,
        split=split,
        stretches=parts,
        min_stretch_years=int(min_stretch_years),
        seed=seed,
        n_surrogates=int(n_surrogates),
    )


# --------------------------------------------------------------------------
# words
# --------------------------------------------------------------------------
def _p_text(p: float) -> str:
    return "p < 0.001" if p < 0.001 else f"p = {p:.2g}"


def _indicator_words(name: str, tau: float, p: float) -> str:
    label = _LABEL[name]
    if not math.isfinite(tau):
        return f"the {label} could not be computed"
    if name == "skewness":
        if abs(tau) < FLAT_TAU:
            return f"the skewness showed no clear trend (τ = {tau:.2f})"
        way = "rose" if tau > 0 else "fell"
        chance = "" if not math.isfinite(p) else (", unlikely to be chance" if p <= ALPHA else ", could well be chance")
        ptxt = "" if not math.isfinite(p) else f", {_p_text(p)}"
        return f"the skewness {way} (τ = {tau:.2f}{ptxt}{chance})"
    if tau >= FLAT_TAU and math.isfinite(p) and p <= ALPHA:
        return f"the {label} rose, unlikely to be chance (τ = {tau:.2f}, {_p_text(p)})"
    if tau >= FLAT_TAU:
        ptxt = "" if not math.isfinite(p) else f", {_p_text(p)}"
        return f"the {label} rose a little, which could well be chance (τ = {tau:.2f}{ptxt})"
    way = "fell" if tau <= -FLAT_TAU else "showed no clear trend"
    return f"the {label} did not rise ({way}, τ = {tau:.2f})"


def _seen(res: EarlyWarning) -> list[str]:
    """Labels of the rises a coming tipping point predicts that were seen (τ ≥ 0.1 and p ≤ 0.05)."""
    out = []
    for name in ("variance", "ac1"):
        ind = getattr(res, name)
        if ind.tau >= FLAT_TAU and math.isfinite(ind.p_value) and ind.p_value <= ALPHA:
            out.append(_LABEL[name])
    return out


def _stretch_label(s: Stretch) -> str:
    return f"{_STATE_WORDS[s.state]} {s.from_year}–{s.to_year}"


def _shift_label(s: Stretch, nxt: Stretch) -> str:
    if nxt.state == "turbid":
        return f"the {nxt.from_year} shift to turbid water"
    if nxt.state == "clear":
        return f"the {nxt.from_year} return to clear water"
    return f"the {nxt.from_year} step to {_STATE_WORDS[nxt.state]}"


def _and(items: list[str]) -> str:
    return items[0] if len(items) == 1 else f"{', '.join(items[:-1])} and {items[-1]}"


def _about(sw: StretchWarnings, min_years: int) -> str:
    if sw.result is None:
        if sw.stretch.n_years < min_years:
            return f"too short to say (at least {min_years} years of one state are needed)."
        return f"{sw.note}."
    res = sw.result
    parts = [_indicator_words(k, getattr(res, k).tau, getattr(res, k).p_value) for k in INDICATORS]
    seen = _seen(res)
    if seen:
        verdict = f"Seen: a rise in the {' and the '.join(seen)}, the signs expected before a tipping point."
    else:
        verdict = "Not seen: neither the variance nor the lag-1 autocorrelation rose clearly."
    out = f"{'; '.join(parts)}. {verdict}"
    if sw.sensitivity is not None:
        dep = [f"the {_LABEL[k]}" for k in INDICATORS if sw.sensitivity.sign_depends[k]]
        if dep:
            out += f" The direction of {_and(dep)} depends on the window and smoothing chosen."
        else:
            out += " The directions hold for every window and smoothing tried."
    return out


def stretch_words(result: RecordWarnings) -> tuple[str, ...]:
    """Plain sentences for a meeting: what was and was not seen, before each shift and now.

    Always ends by repeating that rising signs are not a forecast.
    """
    split = result.split
    parts = result.stretches
    lines: list[str] = []
    how = "by the fitted lake model" if split.method == "fitted_separatrix" else "by steps in the TP level"
    names = ", ".join(_stretch_label(p.stretch) for p in parts)
    if len(parts) == 1:
        lines.append(f"The record shows one state throughout ({names}, {how}): there is no shift to look back on.")
    else:
        lines.append(f"The record splits into {len(parts)} stretches {how}: {names}.")
    for i, sw in enumerate(parts):
        s = sw.stretch
        if s.ends_in_shift:
            head = f"Before {_shift_label(s, parts[i + 1].stretch)} ({_stretch_label(s)}, {s.n_years} years): "
        else:
            head = f"Now ({_STATE_WORDS[s.state]} since {s.from_year}, {s.n_years} years): "
        lines.append(head + _about(sw, result.min_stretch_years))
    if split.method == "change_points":
        lines.append("No lake model was used: a step in the TP level may also be a steady trend.")
    lines.append(
        "Over the whole record the indicators mix states and the shifts between them, so they say little."
        if len(parts) > 1
        else "The whole record is one stretch, so its indicators are those above."
    )
    lines.append(NOT_A_FORECAST)
    return tuple(lines)
