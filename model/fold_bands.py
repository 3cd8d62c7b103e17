"""Bootstrap bands on the fold loads, and the regime probabilities of a fit.

Percentile intervals (Efron & Tibshirani 1993, *An Introduction to the
Bootstrap*, ch. 13) at ``level`` are taken **over the replicates whose lake
has folds**; the share of such replicates is reported as ``fold_fraction``.
Every band is clipped to a plausible range of loads (``[-2 L_max, 5
L_max]`` with ``L_max`` the largest load in the record); a clipped band
sets ``clipped`` and its estimate is withheld.  The regime probabilities are
bootstrap proportions, not Bayesian posterior probabilities.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import NDArray

from .bootstrap import BootstrapDraws

__all__ = ["MIN_FOLD_REPLICATES", "RegimeProbability", "ThresholdBand", "regime_probability", "threshold_band"]

#: Fewest replicates with folds needed to quote an interval.
MIN_FOLD_REPLICATES = 20


@dataclass(frozen=True)
class ThresholdBand:
    """A fold load with its bootstrap band.

    Attributes
    ----------
    name : {"tipping_load", "recovery_load"}
    estimate : float or None
        The point fit's fold load [kg yr⁻¹]; ``None`` when the point fit has
        no folds or the record does not constrain this threshold.
    point_value : float or None
        The point fit's fold load even when it is not constrained.
    low, high : float or None
        Percentile interval at ``level`` [kg yr⁻¹] over the replicates with
        folds; ``None`` when fewer than :data:`MIN_FOLD_REPLICATES` have one.
    level : float
        Nominal coverage, e.g. 0.9.
    fold_fraction : float
        Share of the used replicates whose lake has folds.
    constrained : bool
        Whether the record visits the branch this threshold ends and the band
        lies within ``plausible_range``.
    clipped : bool
        Whether ``low``/``high`` were clipped to ``plausible_range`` (the
        estimate is then withheld).
    plausible_range : tuple of float
        ``[-2 L_max, 5 L_max]`` [kg yr⁻¹].
    """

    name: Literal["tipping_load", "recovery_load"]
    estimate: float | None
    point_value: float | None
    low: float | None
    high: float | None
    level: float
    fold_fraction: float
    constrained: bool
    clipped: bool
    plausible_range: tuple[float, float]

    def to_dict(self) -> dict[str, float | None]:
        """``{"estimate", "low", "high"}`` for the JSON contract."""
        return {"estimate": self.estimate, "low": self.low, "high": self.high}


@dataclass(frozen=True)
class RegimeProbability:
    """Share of bootstrap replicates in each regime (sums to 1)."""

    reversible: float
    hysteretic: float
    irreversible: float

    def to_dict(self) -> dict[str, float]:
        return {"reversible": self.reversible, "hysteretic": self.hysteretic, "irreversible": self.irreversible}


def threshold_band(
    name: Literal["tipping_load", "recovery_load"],
    values: NDArray[np.float64],
    used: NDArray[np.bool_],
    point_value: float | None,
    constrained: bool,
    level: float,
    plausible: tuple[float, float],
) -> ThresholdBand:
    good = values[used & np.isfinite(values)]
    n_used = int(np.sum(used))
    frac = good.size / n_used if n_used else 0.0
    low: float | None = None
    high: float | None = None
    clipped = False
    if good.size >= MIN_FOLD_REPLICATES:
        a = (1.0 - level) / 2.0
        lo_v, hi_v = (float(v) for v in np.quantile(good, [a, 1.0 - a]))
        if lo_v < plausible[0] or hi_v > plausible[1]:
            clipped = True
        low = min(max(lo_v, plausible[0]), plausible[1])
        high = min(max(hi_v, plausible[0]), plausible[1])
    constrained = constrained and not clipped and point_value is not None
    estimate = point_value if constrained else None
    return ThresholdBand(name, estimate, point_value, low, high, level, frac, constrained, clipped, plausible)


def regime_probability(draws: BootstrapDraws) -> RegimeProbability:
    """Share of the used replicates in each regime."""
    used = draws.regime[draws.used]
    counts = {k: float(np.sum(used == k)) for k in ("reversible", "hysteretic", "irreversible")}
    total = sum(counts.values()) or 1.0
    return RegimeProbability(**{k: v / total for k, v in counts.items()})
