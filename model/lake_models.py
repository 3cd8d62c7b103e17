"""The two lake models behind one set of questions: folds, equilibria and the load that holds a state.

Plans, clear-state rules and the precautionary load ask the same things of
either lake; these functions send each question to the one-box engine
(:mod:`turnback.model.equilibrium`) or the two-pool engine
(:mod:`turnback.model.two_pool_equilibrium`).  Results are the engines' own
objects; the two-pool ones extend the one-box ones (sediment P ``m``).
"""

from __future__ import annotations

from typing import TypeAlias

from . import equilibrium as one_box
from . import two_pool_equilibrium as two_pool
from .equilibrium import Equilibrium, Fold
from .params import LakeParameters, recycling_fraction
from .two_pool import ModelName, TwoPoolParameters

__all__ = ["AnyLakeParameters", "lake_equilibria", "lake_folds", "lake_load_at", "model_name"]

AnyLakeParameters: TypeAlias = LakeParameters | TwoPoolParameters


def model_name(params: AnyLakeParameters) -> ModelName:
    """``"two-pool"`` or ``"one-box"``."""
    return "two-pool" if isinstance(params, TwoPoolParameters) else "one-box"


def lake_folds(params: AnyLakeParameters) -> tuple[Fold, ...]:
    """The folds (tipping, recovery) of either lake, ascending in (water) P; empty without folds."""
    if isinstance(params, TwoPoolParameters):
        return two_pool.folds(params)
    return one_box.folds(params)


def lake_equilibria(params: AnyLakeParameters, load: float) -> tuple[Equilibrium, ...]:
    """The equilibria of either lake at ``load`` [kg yr⁻¹], ascending in (water) P [kg]."""
    if isinstance(params, TwoPoolParameters):
        return two_pool.equilibria(params, load)
    return one_box.equilibria(params, load)


def lake_load_at(params: AnyLakeParameters, p: float) -> float:
    """The load [kg yr⁻¹] that holds (water) P at ``p`` [kg] in balance.

    One-box: ``s P − r P^q/(m^q + P^q)``; two-pool: ``h P + s b P/(b + r g(P))``.
    """
    if isinstance(params, TwoPoolParameters):
        return float(params.load_at(p))
    return params.s * p - params.r * float(recycling_fraction(p, params.m, params.q))
