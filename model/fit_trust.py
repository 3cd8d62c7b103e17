"""How far a fitted lake can be trusted, and the state it starts in.

A fit is proposed to the user before it replaces the lake in use; this
module gives the plain checks of that proposal and the state the fitted lake
starts from.

Trust checks (each from numbers the fit already has)
    ``at_bound``
        a parameter estimate sits on the edge of its allowed range, or the
        record carries no information on it (no standard error), so the data
        do not pin it down;
    ``one_state``
        the record shows one state only, so the threshold ending the other
        is not informed by it;
    ``autocorrelation``
        the lag-1 autocorrelation of the residuals exceeds ``2/√n``, the
        usual rough bound for independent errors (Box & Jenkins 1976, from
        memory), so the intervals are likely too narrow;
    ``few_folds``
        fewer than ``min_share`` of the bootstrap refits have folds, so the
        tipping and recovery loads rest on a minority of the refits.

    The level is ``"good"`` with no failed check, ``"limited"`` with one and
    ``"poor"`` with two or more, or whenever the fitted lake cannot hold the
    state the record ends in.

Starting state
    The fitted lake starts at the last observed year, on the fitted curve:
    at the stable equilibrium of the last observed load on the branch the
    record shows (the clear-water branch for a clear record, the turbid one
    for a turbid record, the basin of the last observation when the record
    shows both).  The state read from it is then the one the record shows.
    When the fitted curve has no such branch at that load (the record ends
    clear at a load where the fitted lake can only be turbid, say), the fit
    contradicts its own record: ``contradicts`` is set and the start is the
    last observation itself.

References
----------
Carpenter, S. R., Ludwig, D. & Brock, W. A. (1999). Ecological Applications 9:751–771.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

from .equilibrium import equilibria
from .management import read_state
from .params import LakeParameters
from .point_fit import ParameterEstimate, ResidualDiagnostics

__all__ = ["FitTrust", "FittedStart", "TrustCheck", "fit_trust", "fitted_start"]

Side = Literal["both", "clear", "turbid"]
CheckKey = Literal["at_bound", "one_state", "autocorrelation", "few_folds"]


@dataclass(frozen=True)
class FittedStart:
    """Where a fitted lake starts.

    Attributes
    ----------
    p : float
        Lake P [kg] at the start (on the fitted curve unless ``contradicts``).
    state : {"clear", "turbid", "single"}
        The state it is in.
    contradicts : bool
        The fitted curve has no stable state of the kind the record ends in.
    """

    p: float
    state: Literal["clear", "turbid", "single"]
    contradicts: bool


@dataclass(frozen=True)
class TrustCheck:
    """One check of a fit: ``ok`` False when it raises a doubt.

    ``names`` lists the parameters concerned (``at_bound``), ``value`` the
    number checked (the autocorrelation, or the share of refits with folds)
    and ``limit`` the bound it was held to.
    """

    key: CheckKey
    ok: bool
    value: float | None = None
    limit: float | None = None
    names: tuple[str, ...] = ()
    side: Side = "both"


@dataclass(frozen=True)
class FitTrust:
    """The plain trust summary of a fit."""

    level: Literal["good", "limited", "poor"]
    checks: tuple[TrustCheck, ...]
    start: FittedStart

    @property
    def failed(self) -> tuple[TrustCheck, ...]:
        return tuple(c for c in self.checks if not c.ok)


def fitted_start(params: LakeParameters, load: float, p_last: float, side: Side) -> FittedStart:
    """The fitted lake's starting state at the last observed ``load`` [kg yr⁻¹] and lake P ``p_last`` [kg]."""
    eqs = equilibria(params, load)
    stable = [e for e in eqs if e.stable]
    if len(stable) == 1 and stable[0].branch == "single":
        return FittedStart(stable[0].p, "single", False)
    want = {"clear": "lower", "turbid": "upper"}.get(side)
    if want is None:
        reading = read_state(params, load, p_last)
        state: Literal["clear", "turbid", "single"] = reading.label
        return FittedStart(reading.attractor.p, state, False)
    match = [e for e in stable if e.branch == want]
    if match:
        return FittedStart(match[0].p, "clear" if want == "lower" else "turbid", False)
    reading = read_state(params, load, p_last)
    return FittedStart(float(p_last), reading.label, True)


def fit_trust(
    estimates: tuple[ParameterEstimate, ...],
    diagnostics: ResidualDiagnostics,
    side: Side,
    fold_share: float,
    start: FittedStart,
    *,
    min_share: float = 0.5,
) -> FitTrust:
    """The four checks of a fit and its level (module docstring).

    Parameters
    ----------
    estimates : tuple of ParameterEstimate
    diagnostics : ResidualDiagnostics
    side : {"both", "clear", "turbid"}
        The states the record shows.
    fold_share : float
        Share of the bootstrap refits whose lake has folds [–].
    start : FittedStart
    min_share : float
        Share of refits with folds below which ``few_folds`` fails.
    """
    limit = 2.0 / math.sqrt(max(diagnostics.n, 1))
    lag1 = diagnostics.lag1_autocorrelation
    at_bound = tuple(e.name for e in estimates if e.at_bound or not e.identified)
    checks = (
        TrustCheck("at_bound", not at_bound, names=at_bound),
        TrustCheck("one_state", side == "both", side=side),
        TrustCheck("autocorrelation", not (math.isfinite(lag1) and abs(lag1) > limit), value=lag1, limit=limit),
        TrustCheck("few_folds", fold_share >= min_share, value=fold_share, limit=min_share),
    )
    n_failed = sum(not c.ok for c in checks)
    level: Literal["good", "limited", "poor"] = "good" if n_failed == 0 else "limited" if n_failed == 1 else "poor"
    if start.contradicts:
        level = "poor"
    return FitTrust(level, checks, start)
