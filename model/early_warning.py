r"""Early-warning indicators of a coming transition in an annual lake series.

As a lake approaches a fold, recovery from year-to-year disturbances slows
("critical slowing down"), so the lake's variability and its memory from
one year to the next rise (Scheffer et al. 2009).  This module computes the
rolling-window indicators of Dakos et al. (2012) on a series with one value
per year:

1. **Detrending** (optional) by a Gaussian kernel smoother; the indicators
   are computed on the residuals ``y − smooth(y)``.

   ``bandwidth`` is in **years** (one year = one data point), defined as in
   R's ``ksmooth`` (used by the ``earlywarnings`` package of Dakos et al.):
   the kernel's quartiles lie at ±``bandwidth``/4, so the kernel standard
   deviation is ``σ = 0.25 · bandwidth / Φ⁻¹(0.75) ≈ 0.3707 · bandwidth``.
   The default is 20 % of the series length.  The kernel is cut at 4σ and
   the series is mirrored at its ends (``scipy.ndimage.gaussian_filter1d``
   with ``mode="reflect"``), the same as ewstools 2.1.3.  R's ``ksmooth``
   instead renormalises the kernel weights near the ends, so residuals
   within about 4σ of either end differ from the R package.
2. **Rolling windows** of ``window`` years (default: half the series
   length, rounded down), each indicator value assigned to the **last**
   year of its window; the first ``window − 1`` years have none.
3. **Indicators** in each window:

   * variance with ``ddof = 1`` (divisor ``n − 1``);
   * lag-1 autocorrelation as the Pearson correlation of ``(y₀…y_{n−2})``
     with ``(y₁…y_{n−1})``, each with its own mean (pandas' ``autocorr``,
     as in ewstools; R's ``acf`` uses one mean and divisor ``n`` and so
     gives slightly smaller values);
   * skewness, bias-corrected (adjusted Fisher–Pearson ``G₁``, as pandas
     and ewstools; ``earlywarnings`` reports the absolute value of the
     uncorrected ``g₁``).  The sign is kept here.

   These conventions are those of ewstools 2.1.3 (Bury), so its numbers
   and ours agree.
4. **Trend**: Kendall's τ (τ-b, ``scipy.stats.kendalltau``) of each
   indicator against the year.
5. **Significance** against ``n_surrogates`` surrogate series drawn from an
   AR(1) process fitted to the detrended series (same mean, variance and
   lag-1 autocorrelation, no approach to a threshold): the red-noise null
   model, a special case of the ARMA surrogates of Dakos et al. (2012).
   Each surrogate goes through the same windows and indicators, and the
   p-value is ``(1 + #{τ_surrogate ≥ τ_observed}) / (1 + n_surrogates)``.
   For variance and autocorrelation the test is one-sided (a *rise* is
   what a coming transition predicts); for skewness two-sided on ``|τ|``,
   because skewness can rise or fall before a transition depending on its
   direction (Guttal & Jayaprakash 2008, from memory).

A rising indicator is not a forecast: indicators can rise for other
reasons and can stay flat before a transition, and a few decades of
annual data give the tests little power (Dakos et al. 2012).

References
----------
Dakos, V., Carpenter, S. R., Brock, W. A., Ellison, A. M., Guttal, V.,
Ives, A. R., Kéfi, S., Livina, V., Seekell, D. A., van Nes, E. H. &
Scheffer, M. (2012). Methods for detecting early warnings of critical
transitions in time series illustrated using simulated ecological data.
PLoS ONE 7(7), e41010.

Scheffer, M., Bascompte, J., Brock, W. A., Brovkin, V., Carpenter, S. R.,
Dakos, V., Held, H., van Nes, E. H., Rietkerk, M. & Sugihara, G. (2009).
Early-warning signals for critical transitions. Nature 461, 53–59.

Guttal, V. & Jayaprakash, C. (2008). Changing skewness: an early warning
signal of regime shifts in ecosystems. Ecology Letters 11, 450–460.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view
from numpy.random import Generator
from numpy.typing import ArrayLike, NDArray
from scipy.ndimage import gaussian_filter1d
from scipy.stats import kendalltau, norm

__all__ = [
    "BANDWIDTH_TO_SIGMA",
    "MIN_LENGTH",
    "MIN_WINDOW",
    "EarlyWarning",
    "Indicator",
    "early_warning",
    "gaussian_detrend",
    "rolling_indicators",
]

IndicatorName = Literal["variance", "ac1", "skewness"]
INDICATORS: tuple[IndicatorName, ...] = ("variance", "ac1", "skewness")
_LABELS = {"variance": "variance", "ac1": "lag-1 autocorrelation", "skewness": "skewness"}
_ALTERNATIVE = {"variance": "increasing", "ac1": "increasing", "skewness": "two-sided"}

#: σ / bandwidth: kernel quartiles at ±bandwidth/4 (R's ksmooth, normal kernel).
BANDWIDTH_TO_SIGMA = 0.25 / float(norm.ppf(0.75))
#: Shortest series accepted [years].
MIN_LENGTH = 10
#: Shortest rolling window accepted [years].
MIN_WINDOW = 5
#: Fewest indicator values (windows) accepted for a trend.
MIN_WINDOWS = 5
#: τ below this in size is reported as "no clear trend" (common practice, no source).
FLAT_TAU = 0.1
#: p at or below this is reported as "unlikely to be chance" (common practice).
ALPHA = 0.05


# --------------------------------------------------------------------------
# pieces
# --------------------------------------------------------------------------
def gaussian_detrend(values: ArrayLike, bandwidth: float) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Gaussian kernel smooth of an evenly spaced series, and the residuals.

    Parameters
    ----------
    values : array_like
        One value per year, no gaps.
    bandwidth : float
        [years]; kernel quartiles at ±bandwidth/4, ``σ = 0.3707 · bandwidth``.

    Returns
    -------
    (smooth, residuals) : tuple of ndarray
    """
    y = np.asarray(values, dtype=float)
    bw = float(bandwidth)
    if not (math.isfinite(bw) and bw > 0.0):
        raise ValueError(f"bandwidth must be a finite number of years greater than 0; got {bandwidth!r}")
    smooth = gaussian_filter1d(y, sigma=BANDWIDTH_TO_SIGMA * bw, mode="reflect", truncate=4.0)
    return smooth, y - smooth


def _window_stats(
    y: NDArray[np.float64], window: int
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """Variance, lag-1 autocorrelation and skewness over trailing windows, along the last axis.

    ``y`` has shape ``(..., n)``; results have shape ``(..., n − window + 1)``,
    entry ``k`` for the window ending at index ``k + window − 1``.  A window
    without variation gives NaN for autocorrelation and skewness.
    """
    w = sliding_window_view(y, window, axis=-1)  # (..., m, window)
    mean = w.mean(axis=-1, keepdims=True)
    d = w - mean
    ss = np.sum(d * d, axis=-1)
    var = ss / (window - 1)
    scale = np.max(np.abs(w), axis=-1)
    flat = ss <= (1e-12 * np.maximum(scale, 1e-300)) ** 2 * window
    with np.errstate(invalid="ignore", divide="ignore"):
        # lag-1: Pearson correlation of the window without its last and without its first value
        a = w[..., :-1]
        b = w[..., 1:]
        da = a - a.mean(axis=-1, keepdims=True)
        db = b - b.mean(axis=-1, keepdims=True)
        den = np.sqrt(np.sum(da * da, axis=-1) * np.sum(db * db, axis=-1))
        ac1 = np.sum(da * db, axis=-1) / den
        ac1 = np.where(flat | (den == 0.0), np.nan, ac1)
        # adjusted Fisher-Pearson skewness G1 = sqrt(n(n-1))/(n-2) * m3 / m2^1.5
        n = float(window)
        m2 = ss / n
        m3 = np.sum(d * d * d, axis=-1) / n
        skew = math.sqrt(n * (n - 1.0)) / (n - 2.0) * m3 / m2**1.5
        skew = np.where(flat, np.nan, skew)
    var = np.where(flat, 0.0, var)
    return var, ac1, skew


def _kendall_tau_rows(y: NDArray[np.float64]) -> NDArray[np.float64]:
    """Kendall's τ-b of each row of ``y`` (no NaN) against its index.

    The index has no ties, so ``τ_b = S / sqrt(n₀ (n₀ − U))`` with ``S`` the
    sum of ``sign(y_j − y_i)`` over ``i < j``, ``n₀ = n(n−1)/2`` and ``U`` the
    number of tied pairs in ``y``; the same as ``scipy.stats.kendalltau``.
    """
    m = y.shape[-1]
    s = np.zeros(y.shape[:-1])
    ties = np.zeros(y.shape[:-1])
    for k in range(1, m):
        diff = y[..., k:] - y[..., :-k]
        s += np.sum(np.sign(diff), axis=-1)
        ties += np.sum(diff == 0.0, axis=-1)
    n0 = m * (m - 1) / 2.0
    with np.errstate(invalid="ignore", divide="ignore"):
        return s / np.sqrt(n0 * (n0 - ties))


def rolling_indicators(
    values: ArrayLike, window: int
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """Rolling variance, lag-1 autocorrelation and skewness of a series, full length.

    Entry ``t`` belongs to the window of ``window`` values ending at ``t``;
    the first ``window − 1`` entries are NaN.  No detrending is done here.
    """
    y = np.asarray(values, dtype=float)
    if y.ndim != 1:
        raise ValueError("values must be a one-dimensional series")
    window = _check_window(window, y.size)
    out = []
    for stat in _window_stats(y, window):
        full = np.full(y.size, np.nan)
        full[window - 1 :] = stat
        out.append(full)
    return out[0], out[1], out[2]


def _check_window(window: object, n: int) -> int:
    if isinstance(window, bool) or not isinstance(window, int | np.integer):
        if isinstance(window, float) and window.is_integer():
            window = int(window)
        else:
            raise ValueError(f"window must be a whole number of years; got {window!r}")
    w = int(window)
    hi = n - MIN_WINDOWS + 1
    if w < MIN_WINDOW or w > hi:
        raise ValueError(
            f"window must be between {MIN_WINDOW} and {hi} years for a series of {n} years "
            f"(at least {MIN_WINDOWS} windows are needed for a trend); got {w}"
        )
    return w


# --------------------------------------------------------------------------
# result
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class Indicator:
    """One early-warning indicator.

    Attributes
    ----------
    name : {"variance", "ac1", "skewness"}
    values : ndarray
        Indicator by year, NaN for the first ``window − 1`` years (and for a
        window without variation).
    tau : float
        Kendall's τ-b against the year (NaN when fewer than 3 values).
    p_value : float
        Surrogate p-value (NaN when ``n_surrogates = 0``).
    alternative : {"increasing", "two-sided"}
        The direction tested.
    summary : str
        e.g. ``"variance rising, τ = 0.60, unlikely to be chance (p = 0.03)"``.
    """

    name: IndicatorName
    values: NDArray[np.float64]
    tau: float
    p_value: float
    alternative: Literal["increasing", "two-sided"]
    summary: str


@dataclass(frozen=True)
class EarlyWarning:
    """Early-warning indicators of an annual series (Dakos et al. 2012).

    Attributes
    ----------
    years : ndarray
        The year of each value (0, 1, … when none were given).
    values : ndarray
        The series as given.
    smooth, residuals : ndarray
        The Gaussian trend and ``values − smooth`` (``smooth`` is all zero and
        ``residuals`` equal ``values`` without detrending).
    window : int
        Rolling window [years].
    bandwidth : float or None
        Gaussian bandwidth [years], ``None`` without detrending.
    n_surrogates : int
    variance, ac1, skewness : Indicator
    notes : tuple of str
        Caveats for a reader.
    """

    years: NDArray[np.float64]
    values: NDArray[np.float64]
    smooth: NDArray[np.float64]
    residuals: NDArray[np.float64]
    window: int
    bandwidth: float | None
    n_surrogates: int
    variance: Indicator
    ac1: Indicator
    skewness: Indicator
    notes: tuple[str, ...]

    @property
    def indicators(self) -> tuple[Indicator, Indicator, Indicator]:
        return (self.variance, self.ac1, self.skewness)

    @property
    def summary(self) -> str:
        """One line per indicator, then the notes."""
        return "\n".join([*(i.summary for i in self.indicators), *self.notes])


def _summary(name: IndicatorName, tau: float, p: float, alternative: str) -> str:
    label = _LABELS[name]
    if not math.isfinite(tau):
        return f"{label}: no trend can be computed (too few windows with variation)"
    if tau >= FLAT_TAU:
        trend = "rising"
    elif tau <= -FLAT_TAU:
        trend = "falling"
    else:
        trend = "no clear trend"
    text = f"{label} {trend}, τ = {tau:.2f}"
    if not math.isfinite(p):
        return text
    p_txt = f"p = {p:.2g}" if p >= 0.001 else "p < 0.001"
    if alternative == "increasing" and tau < FLAT_TAU:
        return f"{text}; not the rise expected before a tipping point ({p_txt})"
    verdict = "unlikely to be chance" if p <= ALPHA else "could well be chance"
    return f"{text}, {verdict} ({p_txt})"


# --------------------------------------------------------------------------
# main entry
# --------------------------------------------------------------------------
def _check_series(values: ArrayLike, years: ArrayLike | None) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    try:
        y = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise ValueError("the series must be numbers, one per year") from None
    if y.ndim != 1:
        raise ValueError(f"the series must be one-dimensional (one value per year); got shape {y.shape}")
    if y.size < MIN_LENGTH:
        raise ValueError(f"early-warning indicators need at least {MIN_LENGTH} yearly values; got {y.size}")
    bad = ~np.isfinite(y)
    if np.any(bad):
        where = ", ".join(str(int(i)) for i in np.flatnonzero(bad)[:5])
        raise ValueError(
            f"the series has missing or non-finite values (at positions {where}); the indicators need one value "
            "per year with no gaps: fill the gaps or use an unbroken stretch of years"
        )
    if np.ptp(y) <= 1e-12 * max(float(np.max(np.abs(y))), 1e-300):
        raise ValueError("the series is constant: it has no variation to compute indicators from")
    if years is None:
        t = np.arange(y.size, dtype=float)
    else:
        try:
            t = np.asarray(years, dtype=float)
        except (TypeError, ValueError):
            raise ValueError("years must be numbers") from None
        if t.shape != y.shape:
            raise ValueError(f"years has {t.size} entries but the series has {y.size}")
        if not np.all(np.isfinite(t)):
            raise ValueError("years must be finite numbers")
        steps = np.diff(t)
        if not np.allclose(steps, 1.0, rtol=0.0, atol=1e-9):
            i = int(np.flatnonzero(~np.isclose(steps, 1.0, rtol=0.0, atol=1e-9))[0])
            raise ValueError(
                f"years must be consecutive (one value per year, no gaps); {t[i]:g} is followed by {t[i + 1]:g}"
            )
    return y, t


def _fit_ar1(x: NDArray[np.float64]) -> tuple[float, float, float]:
    """Mean, lag-1 coefficient and stationary standard deviation of an AR(1) fit (Yule–Walker)."""
    mu = float(np.mean(x))
    d = x - mu
    c0 = float(np.dot(d, d))
    phi = float(np.dot(d[:-1], d[1:]) / c0) if c0 > 0.0 else 0.0
    phi = min(max(phi, -0.99), 0.99)
    sd = math.sqrt(c0 / (x.size - 1))
    return mu, phi, sd


def _ar1_surrogates(x: NDArray[np.float64], n_surrogates: int, rng: Generator) -> NDArray[np.float64]:
    """``n_surrogates`` AR(1) series with the mean, variance and lag-1 autocorrelation of ``x``."""
    mu, phi, sd = _fit_ar1(x)
    n = x.size
    eps = rng.standard_normal((n_surrogates, n))
    out = np.empty((n_surrogates, n))
    out[:, 0] = eps[:, 0]
    innov = math.sqrt(1.0 - phi * phi)
    for t in range(1, n):
        out[:, t] = phi * out[:, t - 1] + innov * eps[:, t]
    return mu + sd * out


def early_warning(
    values: ArrayLike,
    years: ArrayLike | None = None,
    *,
    window: int | None = None,
    detrend: bool = True,
    bandwidth: float | None = None,
    n_surrogates: int = 1000,
    rng: Generator | int | None = None,
) -> EarlyWarning:
    """Rolling variance, lag-1 autocorrelation and skewness with trends and surrogate p-values.

    Methods of Dakos et al. (2012); see the module docstring for every
    convention (bandwidth definition, window alignment, estimators, null
    model).

    Parameters
    ----------
    values : array_like
        One value per year, oldest first, no gaps or NaN (e.g. summer mean
        TP [µg L⁻¹], or lake P [kg] from a scenario).
    years : array_like, optional
        The year of each value; must be consecutive.
    window : int, optional
        Rolling window [years]; default half the series length, rounded down.
    detrend : bool
        Remove a Gaussian kernel trend first (default True).
    bandwidth : float, optional
        Gaussian bandwidth [years], kernel quartiles at ±bandwidth/4; default
        20 % of the series length.  Ignored without detrending.
    n_surrogates : int
        AR(1) surrogates for the p-values; 0 skips the test (p = NaN).
    rng : numpy.random.Generator, int or None
        Random source for the surrogates.

    Raises
    ------
    ValueError
        For a series shorter than 10 years, with gaps or NaN, constant, or
        with no variation left after detrending; for a bad window, bandwidth
        or number of surrogates.
    """
    y, t = _check_series(values, years)
    n = y.size
    w = _check_window(n // 2 if window is None else window, n)
    if isinstance(n_surrogates, bool) or not isinstance(n_surrogates, int | np.integer) or n_surrogates < 0:
        raise ValueError(f"n_surrogates must be a whole number >= 0; got {n_surrogates!r}")
    n_surr = int(n_surrogates)
    if n_surr > 100_000:
        raise ValueError("n_surrogates must be at most 100000")
    gen = rng if isinstance(rng, Generator) else np.random.default_rng(rng)

    if detrend:
        bw = 0.2 * n if bandwidth is None else float(bandwidth)
        if not (math.isfinite(bw) and bw > 0.0):
            raise ValueError(f"bandwidth must be a finite number of years greater than 0; got {bandwidth!r}")
        smooth, resid = gaussian_detrend(y, bw)
        if np.ptp(resid) <= 1e-9 * max(float(np.ptp(y)), 1e-300):
            raise ValueError(
                f"no variation is left after detrending with a bandwidth of {bw:g} years; use a wider bandwidth "
                "or no detrending"
            )
        bw_out: float | None = bw
    else:
        smooth, resid, bw_out = np.zeros(n), y.copy(), None

    stats = _window_stats(resid, w)
    t_end = t[w - 1 :]
    taus: list[float] = []
    for s in stats:
        ok = np.isfinite(s)
        if np.count_nonzero(ok) < 3:
            taus.append(math.nan)
            continue
        taus.append(float(kendalltau(t_end[ok], s[ok]).statistic))

    pvals = [math.nan] * 3
    if n_surr > 0:
        exceed = np.zeros(3)
        chunk = max(1, int(2_000_000 // max(1, (n - w + 1) * w)))
        done = 0
        while done < n_surr:
            k = min(chunk, n_surr - done)
            surr = _ar1_surrogates(resid, k, gen)
            for j, (name, s_stat) in enumerate(zip(INDICATORS, _window_stats(surr, w), strict=True)):
                if not math.isfinite(taus[j]):
                    continue
                tau_s = _kendall_tau_rows(s_stat)
                if _ALTERNATIVE[name] == "increasing":
                    hit = tau_s >= taus[j] - 1e-12
                else:
                    hit = np.abs(tau_s) >= abs(taus[j]) - 1e-12
                exceed[j] += np.count_nonzero(hit & np.isfinite(tau_s))
            done += k
        pvals = [float((1.0 + exceed[j]) / (1.0 + n_surr)) if math.isfinite(taus[j]) else math.nan for j in range(3)]

    inds = []
    for j, name in enumerate(INDICATORS):
        full = np.full(n, np.nan)
        full[w - 1 :] = stats[j]
        alt = _ALTERNATIVE[name]
        inds.append(
            Indicator(
                name=name,
                values=full,
                tau=taus[j],
                p_value=pvals[j],
                alternative=alt,  # type: ignore[arg-type]
                summary=_summary(name, taus[j], pvals[j], alt),
            )
        )

    notes = [
        "Rising indicators are a warning sign, not a forecast: they can rise for other reasons and can stay "
        "flat before a shift (Dakos et al. 2012)."
    ]
    if n < 30:
        notes.append(f"With only {n} years of data the trend tests have little power.")
    return EarlyWarning(
        years=t,
        values=y,
        smooth=smooth,
        residuals=resid,
        window=w,
        bandwidth=bw_out,
        n_surrogates=n_surr,
        variance=inds[0],
        ac1=inds[1],
        skewness=inds[2],
        notes=tuple(notes),
    )
