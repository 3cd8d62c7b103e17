r"""From individual water samples to annual means with standard errors.

Monitoring programmes send samples, not annual means: several a year, at one
or more sites and depths, some below the detection limit.  This module turns
checked samples (read by :mod:`turnback.model.io.sample_csv`) into the
annual record the fit needs, and keeps what the scatter says about how well
each year is known.  The rules (each can be changed through
:class:`SampleRules`):

1. **Growing season.**  Only samples taken in months ``season[0]`` …
   ``season[1]`` (default May–October) count; the others are left out and
   counted in a note.  Optionally samples deeper than ``max_depth_m`` [m]
   are left out too (default: every depth counts).
2. **Below the detection limit.**  A value written ``<X`` counts as ``X/2``
   by default (``censored="half"``), as ``X`` (``"limit"``, an upper bound
   on the mean) or as 0 (``"zero"``, a lower bound); a warning counts them.
   Substituting a fraction of the limit is the simple rule Helsel (2012)
   describes and warns about: it biases means little when few values are
   censored and variances more (from memory, not checked against the text).
3. **One value per visit.**  Samples at one site on one date (a depth
   profile) are averaged first, so a profile does not weigh more than a
   surface sample.
4. **Mean of site means.**  A year's value is the mean over sites of each
   site's mean over its visits, so a site visited more often does not weigh
   more.
5. **Standard error from the within-year scatter.**  With ``k`` sites,
   site means ``m_s`` from ``n_s`` visits with sample variance ``v_s``:
   ``SE² = Σ_s v_s / n_s / k²``.  A site with a single visit that year takes
   the record's pooled relative variance, ``v_s = c² m_s²`` with
   ``c² = Σ (n−1) v/m² / Σ (n−1)`` over every site-year with two or more
   visits (a pooled coefficient of variation).
6. **Few samples.**  A year with fewer than ``min_samples`` visits (default
   4) is flagged; its standard error is the larger of its own and the pooled
   one (``c · sqrt(Σ_s m_s²/n_s) / k``), times ``sqrt(min_samples / n)``.  The
   factor stands for what a few visits cannot show (a season sampled only in
   one month); it is a stated convention, not a derived correction.

The standard error on the log scale, which the observation-error fit uses,
is ``SE / mean`` (delta method).

References
----------
Helsel, D. R. (2012). Statistics for Censored Environmental Data Using
Minitab and R, 2nd ed. Wiley, Hoboken.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Literal

import numpy as np
from numpy.typing import NDArray

from .validation import FieldError

__all__ = [
    "CENSORED_RULES",
    "DEFAULT_MIN_SAMPLES",
    "DEFAULT_SEASON",
    "AnnualMeans",
    "SampleRules",
    "SampleSet",
    "annual_means",
    "substitute_censored",
]

CensoredRule = Literal["half", "limit", "zero"]
CENSORED_RULES: tuple[CensoredRule, ...] = ("half", "limit", "zero")
DEFAULT_SEASON = (5, 10)
DEFAULT_MIN_SAMPLES = 4
_MONTHS = ("", "January", "February", "March", "April", "May", "June", "July", "August", "September", "October",
           "November", "December")  # fmt: skip
_CENSORED_WORDS = {"half": "half the limit", "limit": "the limit itself", "zero": "zero"}


@dataclass(frozen=True)
class SampleRules:
    """How samples become annual means (module docstring).

    Parameters
    ----------
    season : tuple of int
        First and last month of the growing season, 1 … 12, first <= last.
    censored : {"half", "limit", "zero"}
        What a value below the detection limit counts as.
    min_samples : int
        Visits a year needs not to be flagged, >= 1.
    max_depth_m : float or None
        Deepest sample that counts [m]; None: every depth.
    """

    season: tuple[int, int] = DEFAULT_SEASON
    censored: CensoredRule = "half"
    min_samples: int = DEFAULT_MIN_SAMPLES
    max_depth_m: float | None = None

    def __post_init__(self) -> None:
        a, b = self.season
        if not (isinstance(a, int) and isinstance(b, int) and 1 <= a <= b <= 12):
            raise FieldError(("season",), f"must be two months 1–12, first <= last; got {self.season}")
        if self.censored not in CENSORED_RULES:
            raise FieldError(("censored",), f"must be one of {', '.join(CENSORED_RULES)}; got {self.censored!r}")
        if not isinstance(self.min_samples, int) or not 1 <= self.min_samples <= 366:
            raise FieldError(("min_samples",), f"must be a whole number 1–366; got {self.min_samples!r}")
        if self.max_depth_m is not None and not (math.isfinite(self.max_depth_m) and self.max_depth_m >= 0.0):
            raise FieldError(("max_depth_m",), f"must be a depth >= 0 [m]; got {self.max_depth_m!r}")

    def describe(self) -> str:
        a, b = self.season
        depth = "" if self.max_depth_m is None else f", samples no deeper than {self.max_depth_m:g} m"
        return (
            f"growing season {_MONTHS[a]}–{_MONTHS[b]}{depth}; values below the detection limit count as "
            f"{_CENSORED_WORDS[self.censored]}; annual value = mean of site means; a year with fewer than "
            f"{self.min_samples} samples is flagged and its standard error widened"
        )


@dataclass(frozen=True, eq=False)
class SampleSet:
    """Checked samples, one entry each.

    Attributes
    ----------
    year, month, day_number : ndarray of int
        Calendar year, month (1–12) and a day number (days since 1970-01-01) of each sample.
    value_ug_l : ndarray
        The TP value [µg L⁻¹]; for a censored sample, its detection limit.
    censored : ndarray of bool
        Whether the value was written ``<X`` (below the detection limit ``X``).
    site : tuple of str
        Site name of each sample (``""`` when the file has no site column).
    depth_m : ndarray
        Sample depth [m]; ``nan`` when not given.
    lines : ndarray of int
        File line of each sample, for messages.
    """

    year: NDArray[np.int64]
    month: NDArray[np.int64]
    day_number: NDArray[np.int64]
    value_ug_l: NDArray[np.float64]
    censored: NDArray[np.bool_]
    site: tuple[str, ...]
    depth_m: NDArray[np.float64]
    lines: NDArray[np.int64]

    def __post_init__(self) -> None:
        n = len(self.site)
        for name in ("year", "month", "day_number", "value_ug_l", "censored", "depth_m", "lines"):
            arr = np.asarray(getattr(self, name))
            if arr.shape != (n,):
                raise FieldError((name,), f"must have one entry per sample ({n}); got shape {arr.shape}")
            arr = arr.copy()
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)

    @property
    def n(self) -> int:
        return len(self.site)


@dataclass(frozen=True, eq=False)
class AnnualMeans:
    """Annual means of TP with their standard errors, one entry per sampled year (ascending).

    Attributes
    ----------
    years : ndarray of int
    tp_ug_l : ndarray
        Mean of site means [µg L⁻¹].
    se_ug_l : ndarray
        Standard error of that mean [µg L⁻¹] (rules 5–6).
    n_samples : ndarray of int
        Visits (site-dates) that year.
    n_sites : ndarray of int
    few_samples : ndarray of bool
        Fewer than ``min_samples`` visits (rule 6).
    n_censored : ndarray of int
        Samples below the detection limit that year.
    first_line : ndarray of int
        File line of the year's first counted sample.
    pooled_cv : float
        Pooled within-site coefficient of variation ``c`` [–].
    notes : tuple of str
        What was left out, and the rules, in plain words.
    warnings : tuple of str
        Censored values counted, flagged years, years wholly censored.
    """

    years: NDArray[np.int64]
    tp_ug_l: NDArray[np.float64]
    se_ug_l: NDArray[np.float64]
    n_samples: NDArray[np.int64]
    n_sites: NDArray[np.int64]
    few_samples: NDArray[np.bool_]
    n_censored: NDArray[np.int64]
    first_line: NDArray[np.int64]
    pooled_cv: float
    notes: tuple[str, ...] = field(default=())
    warnings: tuple[str, ...] = field(default=())

    @property
    def se_log(self) -> NDArray[np.float64]:
        """Standard error of the log annual mean, ``SE / mean`` [–] (delta method)."""
        out: NDArray[np.float64] = self.se_ug_l / self.tp_ug_l
        return out


def substitute_censored(
    value: NDArray[np.float64], censored: NDArray[np.bool_], rule: CensoredRule
) -> NDArray[np.float64]:
    """Values with each censored one replaced by ``X/2``, ``X`` or 0 (``X`` its detection limit) [µg L⁻¹]."""
    factor = {"half": 0.5, "limit": 1.0, "zero": 0.0}[rule]
    out: NDArray[np.float64] = np.where(censored, factor * value, value)
    return out


def annual_means(samples: SampleSet, rules: SampleRules | None = None) -> AnnualMeans:
    """Annual means of TP with standard errors from individual samples (rules in the module docstring).

    Parameters
    ----------
    samples : SampleSet
    rules : SampleRules, optional

    Returns
    -------
    AnnualMeans

    Raises
    ------
    FieldError
        When nothing is left in the growing season, every value counted is
        below its detection limit, or no site is visited twice in any year
        (so the within-year scatter cannot be estimated).
    """
    rules = rules or SampleRules()
    a, b = rules.season
    keep = (samples.month >= a) & (samples.month <= b)
    notes: list[str] = []
    n_out_season = int(np.sum(~keep))
    if n_out_season:
        notes.append(f"{n_out_season} samples outside the growing season ({_MONTHS[a]}–{_MONTHS[b]}) were left out")
    if rules.max_depth_m is not None:
        deep = keep & np.isfinite(samples.depth_m) & (samples.depth_m > rules.max_depth_m)
        if deep.any():
            notes.append(f"{int(deep.sum())} samples deeper than {rules.max_depth_m:g} m were left out")
        keep &= ~deep
    if not keep.any():
        raise FieldError(
            ("date",),
            f"no sample falls in the growing season ({_MONTHS[a]}–{_MONTHS[b]}); check the dates or change the season",
        )
    idx = np.flatnonzero(keep)
    cens = samples.censored[idx]
    if cens.all():
        raise FieldError(
            ("tp",),
            "every value in the growing season is below its detection limit (written '<X'); such a record shows "
            "no level to fit — give the measured values, or a method with a lower detection limit",
        )
    values = substitute_censored(samples.value_ug_l[idx], cens, rules.censored)
    years = samples.year[idx]
    sites_all = np.asarray(samples.site, dtype=object)[idx]
    site_names, site_id = np.unique(sites_all.astype(str), return_inverse=True)
    n_site = site_names.size
    day = samples.day_number[idx]
    # rule 3: one value per visit (site, date)
    visit_key = site_id.astype(np.int64) * 1_000_000 + (day - int(day.min()))
    visits, first_of_visit, visit_inv = np.unique(visit_key, return_index=True, return_inverse=True)
    visit_value = np.bincount(visit_inv, weights=values) / np.bincount(visit_inv)
    visit_site = visits // 1_000_000
    visit_year = years[first_of_visit]
    # rule 4: site means per year
    sy_key = (visit_year - 1000) * (n_site + 1) + visit_site
    sy, inv = np.unique(sy_key, return_inverse=True)
    n_sy = np.bincount(inv)
    mean_sy = np.bincount(inv, weights=visit_value) / n_sy
    dev2 = np.bincount(inv, weights=(visit_value - mean_sy[inv]) ** 2)
    with np.errstate(divide="ignore", invalid="ignore"):
        var_sy = np.where(n_sy >= 2, dev2 / np.maximum(n_sy - 1, 1), np.nan)
    year_sy = sy // (n_site + 1) + 1000
    multi = n_sy >= 2
    if not multi.any():
        raise FieldError(
            ("date",),
            "no site is sampled twice within any growing season, so the within-year scatter that gives each annual "
            "mean its standard error cannot be estimated; with one value a year, give the annual means in the "
            "annual format (year,load_kg,tp_ug_l)",
        )
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = np.where(multi & (mean_sy > 0), var_sy / mean_sy**2, 0.0)
    c2 = float(np.sum((n_sy[multi] - 1) * rel[multi]) / np.sum(n_sy[multi] - 1))
    uy, yinv = np.unique(year_sy, return_inverse=True)
    k = np.bincount(yinv)
    tp = np.bincount(yinv, weights=mean_sy) / k
    own_var = np.where(multi, var_sy, c2 * mean_sy**2) / n_sy
    own_se = np.sqrt(np.bincount(yinv, weights=own_var)) / k
    pooled_se = np.sqrt(np.bincount(yinv, weights=c2 * mean_sy**2 / n_sy)) / k
    n_visits = np.bincount(yinv, weights=n_sy).astype(np.int64)
    few = n_visits < rules.min_samples
    widen = np.sqrt(rules.min_samples / np.maximum(n_visits, 1))
    se = np.where(few, np.maximum(own_se, pooled_se) * widen, own_se)
    zero = (se <= 0.0) & (pooled_se > 0.0)
    se = np.where(zero, pooled_se, se)
    # counts per year of the samples counted
    n_cens = np.zeros(uy.size, dtype=np.int64)
    first = np.zeros(uy.size, dtype=np.int64)
    lines = samples.lines[idx]
    pos = np.searchsorted(uy, years)
    np.add.at(n_cens, pos, cens.astype(np.int64))
    for j in range(uy.size):
        first[j] = int(lines[pos == j].min())
    warnings: list[str] = []
    n_c = int(cens.sum())
    if n_c:
        warnings.append(
            f"{n_c} of {idx.size} samples in the growing season were below the detection limit and count as "
            f"{_CENSORED_WORDS[rules.censored]}"
        )
        all_c = [int(y) for y, nc, j in zip(uy, n_cens, range(uy.size), strict=True) if nc == np.sum(pos == j)]
        if all_c:
            shown = ", ".join(str(y) for y in all_c[:6]) + (" …" if len(all_c) > 6 else "")
            warnings.append(
                f"every sample of {shown} was below the detection limit: that year's mean is set by the rule, "
                "not measured"
            )
    if few.any():
        listed = ", ".join(f"{y} ({n})" for y, n in zip(uy[few], n_visits[few], strict=True))
        warnings.append(
            f"fewer than {rules.min_samples} samples in {listed}: flagged, standard error widened by "
            f"sqrt({rules.min_samples}/n)"
        )
    if zero.any():
        notes.append(f"{int(zero.sum())} year(s) with identical values take the pooled standard error instead of zero")
    notes.append(rules.describe())
    return AnnualMeans(
        years=uy.astype(np.int64),
        tp_ug_l=tp,
        se_ug_l=se,
        n_samples=n_visits,
        n_sites=k.astype(np.int64),
        few_samples=few,
        n_censored=n_cens,
        first_line=first,
        pooled_cv=math.sqrt(c2),
        notes=tuple(notes),
        warnings=tuple(warnings),
    )
