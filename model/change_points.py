r"""Change points in the mean of a series: PELT with a normal mean-shift cost.

Method
------
The series ``x_1 … x_n`` is split into segments ``x_{τ_{i}+1 … τ_{i+1}}``
with ``0 = τ_0 < τ_1 < … < τ_k < τ_{k+1} = n`` that minimise

.. math:: \sum_{i=0}^{k} C(x_{τ_i+1 … τ_{i+1}}) + β k,
          \qquad C(x_{a … b}) = \frac{1}{σ^2} \sum_{t=a}^{b} (x_t - \bar x_{a … b})^2,

the normal mean-shift cost: twice the negative log-likelihood of a
segment of independent normal values with its own mean and a common,
known standard deviation ``σ`` (up to a constant).  The minimum is found
exactly by PELT, "pruned exact linear time" (Killick, Fearnhead & Eckley
2012): optimal partitioning (Jackson et al. 2005),
``F(t) = min_τ [F(τ) + C(x_{τ+1 … t}) + β]``, where a candidate last change
``τ`` is dropped for good once ``F(τ) + C(x_{τ+1 … t}) > F(t)``; for this
cost the constant ``K`` of their pruning condition is 0, because splitting a
segment never raises its cost.  Every segment has at least ``min_size``
values; with a minimum size, a candidate found prunable at ``t`` is dropped
only at ``t + min_size``, the first time ``t`` itself can be a last change,
so the result is still the exact optimum.

Defaults
--------
* ``σ`` is estimated robustly from the first differences,
  ``σ̂ = MAD(Δx) / (√2 · Φ⁻¹(3/4))`` (a mean shift moves only one
  difference; the median absolute deviation ignores it), as the
  ``changepoint`` R package of Killick & Eckley (2014) does for its normal
  mean cost (from memory).
* ``β = 3 ln n`` per change point: the modified BIC of Zhang & Siegmund
  (2007) for a change in mean (one mean and one location per change),
  the default penalty of the ``changepoint`` package (from memory).

Year-to-year memory in a lake series makes the within-segment scatter
larger than ``σ̂`` suggests, so a record with a trend splits into more
segments than it has states; :mod:`turnback.model.stretches` groups the
segments into two levels afterwards.

References
----------
Killick, R., Fearnhead, P. & Eckley, I. A. (2012). Optimal detection of
changepoints with a linear computational cost. Journal of the American
Statistical Association 107(500), 1590–1598.

Jackson, B., Scargle, J. D., Barnes, D., Arabhi, S., Alt, A., Gioumousis,
P., Gwin, E., Sangtrakulcharoen, P., Tan, L. & Tsai, T. T. (2005). An
algorithm for optimal partitioning of data on an interval. IEEE Signal
Processing Letters 12(2), 105–108.

Zhang, N. R. & Siegmund, D. O. (2007). A modified Bayes information
criterion with applications to the analysis of comparative genomic
hybridization data. Biometrics 63(1), 22–32.

Killick, R. & Eckley, I. A. (2014). changepoint: an R package for
changepoint analysis. Journal of Statistical Software 58(3), 1–19.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.stats import norm

__all__ = ["ChangePoints", "mad_sd_from_differences", "mbic_penalty", "pelt_mean_shift", "segment_cost"]

#: MAD of a standard normal: Φ⁻¹(3/4).
_MAD_NORMAL = float(norm.ppf(0.75))


def mad_sd_from_differences(x: ArrayLike) -> float:
    """Robust noise standard deviation from first differences.

    ``σ̂ = median(|Δx − median(Δx)|) / (√2 · Φ⁻¹(3/4))``: for independent
    normal noise of standard deviation ``σ`` the differences have standard
    deviation ``σ√2``, and a few mean shifts hardly move the median.

    Returns 0 for a series whose differences are mostly equal.
    """
    d = np.diff(np.asarray(x, dtype=float))
    if d.size == 0:
        return 0.0
    mad = float(np.median(np.abs(d - np.median(d))))
    return mad / (math.sqrt(2.0) * _MAD_NORMAL)


def mbic_penalty(n: int) -> float:
    """Penalty per change point ``β = 3 ln n`` (modified BIC, Zhang & Siegmund 2007)."""
    return 3.0 * math.log(max(int(n), 2))


def segment_cost(x: ArrayLike, sd: float) -> float:
    """Normal mean-shift cost ``Σ (x − x̄)² / σ²`` of one segment."""
    a = np.asarray(x, dtype=float)
    return float(np.sum((a - a.mean()) ** 2) / (sd * sd))


@dataclass(frozen=True)
class ChangePoints:
    """Result of :func:`pelt_mean_shift`.

    Attributes
    ----------
    ends : tuple of int
        Segment ends (exclusive), ascending; the last is ``n``.  Segment
        ``i`` covers indices ``ends[i-1] … ends[i] − 1`` (``ends[-1]`` of
        nothing is 0).
    change_points : tuple of int
        Index of the first value of each new segment (``ends[:-1]``).
    means : tuple of float
        Mean of each segment.
    sd : float
        Noise standard deviation used in the cost.
    penalty : float
        ``β`` per change point.
    min_size : int
        Fewest values in a segment.
    cost : float
        Total penalised cost ``Σ C + β k`` at the optimum.
    candidates_evaluated : int
        Cost evaluations made (PELT's pruning keeps this near-linear in n).
    """

    ends: tuple[int, ...]
    change_points: tuple[int, ...]
    means: tuple[float, ...]
    sd: float
    penalty: float
    min_size: int
    cost: float
    candidates_evaluated: int

    @property
    def starts(self) -> tuple[int, ...]:
        return (0, *self.change_points)


def pelt_mean_shift(
    x: ArrayLike,
    *,
    penalty: float | None = None,
    sd: float | None = None,
    min_size: int = 2,
) -> ChangePoints:
    """Exact optimal segmentation of ``x`` into mean shifts by PELT (Killick et al. 2012).

    Parameters
    ----------
    x : array_like, shape (n,)
        The series (e.g. ln TP, one value a year), finite.
    penalty : float, optional
        ``β`` per change point; default ``3 ln n`` (:func:`mbic_penalty`).
    sd : float, optional
        Noise standard deviation ``σ`` in the cost; default
        :func:`mad_sd_from_differences` (or, when that is zero, the
        standard deviation of the differences over √2).
    min_size : int
        Fewest values in a segment, at least 1.

    Returns
    -------
    ChangePoints

    Raises
    ------
    ValueError
        For a non-finite or too short series, or a bad penalty, sd or size.
    """
    y = np.asarray(x, dtype=float)
    if y.ndim != 1 or y.size == 0:
        raise ValueError("the series must be one-dimensional and not empty")
    if not np.all(np.isfinite(y)):
        raise ValueError("the series must be finite numbers (no gaps or NaN)")
    n = y.size
    h = int(min_size)
    if h < 1:
        raise ValueError(f"min_size must be at least 1; got {min_size!r}")
    beta = mbic_penalty(n) if penalty is None else float(penalty)
    if not (math.isfinite(beta) and beta >= 0.0):
        raise ValueError(f"penalty must be a finite number >= 0; got {penalty!r}")
    if sd is None:
        sig = mad_sd_from_differences(y)
        if not sig > 0.0 and n > 2:
            sig = float(np.std(np.diff(y), ddof=1)) / math.sqrt(2.0)
    else:
        sig = float(sd)
    if not (math.isfinite(sig) and sig > 0.0):
        if sd is not None:
            raise ValueError(f"sd must be a finite number > 0; got {sd!r}")
        sig = 1.0  # a constant series: any positive scale gives one segment
    if n < h:
        raise ValueError(f"the series has {n} values, fewer than the minimum segment size {h}")

    # cumulative sums: cost of x[a:b] = (S2[b]-S2[a] - (S1[b]-S1[a])^2/(b-a)) / sd^2
    yc = y - y.mean()  # centred for accuracy
    s1 = np.concatenate([[0.0], np.cumsum(yc)])
    s2 = np.concatenate([[0.0], np.cumsum(yc * yc)])
    inv_var = 1.0 / (sig * sig)

    def cost(a: NDArray[np.int64], b: int) -> NDArray[np.float64]:
        length = b - a
        c = (s2[b] - s2[a]) - (s1[b] - s1[a]) ** 2 / length
        return np.maximum(c, 0.0) * inv_var

    f = np.full(n + 1, np.inf)
    f[0] = -beta
    last = np.zeros(n + 1, dtype=np.int64)
    cands = np.array([0], dtype=np.int64)  # candidate last change points (segment starts)
    pending: dict[int, NDArray[np.int64]] = {}  # time -> candidates to drop then
    evaluated = 0
    for t in range(h, n + 1):
        if t - h >= h:  # t - h can end a segment (F finite) and start one of h values ending at t
            cands = np.append(cands, t - h)
        drop = pending.pop(t, None)
        if drop is not None and drop.size:
            cands = np.setdiff1d(cands, drop, assume_unique=True)
        ok = cands[(t - cands >= h) & np.isfinite(f[cands])]
        if ok.size == 0:
            continue
        vals = f[ok] + cost(ok, t) + beta
        evaluated += ok.size
        k = int(np.argmin(vals))
        f[t] = float(vals[k])
        last[t] = int(ok[k])
        # pruning (K = 0): F(tau) + C(tau+1..t) > F(t) can never be the best last change after t + h
        prune = ok[(vals - beta) > f[t]]
        if prune.size:
            pending[t + h] = np.union1d(pending.get(t + h, np.empty(0, dtype=np.int64)), prune)
    if not math.isfinite(f[n]):
        raise ValueError(f"no segmentation with segments of at least {h} values exists for {n} values")
    ends = [n]
    t = n
    while t > 0:
        t = int(last[t])
        if t > 0:
            ends.append(t)
    ends.reverse()
    starts = [0, *ends[:-1]]
    means = tuple(float(np.mean(y[a:b])) for a, b in zip(starts, ends, strict=True))
    return ChangePoints(
        ends=tuple(ends),
        change_points=tuple(ends[:-1]),
        means=means,
        sd=sig,
        penalty=beta,
        min_size=h,
        cost=float(f[n]),
        candidates_evaluated=evaluated,
    )
