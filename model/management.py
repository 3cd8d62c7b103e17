"""What a manager asks of the equilibria: the P to take out, the safety margin, the state now.

Built on the closed-form engine of :mod:`turnback.model.equilibrium`
(Carpenter, Ludwig & Brock 1999, Ecological Applications 9:751–771).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

from .equilibrium import Equilibrium, Fold, equilibria, folds
from .params import LakeParameters, LakeProfile

__all__ = ["RemovalNeed", "SafetyMargin", "StateReading", "read_state", "removal_needed", "safety_margin"]


@dataclass(frozen=True)
class RemovalNeed:
    """In-lake P removal needed to move a turbid lake into the clear basin.

    Attributes
    ----------
    status : {"needed", "not_needed", "no_lasting_effect"}
        ``not_needed`` when the lake is already on the clear side or the load
        has no turbid state; ``no_lasting_effect`` when the load is above the
        tipping load, so no clear state exists and the lake would return to
        turbid after any removal.
    kg : float
        P mass to remove [kg] (0 unless ``needed``).
    ug_l : float or None
        The same as a concentration drop [µg L⁻¹] when a profile was given.
    target_p : float or None
        Lake P after removal [kg]: the separatrix less the margin.
    separatrix_p : float or None
        The unstable equilibrium [kg] at this load.
    margin : float
        Fraction below the separatrix aimed at [–].
    message : str
        Plain-language statement of the result.
    """

    status: Literal["needed", "not_needed", "no_lasting_effect"]
    kg: float
    ug_l: float | None
    target_p: float | None
    separatrix_p: float | None
    margin: float
    message: str


@dataclass(frozen=True)
class SafetyMargin:
    """Distance from a load to the tipping load.

    ``kg_per_yr = L_tip - L`` [kg yr⁻¹]; ``percent = 100 (L_tip - L)/L`` [%],
    the rise in load the lake can take before the clear state is lost
    (``None`` when the load is zero or there is no tipping load).
    """

    load: float
    tipping_load: float | None
    kg_per_yr: float | None
    percent: float | None


def removal_needed(
    params: LakeParameters,
    load: float,
    p_now: float | None = None,
    margin: float = 0.1,
    profile: LakeProfile | None = None,
) -> RemovalNeed:
    """In-lake P removal that moves a turbid lake into the clear basin.

    The lake must be brought below the separatrix ``P_u`` (the unstable
    equilibrium at this load).  The target is ``(1 - margin) P_u`` so that
    year-to-year noise does not carry it straight back; the removal is
    ``P_now - (1 - margin) P_u`` [kg].

    Parameters
    ----------
    params : LakeParameters
    load : float
        External load the lake will receive afterwards [kg yr⁻¹].
    p_now : float, optional
        Present lake P [kg]; defaults to the turbid equilibrium at ``load``.
    margin : float
        Fraction below the separatrix to aim for, in [0, 1).
    profile : LakeProfile, optional
        To express the removal as a concentration drop [µg L⁻¹].
    """
    if not (0.0 <= margin < 1.0):
        raise ValueError("margin must be a fraction in [0, 1)")
    eqs = equilibria(params, load)
    middle = [e for e in eqs if e.branch == "middle"]
    upper = [e for e in eqs if e.branch == "upper"]
    lower = [e for e in eqs if e.branch == "lower"]

    def conc(kg: float) -> float | None:
        return float(profile.concentration(kg)) if profile is not None else None

    if not middle:
        if upper and not lower:
            return RemovalNeed(
                "no_lasting_effect",
                0.0,
                None,
                None,
                None,
                margin,
                "At this load there is no clear-water state: the lake would return to turbid "
                "after any removal. Cut the load below the tipping load first.",
            )
        return RemovalNeed(
            "not_needed",
            0.0,
            conc(0.0),
            None,
            None,
            margin,
            "At this load the lake has only one stable state and settles there without in-lake removal.",
        )
    sep = middle[0].p
    if p_now is None:
        p_now = upper[0].p if upper else sep
    target = (1.0 - margin) * sep
    if p_now <= target:
        return RemovalNeed(
            "not_needed",
            0.0,
            conc(0.0),
            target,
            sep,
            margin,
            "The lake is already on the clear-water side of the separatrix at this load.",
        )
    kg = p_now - target
    return RemovalNeed(
        "needed",
        kg,
        conc(kg),
        target,
        sep,
        margin,
        f"Remove about {kg:,.0f} kg P to bring the lake {margin:.0%} below the separatrix "
        f"({sep:,.0f} kg); it then returns to clear water at this load.",
    )


def safety_margin(params: LakeParameters, load: float, fs: tuple[Fold, ...] | None = None) -> SafetyMargin:
    """Distance from ``load`` to the tipping load, in kg yr⁻¹ and in % of ``load``."""
    if fs is None:
        fs = folds(params)
    if not fs:
        return SafetyMargin(load, None, None, None)
    tip = fs[0].load
    kg = tip - load
    pct = 100.0 * kg / load if load > 0.0 else None
    return SafetyMargin(load, tip, kg, pct)


@dataclass(frozen=True)
class StateReading:
    """Where a lake state is heading at a given load.

    Attributes
    ----------
    p : float
        Present lake P [kg].
    load : float
        Load [kg yr⁻¹].
    attractor : Equilibrium
        The stable equilibrium whose basin holds ``p``.
    label : {"clear", "turbid", "single"}
        ``clear`` for the lower branch, ``turbid`` for the upper branch,
        ``single`` for a lake with one stable state at this load and no folds.
    settled : bool
        True when ``p`` is within ``settle_tol`` (relative) of the attractor.
    separatrix_p : float or None
        The unstable equilibrium [kg] bounding the basins, where there is one.
    """

    p: float
    load: float
    attractor: Equilibrium
    label: Literal["clear", "turbid", "single"]
    settled: bool
    separatrix_p: float | None


def read_state(params: LakeParameters, load: float, p: float, settle_tol: float = 0.02) -> StateReading:
    """Classify lake state ``p`` [kg] at ``load`` [kg yr⁻¹] by its basin of attraction.

    With three equilibria the separatrix (middle) divides the clear and turbid
    basins; with one, every state heads to it.  For the annual map with
    ``s < 1`` the map is increasing in ``P`` (``1 + ∂f/∂P >= 1 - s > 0``), so
    the basins are exactly those of the differential equation.
    """
    eqs = equilibria(params, load)
    stable = [e for e in eqs if e.stable]
    middle = [e for e in eqs if e.branch == "middle"]
    sep = middle[0].p if middle else None
    if not stable:  # only at a fold load exactly: fall back to the nearest equilibrium
        stable = list(eqs)
    if sep is not None and len(stable) >= 2:
        attractor = stable[0] if p < sep else stable[-1]
    else:
        attractor = min(stable, key=lambda e: abs(e.p - p))
    label: Literal["clear", "turbid", "single"]
    if attractor.branch == "lower":
        label = "clear"
    elif attractor.branch == "upper":
        label = "turbid"
    else:
        label = "single"
    settled = abs(p - attractor.p) <= settle_tol * max(attractor.p, 1e-12 * params.m)
    return StateReading(p=p, load=load, attractor=attractor, label=label, settled=settled, separatrix_p=sep)
