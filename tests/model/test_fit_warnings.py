"""The fit's plain-words caveats agree with the numbers beside them (model.fit_warnings)."""

from __future__ import annotations

from dataclasses import replace

from turnback.model.fit_warnings import FitFacts, fit_warnings, share_text
from turnback.model.fold_bands import RegimeProbability, ThresholdBand
from turnback.model.point_fit import ParameterEstimate, ResidualDiagnostics


def band(name: str, low: float | None = None, high: float | None = None, frac: float = 0.0) -> ThresholdBand:
    return ThresholdBand(name, None, None, low, high, 0.9, frac, False, False, (-1000.0, 2500.0))  # type: ignore[arg-type]


def facts(n_with_folds: int, probs: RegimeProbability | None) -> FitFacts:
    est = tuple(ParameterEstimate(n, 1.0, 0.1, "", False) for n in ("s", "r", "m", "q"))
    return FitFacts(
        has_folds=False,
        n_with_folds=n_with_folds,
        side="clear",
        internal_share=0.1,
        tipping=band("tipping_load", frac=n_with_folds / 1000),
        recovery=band("recovery_load", frac=n_with_folds / 1000),
        plausible=(-1000.0, 2500.0),
        estimates=est,
        diagnostics=ResidualDiagnostics(n=20, sd=0.1, lag1_autocorrelation=0.0, shapiro_w=0.98, shapiro_p=0.5),
        replicates=1000,
        replicates_used=1000,
        min_fold_replicates=20,
        regime_probability=probs,
    )


def test_no_folds_anywhere_says_so() -> None:
    text = " ".join(fit_warnings(facts(0, RegimeProbability(1.0, 0.0, 0.0))))
    assert "Neither the fit nor any of its bootstrap refits show folds" in text


def test_a_few_refits_with_folds_are_never_called_none() -> None:
    # one refit in a thousand is hysteretic: the probability beside the words reads 0.1 %
    text = " ".join(fit_warnings(facts(1, RegimeProbability(0.999, 0.001, 0.0))))
    assert "Neither" not in text
    assert "only 1 of 1000 bootstrap refits (under 1%) do" in text


def test_the_share_comes_from_the_probabilities_when_given() -> None:
    f = facts(5, RegimeProbability(0.99, 0.004, 0.006))
    assert f.fold_share == 0.004 + 0.006
    assert "(1%)" in " ".join(fit_warnings(f))
    assert replace(f, regime_probability=None).fold_share == 5 / 1000


def test_share_text_never_rounds_to_an_end() -> None:
    assert share_text(0.001) == "under 1%"
    assert share_text(0.0) == "0%"
    assert share_text(0.999) == "over 99%"
    assert share_text(1.0) == "100%"
    assert share_text(0.42) == "42%"
