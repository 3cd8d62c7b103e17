"""A lake's annual monitoring record, checked and ready to fit.

The record is read from a file by :mod:`turnback.model.io.monitoring_csv`;
this module holds the pure object.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from . import units
from .validation import FieldError, number

__all__ = ["MonitoringSeries"]


def _frozen(a: Any) -> Any:
    out = np.array(a, copy=True)
    out.setflags(write=False)
    return out


@dataclass(frozen=True, eq=False)
class MonitoringSeries:
    """An annual monitoring record, checked and ready to fit.

    Attributes
    ----------
    years : ndarray of int, shape (n,)
        Consecutive calendar years, ascending.
    load_kg_per_yr : ndarray, shape (n,)
        External total phosphorus load in each year [kg yr⁻¹].
    tp_ug_l : ndarray, shape (n,)
        Mean lake total phosphorus in each year [µg L⁻¹].
    secchi_m : ndarray or None
        Mean Secchi depth [m]; ``nan`` where a year has none.
    chl_ug_l : ndarray or None
        Mean chlorophyll a [µg L⁻¹]; ``nan`` where a year has none.
    lines : ndarray of int, shape (n,)
        File line number of each year's row, for messages.
    notes : tuple of str
        Things the reader ignored (extra columns), in plain words.
    tp_se_ug_l : ndarray or None
        Standard error of each annual mean [µg L⁻¹] when the record was built
        from individual samples (:mod:`turnback.model.sample_means`); None for
        an annual file.
    n_samples : ndarray of int or None
        Samples (site visits) behind each annual mean; None for an annual file.
    few_samples : ndarray of bool or None
        Years flagged for having fewer samples than the rule asks.
    warnings : tuple of str
        What the reader wants the user to know about the numbers (values
        below the detection limit, flagged years), in plain words.

    Arrays are read-only copies.
    """

    years: NDArray[np.int64]
    load_kg_per_yr: NDArray[np.float64]
    tp_ug_l: NDArray[np.float64]
    secchi_m: NDArray[np.float64] | None = None
    chl_ug_l: NDArray[np.float64] | None = None
    lines: NDArray[np.int64] | None = None
    notes: tuple[str, ...] = field(default=())
    tp_se_ug_l: NDArray[np.float64] | None = None
    n_samples: NDArray[np.int64] | None = None
    few_samples: NDArray[np.bool_] | None = None
    warnings: tuple[str, ...] = field(default=())

    def __post_init__(self) -> None:
        years = np.asarray(self.years, dtype=np.int64)
        n = years.size
        if years.ndim != 1:
            raise FieldError(("years",), "must be one-dimensional")
        object.__setattr__(self, "years", _frozen(years))
        kinds = {"n_samples": np.int64, "few_samples": bool}
        for name in ("load_kg_per_yr", "tp_ug_l", "secchi_m", "chl_ug_l", "tp_se_ug_l", "n_samples", "few_samples"):
            value = getattr(self, name)
            if value is None:
                continue
            arr = np.asarray(value, dtype=kinds.get(name, float))
            if arr.shape != (n,):
                raise FieldError((name,), f"must have one value per year ({n}); got shape {arr.shape}")
            object.__setattr__(self, name, _frozen(arr))
        lines = np.arange(2, n + 2) if self.lines is None else np.asarray(self.lines, dtype=np.int64)
        object.__setattr__(self, "lines", _frozen(lines))
        object.__setattr__(self, "notes", tuple(self.notes))
        object.__setattr__(self, "warnings", tuple(self.warnings))
        se = self.tp_se_ug_l
        if se is not None and not bool(np.all(np.isfinite(se) & (se > 0.0))):
            raise FieldError(("tp_se_ug_l",), "must be finite and greater than 0 in every year [µg L⁻¹]")

    @property
    def from_samples(self) -> bool:
        """Whether the annual means were built from individual samples (and carry standard errors)."""
        return self.tp_se_ug_l is not None

    @property
    def se_log(self) -> NDArray[np.float64] | None:
        """Standard error of each log annual mean, ``SE / TP`` [–] (delta method); None for an annual file."""
        if self.tp_se_ug_l is None:
            return None
        out: NDArray[np.float64] = self.tp_se_ug_l / self.tp_ug_l
        return out

    @property
    def n_years(self) -> int:
        """Number of years in the record."""
        return int(self.years.size)

    def p_kg(self, volume_m3: float) -> NDArray[np.float64]:
        """Lake P mass [kg] in each year: ``P = TP · V / 10⁶`` with ``V`` [m³].

        ``1 µg L⁻¹ · 1 m³ = 10³ µg = 10⁻⁶ kg``.
        """
        v = number(volume_m3, ("volume_m3",), lo=0.0, lo_open=True, unit="[m³]")
        out: NDArray[np.float64] = units.p_kg(self.tp_ug_l, v)
        return out
