r"""Split a monitoring record into stretches of one state.

Warning-sign indicators mean something only within one state of the lake,
before a shift (Dakos et al. 2012): computed over a record that flips and
recovers they describe a mixture of regimes.  This module cuts the record
at its shifts; :mod:`turnback.model.stretch_warnings` computes the
indicators on each stretch.

With a fitted lake model (the rule of the product)
--------------------------------------------------
Year ``t`` of the record, with external load ``L_t`` [kg yr⁻¹] and lake P
``P_t = TP_t · V / 10⁶`` [kg], is **clear** when

.. math:: P_t < P_u(L_t)

and **turbid** otherwise, where ``P_u(L)`` is the product's clear-state
threshold of the fitted lake (:func:`turnback.model.clear_state.clear_threshold_kg`):
the unstable separatrix at the year's load where the lake has two stable
states, held at the P of the tipping fold above the tipping load and at the
P of the recovery fold below the recovery load (where only one branch is
left, the fold is the edge of the basin the lake is leaving).  The year's
own load is used because it carried the lake to ``P_t`` (the fit's
convention: the load of year ``t`` drives the step into year ``t``).  Clear
means "on the clear-water side of the basin boundary", so a lake recovering
below the recovery load counts as clear while its TP is still falling.

**Flickers.** A run of fewer than ``min_run_years`` (default 3) years on
one side, between two runs on the other side, is counted with the state
around it: it is a brief excursion, not a shift.  The shortest such run is
merged first (the earliest among equals), and the runs are re-formed after
each merge.  Runs at the start or the end of the record are kept however
short: they are where the record begins, or its latest news.

A fitted lake without folds (reversible) has no separatrix; the record is
then split by change points instead, with a note that says so.

Without a fit: change points in the TP level
--------------------------------------------
``ln TP`` is segmented by PELT with a normal mean-shift cost
(:func:`turnback.model.change_points.pelt_mean_shift`; Killick, Fearnhead
& Eckley 2012), robust noise scale from the first differences, penalty
``3 ln n`` (modified BIC, Zhang & Siegmund 2007) and segments of at least
:data:`MIN_SEGMENT_YEARS` years.  The segment means are then put in two
groups, **lower** and **higher** TP, by the split of the sorted means that
minimises the within-group sum of squares weighted by segment length
(Fisher 1958, "grouping for maximum homogeneity", two groups), and
neighbouring segments of one group are joined.  A record whose segment
means differ by less than :data:`MIN_LEVEL_STEP` in ``ln TP`` (less than
about a 40 % change) is one stretch.  Without a lake model a "shift" is a
step in the TP level: a change point method cannot tell a change of state
from a steady trend, and it dates a slow flip by its visible jump, which can
come years after the lake crossed its separatrix.

References
----------
Dakos, V. et al. (2012). Methods for detecting early warnings of critical
transitions in time series illustrated using simulated ecological data.
PLoS ONE 7(7), e41010.

Carpenter, S. R., Ludwig, D. & Brock, W. A. (1999). Management of
eutrophication for lakes subject to potentially irreversible change.
Ecological Applications 9(3), 751–771.

Killick, R., Fearnhead, P. & Eckley, I. A. (2012). Optimal detection of
changepoints with a linear computational cost. Journal of the American
Statistical Association 107(500), 1590–1598.

Fisher, W. D. (1958). On grouping for maximum homogeneity. Journal of the
American Statistical Association 53(284), 789–798.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .change_points import ChangePoints, pelt_mean_shift
from .clear_state import clear_threshold_kg
from .equilibrium import folds
from .fit import FitResult, fit_monitoring
from .params import LakeParameters
from .progress import RngLike
from .record import MonitoringSeries
from .validation import FieldError

__all__ = [
    "FIT_REPLICATES",
    "FIT_SEED",
    "MIN_LEVEL_STEP",
    "MIN_RUN_YEARS",
    "MIN_SEGMENT_YEARS",
    "Method",
    "State",
    "Stretch",
    "StretchSplit",
    "classify_years",
    "merge_flickers",
    "split_by_change_points",
    "split_by_fit",
    "split_record",
]

State = Literal["clear", "turbid", "lower", "higher"]
Method = Literal["fitted_separatrix", "change_points"]

#: Runs shorter than this between two runs of the other state are flickers [years].
MIN_RUN_YEARS = 3
#: Fewest years in a change-point segment.
MIN_SEGMENT_YEARS = 3
#: Smallest difference of ln TP between the two level groups that counts as a shift (ln 1.4 ≈ 0.34).
MIN_LEVEL_STEP = math.log(1.4)
#: Bootstrap replicates of the fit made for the split (only its point estimate is used).
FIT_REPLICATES = 100
#: Seed of that fit: the default of ``turnback fit``, so both give the same lake.
FIT_SEED = 1

RULE_FIT = (
    "clear when lake P is below the fitted lake's unstable separatrix at that year's load "
    "(held at the tipping-fold P above the tipping load and at the recovery-fold P below the recovery load), "
    "turbid otherwise; runs of fewer than {k} years that return to the state around them are flickers and "
    "count with that state"
)
RULE_CP = (
    "change points in the mean of ln TP (PELT, Killick, Fearnhead & Eckley 2012; normal mean-shift cost, "
    "penalty 3 ln n, segments of at least {h} years), segments grouped into lower and higher TP "
    "(Fisher 1958, two groups); no lake model"
)


@dataclass(frozen=True)
class Stretch:
    """A run of consecutive years in one state.

    Attributes
    ----------
    start, stop : int
        Indices into the record: years ``start … stop − 1``.
    from_year, to_year : int
        First and last calendar year (inclusive).
    state : {"clear", "turbid", "lower", "higher"}
        Model state with a fit; TP level group without one.
    ends_in_shift : bool
        True when the next year begins another stretch (False for the last).
    """

    start: int
    stop: int
    from_year: int
    to_year: int
    state: State
    ends_in_shift: bool

    @property
    def n_years(self) -> int:
        return self.stop - self.start


@dataclass(frozen=True, eq=False)
class StretchSplit:
    """A record cut into stretches of one state.

    Attributes
    ----------
    status : {"ok", "fallback"}
        ``"fallback"`` when a fitted split was asked for but the fitted lake
        has no folds, so change points were used.
    message : str
        One line: how the record was split.
    method : {"fitted_separatrix", "change_points"}
    rule : str
        The rule in plain words.
    years : ndarray of int
    states : tuple of str
        State of each year after flickers are merged.
    raw_states : tuple of str
        State of each year before merging (the same for change points).
    stretches : tuple of Stretch
        In time order.
    params : LakeParameters or None
        The lake model used (fitted split).
    thresholds_kg : ndarray or None
        The clear threshold ``P_u(L_t)`` of each year [kg] (fitted split).
    volume_m3 : float or None
    change_points : ChangePoints or None
        The PELT segmentation of ln TP (change-point split).
    min_run_years : int
    notes : tuple of str
    """

    status: Literal["ok", "fallback"]
    message: str
    method: Method
    rule: str
    years: NDArray[np.int64]
    states: tuple[State, ...]
    raw_states: tuple[State, ...]
    stretches: tuple[Stretch, ...]
    params: LakeParameters | None
    thresholds_kg: NDArray[np.float64] | None
    volume_m3: float | None
    change_points: ChangePoints | None
    min_run_years: int
    notes: tuple[str, ...]

    @property
    def shift_years(self) -> tuple[int, ...]:
        """First year of each stretch after the first: the years a new state began."""
        return tuple(s.from_year for s in self.stretches[1:])

    def to_dict(self) -> dict[str, object]:
        out: dict[str, object] = {"method": self.method, "rule": self.rule, "notes": list(self.notes)}
        if self.method == "fitted_separatrix":
            out["min_run_years"] = self.min_run_years
            out["params"] = None if self.params is None else self.params.to_dict()
        elif self.change_points is not None:
            out["penalty"] = self.change_points.penalty
            out["min_segment_years"] = self.change_points.min_size
            out["noise_sd_ln_tp"] = self.change_points.sd
        return out


# --------------------------------------------------------------------------
# runs and flickers
# --------------------------------------------------------------------------
def _runs(flags: NDArray[np.bool_]) -> list[tuple[int, int, bool]]:
    """``(start, stop, value)`` of each run of equal values."""
    out: list[tuple[int, int, bool]] = []
    start = 0
    for i in range(1, flags.size + 1):
        if i == flags.size or flags[i] != flags[start]:
            out.append((start, i, bool(flags[start])))
            start = i
    return out


def merge_flickers(flags: ArrayLike, min_run_years: int = MIN_RUN_YEARS) -> NDArray[np.bool_]:
    """Count brief excursions with the state around them.

    A run shorter than ``min_run_years`` with a run of the other state on
    both sides takes their state; the shortest is merged first (earliest
    among equals) and the runs are re-formed after each merge.  Runs at
    either end are kept.

    Parameters
    ----------
    flags : array_like of bool, shape (n,)
        One state flag a year (e.g. turbid).
    min_run_years : int
        At least 1; 1 merges nothing.
    """
    out = np.array(flags, dtype=bool, copy=True)
    k = int(min_run_years)
    if k < 1:
        raise FieldError(("min_run_years",), f"must be a whole number of years >= 1; got {min_run_years!r}")
    while True:
        runs = _runs(out)
        inner = [(stop - start, start, stop) for start, stop, _ in runs[1:-1] if stop - start < k]
        if not inner:
            return out
        _, start, stop = min(inner)
        out[start:stop] = ~out[start]


def _stretches(years: NDArray[np.int64], labels: list[State]) -> tuple[Stretch, ...]:
    out = []
    start = 0
    n = len(labels)
    for i in range(1, n + 1):
        if i == n or labels[i] != labels[start]:
            out.append(
                Stretch(
                    start=start,
                    stop=i,
                    from_year=int(years[start]),
                    to_year=int(years[i - 1]),
                    state=labels[start],
                    ends_in_shift=i < n,
                )
            )
            start = i
    return tuple(out)


# --------------------------------------------------------------------------
# with a lake model
# --------------------------------------------------------------------------
def classify_years(
    params: LakeParameters, p_kg: NDArray[np.float64], load_kg_per_yr: NDArray[np.float64]
) -> tuple[NDArray[np.bool_], NDArray[np.float64]]:
    """Turbid flag and clear threshold ``P_u(L_t)`` [kg] of each year.

    Parameters
    ----------
    params : LakeParameters
        A lake with folds.
    p_kg : ndarray
        Lake P of each year [kg].
    load_kg_per_yr : ndarray
        External load of each year [kg yr⁻¹].

    Raises
    ------
    ValueError
        When the lake has no folds (no separatrix to classify by).
    """
    fs = folds(params)
    loads = np.asarray(load_kg_per_yr, dtype=float)
    cache: dict[float, float] = {}
    th = np.empty(loads.size)
    for i, load in enumerate(loads):
        key = float(load)
        if key not in cache:
            cache[key] = clear_threshold_kg(params, key, fs=fs)
        th[i] = cache[key]
    return np.asarray(p_kg, dtype=float) >= th, th


def split_by_fit(
    series: MonitoringSeries,
    params: LakeParameters,
    volume_m3: float,
    *,
    min_run_years: int = MIN_RUN_YEARS,
) -> StretchSplit:
    """Stretches of clear and turbid years by a lake model (module docstring).

    Raises
    ------
    ValueError
        When the lake has no folds.
    """
    p = series.p_kg(volume_m3)
    turbid_raw, th = classify_years(params, p, series.load_kg_per_yr)
    turbid = merge_flickers(turbid_raw, min_run_years)
    labels: list[State] = ["turbid" if t else "clear" for t in turbid]
    raw: list[State] = ["turbid" if t else "clear" for t in turbid_raw]
    stretches = _stretches(series.years, labels)
    notes = []
    merged = int(np.count_nonzero(turbid != turbid_raw))
    if merged:
        notes.append(
            f"{merged} year(s) briefly on the other side of the separatrix were counted with the state around them "
            f"(runs shorter than {min_run_years} years)."
        )
    last = stretches[-1]
    if len(stretches) > 1 and last.n_years < min_run_years:
        notes.append(
            f"The last {last.n_years} year(s) are {last.state}: too few yet to tell a shift from a brief excursion."
        )
    return StretchSplit(
        status="ok",
        message=f"{len(stretches)} stretch(es) by the fitted lake's separatrix",
        method="fitted_separatrix",
        rule=RULE_FIT.format(k=min_run_years),
        years=np.asarray(series.years, dtype=np.int64),
        states=tuple(labels),
        raw_states=tuple(raw),
        stretches=stretches,
        params=params,
        thresholds_kg=th,
        volume_m3=float(volume_m3),
        change_points=None,
        min_run_years=int(min_run_years),
        notes=tuple(notes),
    )


# --------------------------------------------------------------------------
# without a lake model
# --------------------------------------------------------------------------
def _two_groups(means: NDArray[np.float64], weights: NDArray[np.float64]) -> float | None:
    """Threshold between the two groups of ``means`` of least weighted within-group sum of squares."""
    order = np.argsort(means)
    m, w = means[order], weights[order]
    best, cut = math.inf, None
    for k in range(1, m.size):
        ss = 0.0
        for g_m, g_w in ((m[:k], w[:k]), (m[k:], w[k:])):
            mu = float(np.average(g_m, weights=g_w))
            ss += float(np.sum(g_w * (g_m - mu) ** 2))
        if ss < best:
            best, cut = ss, 0.5 * (float(m[k - 1]) + float(m[k]))
    return cut


def split_by_change_points(
    series: MonitoringSeries,
    *,
    penalty: float | None = None,
    min_segment_years: int = MIN_SEGMENT_YEARS,
    notes: tuple[str, ...] = (),
    status: Literal["ok", "fallback"] = "ok",
) -> StretchSplit:
    """Stretches of lower and higher TP by change points in ln TP (module docstring)."""
    x = np.log(np.asarray(series.tp_ug_l, dtype=float))
    cp = pelt_mean_shift(x, penalty=penalty, min_size=min(int(min_segment_years), x.size))
    means = np.asarray(cp.means)
    lengths = np.diff(np.asarray((0, *cp.ends))).astype(float)
    cut = _two_groups(means, lengths) if means.size > 1 else None
    if (
        cut is None
        or float(np.average(means[means > cut], weights=lengths[means > cut]))
        - float(np.average(means[means <= cut], weights=lengths[means <= cut]))
        < MIN_LEVEL_STEP
    ):
        high = np.zeros(x.size, dtype=bool)
    else:
        high = np.repeat(means > cut, lengths.astype(int))
    labels: list[State] = ["higher" if h else "lower" for h in high]
    stretches = _stretches(series.years, labels)
    all_notes = [
        *notes,
        "Without a lake model a shift is a step in the TP level: it cannot be told from a steady trend, "
        "and a slow flip is dated by its visible jump.",
    ]
    return StretchSplit(
        status=status,
        message=f"{len(stretches)} stretch(es) by change points in the TP level",
        method="change_points",
        rule=RULE_CP.format(h=cp.min_size),
        years=np.asarray(series.years, dtype=np.int64),
        states=tuple(labels),
        raw_states=tuple(labels),
        stretches=stretches,
        params=None,
        thresholds_kg=None,
        volume_m3=None,
        change_points=cp,
        min_run_years=1,
        notes=tuple(all_notes),
    )


# --------------------------------------------------------------------------
# main entry
# --------------------------------------------------------------------------
def split_record(
    series: MonitoringSeries,
    *,
    volume_m3: float | None = None,
    params: LakeParameters | FitResult | None = None,
    fit: bool = True,
    min_run_years: int = MIN_RUN_YEARS,
    rng: RngLike = FIT_SEED,
) -> StretchSplit:
    """Cut a monitoring record into stretches of one state.

    Parameters
    ----------
    series : MonitoringSeries
    volume_m3 : float, optional
        Lake volume [m³]; needed for the fitted split.
    params : LakeParameters or FitResult, optional
        An existing lake model or fit; without one, and with ``fit`` and a
        volume, the record is fitted with
        :func:`turnback.model.fit.fit_monitoring` (``FIT_REPLICATES``
        bootstrap replicates, seed ``rng``; only the point fit is used).
    fit : bool
        False: change points only, whatever else is given.
    min_run_years : int
        Flicker length for the fitted split.
    rng : numpy.random.Generator, int or None
        Seed of the fit (default that of ``turnback fit``).

    Returns
    -------
    StretchSplit
        Fitted split when a volume is known and the lake has folds;
        otherwise change points (``status = "fallback"`` when a fitted split
        was possible in principle but the fitted lake has no folds).

    Raises
    ------
    ValueError
        When a lake model is given without a volume.
    """
    if not fit:
        return split_by_change_points(series)
    if volume_m3 is None:
        if params is not None:
            raise FieldError(("volume_m3",), "is needed to classify the years with a lake model [m³]")
        return split_by_change_points(series)
    if params is None:
        params = fit_monitoring(series, volume_m3, replicates=FIT_REPLICATES, rng=rng)
    lake = params.params if isinstance(params, FitResult) else params
    if not folds(lake):
        return split_by_change_points(
            series,
            status="fallback",
            notes=(
                "The fitted lake has no folds (one stable state at every load), so it has no separatrix to "
                "classify years by; the record was split by change points in the TP level instead.",
            ),
        )
    return split_by_fit(series, lake, volume_m3, min_run_years=min_run_years)
