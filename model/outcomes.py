r"""Outcomes of a scenario's ensemble: the summary a planner reads.

:func:`summarise` turns simulated lake P paths (members × years) into the
numbers and yearly series of :class:`ScenarioResult`; it simulates nothing
(the simulation is :func:`turnback.model.ensemble.simulate_members`).

Flip to turbid
    For members clear in year 0: turbid in at least one year 1 … ``years``
    (first passage out of the clear state).  Undefined (``None``) when no
    member starts clear.

Parameter draws
    With a lake's ``parameter_draws`` each member is judged by its own
    lake's threshold, and the flip probability of each draw (over the
    members that run it and start clear) is summarised as
    :class:`FlipSpread`: how far the chance of flipping depends on what the
    record leaves unknown.  Each draw's share rests on its own members
    (about ``members / draws`` of them), so with few members per draw the
    spread also holds their Monte-Carlo noise; ``binomial_sd`` says how much.

Recovery
    The first year a member is clear and stays clear for
    ``recovery_stay_years`` years (:func:`turnback.model.clear_state.recovery_years`).
    A lake that starts clear and stays clear recovers in year 0.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from numpy.typing import NDArray

from .clear_state import recovery_years
from .plan import Plan, Scenario, ScenarioLake
from .precaution import PrecautionResult

__all__ = ["Comparison", "FlipSpread", "ScenarioResult", "flip_spread", "summarise"]


@dataclass(frozen=True)
class FlipSpread:
    """The flip probability of each parameter draw, summarised across draws [–].

    Attributes
    ----------
    draws : int
        Draws with at least one member that starts clear.
    members_per_draw_min, members_per_draw_max : int
        Members behind each draw's share.
    mean, sd, p05, p50, p95, min, max : float
        Of the per-draw flip probabilities (``sd`` between draws).
    binomial_sd : float
        Typical Monte-Carlo SD of one draw's share, ``sqrt(p̄ (1 - p̄) / k)``
        with ``k`` the median members per draw: the part of ``sd`` that is
        noise rather than parameter uncertainty.
    """

    draws: int
    members_per_draw_min: int
    members_per_draw_max: int
    mean: float
    sd: float
    p05: float
    p50: float
    p95: float
    min: float
    max: float
    binomial_sd: float

    def to_dict(self) -> dict[str, Any]:
        return {
            "draws": self.draws,
            "members_per_draw": [self.members_per_draw_min, self.members_per_draw_max],
            "mean": self.mean,
            "sd": self.sd,
            "p05": self.p05,
            "p50": self.p50,
            "p95": self.p95,
            "min": self.min,
            "max": self.max,
            "binomial_sd": self.binomial_sd,
        }


def flip_spread(
    flipped: NDArray[np.bool_], starts: NDArray[np.bool_], member_draw: NDArray[np.int64]
) -> FlipSpread | None:
    """Per-draw flip probabilities over the members that start clear; None when no member starts clear."""
    if not starts.any():
        return None
    d = member_draw[starts]
    n = int(member_draw.max()) + 1
    k = np.bincount(d, minlength=n)
    f = np.bincount(d, weights=flipped[starts].astype(float), minlength=n)
    has = k > 0
    p = f[has] / k[has]
    kk = k[has]
    mean = float(p.mean())
    q05, q50, q95 = (float(v) for v in np.quantile(p, [0.05, 0.5, 0.95]))
    k_med = float(np.median(kk))
    return FlipSpread(
        draws=int(has.sum()),
        members_per_draw_min=int(kk.min()),
        members_per_draw_max=int(kk.max()),
        mean=mean,
        sd=float(p.std(ddof=1)) if p.size > 1 else 0.0,
        p05=q05,
        p50=q50,
        p95=q95,
        min=float(p.min()),
        max=float(p.max()),
        binomial_sd=math.sqrt(mean * (1.0 - mean) / k_med),
    )


@dataclass(frozen=True, eq=False)
class ScenarioResult:
    """Outcomes of one scenario; arrays run over years 0 … T unless stated.

    Attributes
    ----------
    years : ndarray of int, (T + 1,)
    load_kg_per_yr : ndarray, (T,)
        Scheduled (mean) load of years 1 … T [kg yr⁻¹].
    threshold_tp_ug_l : ndarray
        Clear-state threshold [µg L⁻¹] (module docstring).
    tp_median_ug_l, tp_p05_ug_l, tp_p95_ug_l : ndarray
        Ensemble median and 5–95 % band of TP [µg L⁻¹].
    p_clear : ndarray
        Fraction of members clear [–].
    recovery_year : ndarray, (members,)
        Recovery year of each member, NaN when not recovered.
    recovery_years_median : float or None
        Median recovery year counting non-recovered members as never; None
        when fewer than half recover.
    p_recovered : float
    p_flip : float or None
        Flip probability of members that start clear; None when none does.
    p_relapse : float or None
        Of recovered members, the fraction turbid again later; None when none recovered.
    p_clear_final, p_clear_final_se : float
        Fraction clear in year T and its binomial Monte-Carlo error [–].
    final_tp_median_ug_l, final_tp_p05_ug_l, final_tp_p95_ug_l : float
        End state [µg L⁻¹].
    end_state : {"clear", "turbid", "mixed"}
        ``clear`` when at least 95 % of members are clear in year T, ``turbid`` when at most 5 %.
    load_cut_kg : float
        ``Σ_t (L_base − L_t)`` [kg] against the do-nothing baseline (load held at its start).
    in_lake_removal_kg : float
        Mean P actually removed in the lake [kg] (a removal takes at most what the lake holds).
    sample_tp_ug_l : ndarray, (k, T + 1)
        The first ``k`` members' TP paths [µg L⁻¹].
    sediment_median_kg : ndarray or None
        Two-pool lakes: ensemble median of the mobile sediment P in years 0 … T [kg].
    sediment_p_final_median_kg : float or None
        Two-pool lakes: its value in year T [kg].
    p_flip_across_draws : FlipSpread or None
        Lakes with ``parameter_draws``: the spread of ``p_flip`` across draws.
    """

    name: str
    scenario: Scenario
    lake: ScenarioLake
    years: NDArray[np.int64]
    load_kg_per_yr: NDArray[np.float64]
    threshold_tp_ug_l: NDArray[np.float64]
    tp_median_ug_l: NDArray[np.float64]
    tp_p05_ug_l: NDArray[np.float64]
    tp_p95_ug_l: NDArray[np.float64]
    p_clear: NDArray[np.float64]
    recovery_year: NDArray[np.float64]
    recovery_years_median: float | None
    p_recovered: float
    p_flip: float | None
    p_relapse: float | None
    p_clear_final: float
    p_clear_final_se: float
    final_tp_median_ug_l: float
    final_tp_p05_ug_l: float
    final_tp_p95_ug_l: float
    end_state: Literal["clear", "turbid", "mixed"]
    load_cut_kg: float
    in_lake_removal_kg: float
    sample_tp_ug_l: NDArray[np.float64]
    precaution: PrecautionResult | None = None
    status: Literal["ok"] = "ok"
    message: str = ""
    sediment_median_kg: NDArray[np.float64] | None = None
    sediment_p_final_median_kg: float | None = None
    p_flip_across_draws: FlipSpread | None = None

    @property
    def total_removed_kg(self) -> float:
        """External load cut plus in-lake removal [kg], against the do-nothing baseline."""
        return self.load_cut_kg + self.in_lake_removal_kg

    def summary(self) -> dict[str, Any]:
        """The five outcome numbers of the ``turnback compare --json`` contract."""
        return {
            "name": self.name,
            "p_clear_final": self.p_clear_final,
            "p_flip": self.p_flip,
            "recovery_years_median": self.recovery_years_median,
            "final_tp_median_ug_l": self.final_tp_median_ug_l,
        }

    def details(self) -> dict[str, Any]:
        """Summary plus the other scalar outcomes (JSON-ready, no NaN)."""
        rec = self.recovery_year[np.isfinite(self.recovery_year)]
        out = self.summary() | {
            "members": self.scenario.members,
            "years": self.scenario.years,
            "p_clear_final_se": self.p_clear_final_se,
            "p_recovered": self.p_recovered,
            "p_relapse": self.p_relapse,
            "recovery_years_p05": float(np.percentile(rec, 5)) if rec.size else None,
            "recovery_years_p95": float(np.percentile(rec, 95)) if rec.size else None,
            "final_tp_p05_ug_l": self.final_tp_p05_ug_l,
            "final_tp_p95_ug_l": self.final_tp_p95_ug_l,
            "end_state": self.end_state,
            "load_cut_kg": self.load_cut_kg,
            "in_lake_removal_kg": self.in_lake_removal_kg,
            "total_removed_kg": self.total_removed_kg,
            "final_threshold_tp_ug_l": float(self.threshold_tp_ug_l[-1]),
            "message": self.message,
        }
        if self.sediment_p_final_median_kg is not None:
            out["sediment_p_final_median_kg"] = self.sediment_p_final_median_kg
        if self.lake.parameter_draws is not None:
            spread = self.p_flip_across_draws
            out["p_flip_across_draws"] = None if spread is None else spread.to_dict()
        if self.precaution is not None:
            pr = self.precaution
            out["precaution"] = {
                "status": pr.status,
                "load_kg_per_yr": pr.load_kg_per_yr,
                "standard_error_kg_per_yr": pr.standard_error_kg_per_yr,
                "probability": pr.probability,
                "within_years": pr.within_years,
                "max_probability": pr.max_probability,
                "message": pr.message,
            }
        return out


@dataclass(frozen=True, eq=False)
class Comparison:
    """All scenarios of a plan, in input order, with the lake's folds."""

    plan: Plan
    results: tuple[ScenarioResult, ...]
    regime: str
    tipping_load_kg_per_yr: float | None
    recovery_load_kg_per_yr: float | None
    status: Literal["ok"] = "ok"
    message: str = ""


def _median_recovery(rec: NDArray[np.float64]) -> float | None:
    n = rec.size
    finite = np.sort(rec[np.isfinite(rec)])
    if 2 * finite.size < n or finite.size == 0:
        return None
    full = np.concatenate([finite, np.full(n - finite.size, np.inf)])
    med = float(np.median(full))
    if math.isfinite(med):
        return med
    return float(full[(n - 1) // 2])  # exactly half recovered: the lower median


def _relapse_share(clear: NDArray[np.bool_], rec: NDArray[np.float64]) -> float | None:
    """Of the recovered members, the share turbid again after recovering; None when none recovered."""
    recovered = np.isfinite(rec)
    if not recovered.any():
        return None
    bad = ~clear
    last_bad = np.where(bad.any(axis=1), clear.shape[1] - 1 - np.argmax(bad[:, ::-1], axis=1), -1)
    relapsed = recovered & (last_bad > np.where(recovered, rec, np.inf))
    return float(relapsed.sum() / recovered.sum())


def _removed_kg(P: NDArray[np.float64], removal: NDArray[np.float64]) -> float:
    """Mean P actually removed in the lake [kg]: a removal takes at most what the lake holds."""
    has = removal > 0.0
    if not has.any():
        return 0.0
    return float(np.minimum(P[:, :-1][:, has], removal[has]).sum(axis=1).mean())


def _message(scenario: Scenario, p_final: float, med: float | None) -> str:
    M, T = scenario.members, scenario.years
    msg = f"{p_final:.0%} of {M:,} member{'s' if M != 1 else ''} clear in year {T}"
    msg += f"; median recovery year {med:g}" if med is not None else "; fewer than half recover"
    if scenario.stochastic and M < 200:
        msg += f"; only {M} members, so probabilities are rough (±{math.sqrt(0.25 / M):.0%})"
    return msg


def summarise(
    lake: ScenarioLake,
    scenario: Scenario,
    P: NDArray[np.float64],
    threshold_kg: NDArray[np.float64],
    *,
    identical_members: bool = False,
    sample_paths: int = 20,
    precaution: PrecautionResult | None = None,
    sediment_kg: NDArray[np.float64] | None = None,
    member_threshold_kg: NDArray[np.float64] | None = None,
    member_draw: NDArray[np.int64] | None = None,
) -> ScenarioResult:
    """Summarise simulated paths of lake P into a :class:`ScenarioResult`.

    Parameters
    ----------
    lake, scenario
        What was simulated.
    P : ndarray, shape (members, years + 1)
        Lake P [kg] of each member in years 0 … T.
    threshold_kg : ndarray, shape (years + 1,)
        Clear threshold [kg] of each year (:func:`~turnback.model.clear_state.thresholds_by_year`).
    identical_members : bool
        True when every member is the same path (no randomness): percentiles need one row.
    sample_paths : int
        How many members' TP paths to keep.
    precaution : PrecautionResult, optional
        Carried into the result.
    sediment_kg : ndarray, shape (members, years + 1), optional
        Two-pool lakes: sediment P [kg] of each member; its median path and
        final median are reported, and dredged P counts as removed in the lake.
    member_threshold_kg : ndarray, shape (members, years + 1), optional
        Each member's own clear threshold [kg] (parameter draws); ``threshold_kg``
        is then the plan lake's, reported for display.
    member_draw : ndarray of int, shape (members,), optional
        Each member's parameter draw, for :class:`FlipSpread`.
    """
    T, M = scenario.years, scenario.members
    loads = scenario.loads()
    to_tp = lake.tp(1.0)  # TP [µg L⁻¹] per kg
    # percentiles along members, on the time-major view (faster); identical members need one row
    q05, q50, q95 = to_tp * np.percentile((P[:1] if identical_members else P).T, [5.0, 50.0, 95.0], axis=1)
    clear = P < (threshold_kg[None, :] if member_threshold_kg is None else member_threshold_kg)
    p_clear = clear.mean(axis=0)
    rec = recovery_years(clear, scenario.recovery_stay_years)
    starts = clear[:, 0]
    flipped: NDArray[np.bool_] = np.asarray(~clear[:, 1:].all(axis=1), dtype=bool)
    p_flip = float(flipped[starts].mean()) if starts.any() else None
    spread = None if member_draw is None else flip_spread(flipped, starts, member_draw)
    p_final = float(p_clear[-1])
    final = to_tp * P[:, -1]
    end_state: Literal["clear", "turbid", "mixed"] = (
        "clear" if p_final >= 0.95 else "turbid" if p_final <= 0.05 else "mixed"
    )
    med = _median_recovery(rec)
    k = max(0, min(int(sample_paths), M))
    removed = _removed_kg(P, scenario.removal_by_year())
    sed_median = None
    if sediment_kg is not None:
        removed += _removed_kg(sediment_kg, scenario.sediment_removal_by_year())
        sed_median = np.median(sediment_kg[:1] if identical_members else sediment_kg, axis=0)
    return ScenarioResult(
        name=scenario.name,
        scenario=scenario,
        lake=lake,
        years=np.arange(T + 1),
        load_kg_per_yr=loads,
        threshold_tp_ug_l=lake.tp(threshold_kg),
        tp_median_ug_l=q50,
        tp_p05_ug_l=q05,
        tp_p95_ug_l=q95,
        p_clear=p_clear,
        recovery_year=rec,
        recovery_years_median=med,
        p_recovered=float(np.isfinite(rec).mean()),
        p_flip=p_flip,
        p_relapse=_relapse_share(clear, rec),
        p_clear_final=p_final,
        p_clear_final_se=math.sqrt(p_final * (1.0 - p_final) / M),
        final_tp_median_ug_l=float(np.median(final)),
        final_tp_p05_ug_l=float(np.percentile(final, 5.0)),
        final_tp_p95_ug_l=float(np.percentile(final, 95.0)),
        end_state=end_state,
        load_cut_kg=float(np.sum(scenario.load.baseline_kg_per_yr - loads)),
        in_lake_removal_kg=removed,
        sample_tp_ug_l=to_tp * np.array(P[:k]),
        precaution=precaution,
        message=_message(scenario, p_final, med),
        sediment_median_kg=sed_median,
        sediment_p_final_median_kg=None if sed_median is None else float(sed_median[-1]),
        p_flip_across_draws=spread,
    )
