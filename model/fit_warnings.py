"""The plain-words caveats of a fit, built from its numbers.

Every warning is derived from the numbers it sits beside (the bands, the
bootstrap shares, the parameter estimates and the residual diagnostics), so
the text cannot say what the numbers do not.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

from .fold_bands import RegimeProbability, ThresholdBand
from .point_fit import ParameterEstimate, ResidualDiagnostics

__all__ = ["FitFacts", "fit_warnings", "share_text"]

_PLAIN = ("loss rate", "maximum recycling rate", "recycling half-saturation", "recycling exponent")


@dataclass(frozen=True)
class FitFacts:
    """What the warnings of a fit speak of.

    Attributes
    ----------
    has_folds : bool
        Whether the point fit's lake has folds.
    n_with_folds : int
        Used bootstrap replicates with folds.
    side : {"both", "clear", "turbid"}
        Which states the record shows.
    internal_share : float
        Median share of the lake's P supply that the fitted recycling provides [–].
    tipping, recovery : ThresholdBand
    plausible : tuple of float
        The plausible range of fold loads [kg yr⁻¹].
    estimates : tuple of ParameterEstimate
    diagnostics : ResidualDiagnostics
    replicates, replicates_used : int
    min_fold_replicates : int
        Fewest replicates with folds needed to quote a band.
    regime_probability : RegimeProbability, optional
        The bootstrap shares of each regime; the fold warnings quote them, so
        the words never contradict the probabilities shown beside them.
    """

    has_folds: bool
    n_with_folds: int
    side: Literal["both", "clear", "turbid"]
    internal_share: float
    tipping: ThresholdBand
    recovery: ThresholdBand
    plausible: tuple[float, float]
    estimates: tuple[ParameterEstimate, ...]
    diagnostics: ResidualDiagnostics
    replicates: int
    replicates_used: int
    min_fold_replicates: int
    regime_probability: RegimeProbability | None = None

    @property
    def fold_share(self) -> float:
        """Share of the used refits whose lake has folds (hysteretic or irreversible) [–]."""
        if self.regime_probability is not None:
            return self.regime_probability.hysteretic + self.regime_probability.irreversible
        return self.n_with_folds / self.replicates_used if self.replicates_used else 0.0

    @property
    def level_text(self) -> str:
        return f"{self.tipping.level:.0%}"


def _fmt_load(v: float | None) -> str:
    return "undefined" if v is None else f"{v:,.0f}"


def share_text(x: float) -> str:
    """A share as a percentage that never rounds a non-zero share to 0 % or a share below 1 to 100 %."""
    if 0.0 < x < 0.005:
        return "under 1%"
    if 0.995 <= x < 1.0:
        return "over 99%"
    return f"{x:.0%}"


def _fold_warnings(f: FitFacts) -> list[str]:
    """Whether the record shows folds, and which threshold a one-state record leaves open."""
    out: list[str] = []
    pct = f.level_text
    if not f.has_folds and f.n_with_folds < f.min_fold_replicates:
        share = f.fold_share
        if f.n_with_folds == 0 and share == 0.0:
            out.append(
                "Neither the fit nor any of its bootstrap refits show folds: the record is consistent with a "
                "reversible lake, so there is no tipping or recovery load to report."
            )
        else:
            out.append(
                f"The best fit has no folds, and only {f.n_with_folds} of {f.replicates_used} bootstrap refits "
                f"({share_text(share)}) do: too few to place a tipping or recovery load (at least "
                f"{f.min_fold_replicates} are needed), so the record reads most like a reversible lake."
            )
    elif f.side != "both":
        missing, shown, lost = (
            ("turbid", "clear-water", "recovery load")
            if f.side == "clear"
            else ("clear-water", "turbid", "tipping load")
        )
        band = f.recovery if f.side == "clear" else f.tipping
        span = (
            f"; it is reported only as the wide bootstrap band {_fmt_load(band.low)} to {_fmt_load(band.high)} kg/yr"
            if band.low is not None
            else "; no band can be given"
        )
        out.append(
            f"The record never shows the {missing} state (it stays in the {shown} state, with sediment recycling "
            f"supplying {f.internal_share:.0%} of the lake's P in a typical year), so the {lost} is not constrained "
            f"by the data{span}."
        )
        kept, kept_band = ("tipping load", f.tipping) if f.side == "clear" else ("recovery load", f.recovery)
        if kept_band.low is not None:
            out.append(
                f"With one state only, the {kept} is bounded only loosely, by the {shown} years: "
                f"{pct} band {_fmt_load(kept_band.low)} to {_fmt_load(kept_band.high)} kg/yr, no single estimate."
            )
    return out


def _band_warnings(f: FitFacts) -> list[str]:
    """Clipped or wide bands, and bootstrap refits that disagree with the point fit about folds."""
    out: list[str] = []
    pct = f.level_text
    for band, label in ((f.tipping, "tipping load"), (f.recovery, "recovery load")):
        if band.clipped:
            out.append(
                f"The {pct} band for the {label} reaches beyond the plausible range "
                f"({f.plausible[0]:,.0f} to {f.plausible[1]:,.0f} kg/yr) and is clipped to it."
            )
        elif (
            f.side == "both"
            and band.constrained
            and band.estimate is not None
            and band.low is not None
            and band.high is not None
            and band.high - band.low > abs(band.estimate)
        ):
            out.append(
                f"The {pct} band for the {label} is wide ({band.low:,.0f} to {band.high:,.0f} kg/yr): "
                "the record constrains it only loosely."
            )
    frac = f.tipping.fold_fraction
    if f.has_folds and frac < 0.95:
        out.append(
            f"{share_text(1.0 - frac)} of the bootstrap refits show no folds (a reversible lake); the intervals are "
            f"over the {share_text(frac)} that have folds."
        )
    if not f.has_folds and frac > 0.0 and f.tipping.low is not None:
        out.append(
            f"The best fit has no folds, but {share_text(frac)} of the bootstrap refits do; the intervals are over "
            "those."
        )
    return out


def _parameter_warnings(f: FitFacts) -> list[str]:
    out: list[str] = []
    for est, plain in zip(f.estimates, _PLAIN, strict=True):
        if est.at_bound:
            out.append(
                f"The fitted {plain} ({est.value:.4g} {est.unit}) is at the edge of its allowed range, so the "
                "data do not pin it down."
            )
        elif not est.identified:
            out.append(
                f"The record carries no information on the {plain} near its fitted value ({est.value:.4g} "
                f"{est.unit}); it has no standard error."
            )
    return out


def _residual_warnings(f: FitFacts) -> list[str]:
    out: list[str] = []
    diag = f.diagnostics
    if abs(diag.lag1_autocorrelation) > 2.0 / math.sqrt(diag.n):
        out.append(
            f"The residuals are autocorrelated (lag-1 {diag.lag1_autocorrelation:+.2f}): the model misses some "
            "year-to-year memory of the lake, so the intervals are likely too narrow."
        )
    if math.isfinite(diag.shapiro_p) and diag.shapiro_p < 0.01:
        out.append(
            f"The residuals depart from the lognormal error model (Shapiro–Wilk p = {diag.shapiro_p:.3f}); "
            "treat the intervals as rough."
        )
    if f.replicates < 500:
        out.append(
            f"Only {f.replicates} bootstrap replicates: the ends of the {f.level_text} intervals are rough; use 1000."
        )
    n_failed = f.replicates - f.replicates_used
    if n_failed > 0.01 * f.replicates:
        out.append(f"{n_failed} of {f.replicates} bootstrap refits did not converge and were left out.")
    return out


def fit_warnings(facts: FitFacts) -> tuple[str, ...]:
    """The plain-words caveats of a fit, most important first."""
    return tuple(_fold_warnings(facts) + _band_warnings(facts) + _parameter_warnings(facts) + _residual_warnings(facts))
