"""Load schedules and in-lake treatments of a scenario.

Loads are in kg yr⁻¹ for years 1 … T of a scenario (year numbering in
:mod:`turnback.model.plan`); treatments act at the start of (removal) or
during (inactivation) a year.  Every class validates on construction,
raising :class:`~turnback.model.validation.FieldError` with the field's
path, and round-trips through ``to_dict`` / ``*_from_dict``.

In-lake chemical treatments (sediment P inactivation) need permits and
licensed practice; the model only says what they would do to the P budget.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, ClassVar, TypeAlias

import numpy as np
from numpy.typing import NDArray

from .validation import FieldError, known_keys, mapping, number, whole

__all__ = [
    "MAX_YEARS",
    "POOLS",
    "ConstantLoad",
    "Inactivation",
    "LinearCut",
    "LoadSchedule",
    "Removal",
    "StepLoad",
    "TableLoad",
    "Treatment",
    "load_from_dict",
    "treatment_from_dict",
]

#: Longest horizon of a scenario [yr].
MAX_YEARS = 1000
#: The pools a removal can take P from.
POOLS = ("water", "sediment")


def _year_index(years: int) -> NDArray[np.float64]:
    return np.arange(1, years + 1, dtype=float)


@dataclass(frozen=True)
class ConstantLoad:
    """The same load every year: ``L_t = kg_per_yr`` [kg yr⁻¹]."""

    kg_per_yr: float
    kind: ClassVar[str] = "constant"

    def __post_init__(self) -> None:
        object.__setattr__(self, "kg_per_yr", number(self.kg_per_yr, ("kg_per_yr",), lo=0.0, unit="[kg yr⁻¹]"))

    @property
    def baseline_kg_per_yr(self) -> float:
        """The do-nothing load [kg yr⁻¹]: the load held where it starts."""
        return self.kg_per_yr

    def loads(self, years: int) -> NDArray[np.float64]:
        """Scheduled load of years 1 … ``years`` [kg yr⁻¹]."""
        return np.full(years, self.kg_per_yr)

    def describe(self) -> str:
        return f"load held at {self.kg_per_yr:,.0f} kg/yr"

    def to_dict(self) -> dict[str, Any]:
        return {"kind": self.kind, "kg_per_yr": self.kg_per_yr}


@dataclass(frozen=True)
class LinearCut:
    """A linear cut of ``percent`` % over ``over_years`` years, then held.

    ``L_t = L_0 (1 − (percent/100) · min(t, Y)/Y)`` for year ``t >= 1`` with
    ``L_0 = from_kg_per_yr`` [kg yr⁻¹] and ``Y = over_years``: year 1 already
    carries ``1/Y`` of the cut and year ``Y`` the whole of it.
    """

    from_kg_per_yr: float
    percent: float
    over_years: int
    kind: ClassVar[str] = "linear_cut"

    def __post_init__(self) -> None:
        object.__setattr__(
            self, "from_kg_per_yr", number(self.from_kg_per_yr, ("from_kg_per_yr",), lo=0.0, unit="[kg yr⁻¹]")
        )
        object.__setattr__(self, "percent", number(self.percent, ("percent",), lo=0.0, hi=100.0, unit="[%]"))
        object.__setattr__(self, "over_years", whole(self.over_years, ("over_years",), 1, MAX_YEARS))

    @property
    def baseline_kg_per_yr(self) -> float:
        return self.from_kg_per_yr

    def loads(self, years: int) -> NDArray[np.float64]:
        t = _year_index(years)
        frac = (self.percent / 100.0) * np.minimum(t, self.over_years) / self.over_years
        return self.from_kg_per_yr * (1.0 - frac)

    def describe(self) -> str:
        return (
            f"linear cut of {self.percent:g}% over {self.over_years} years from {self.from_kg_per_yr:,.0f} kg/yr "
            f"(to {self.from_kg_per_yr * (1 - self.percent / 100):,.0f} kg/yr)"
        )

    def to_dict(self) -> dict[str, Any]:
        return {
            "kind": self.kind,
            "from_kg_per_yr": self.from_kg_per_yr,
            "percent": self.percent,
            "over_years": self.over_years,
        }


@dataclass(frozen=True)
class StepLoad:
    """A step change in year ``year``: ``L_t = from`` for ``t < year``, ``to`` from ``year`` on [kg yr⁻¹]."""

    from_kg_per_yr: float
    to_kg_per_yr: float
    year: int
    kind: ClassVar[str] = "step"

    def __post_init__(self) -> None:
        object.__setattr__(
            self, "from_kg_per_yr", number(self.from_kg_per_yr, ("from_kg_per_yr",), lo=0.0, unit="[kg yr⁻¹]")
        )
        object.__setattr__(self, "to_kg_per_yr", number(self.to_kg_per_yr, ("to_kg_per_yr",), lo=0.0, unit="[kg yr⁻¹]"))
        object.__setattr__(self, "year", whole(self.year, ("year",), 1, MAX_YEARS))

    @property
    def baseline_kg_per_yr(self) -> float:
        return self.from_kg_per_yr

    def loads(self, years: int) -> NDArray[np.float64]:
        t = _year_index(years)
        return np.where(t < self.year, self.from_kg_per_yr, self.to_kg_per_yr)

    def describe(self) -> str:
        return f"step from {self.from_kg_per_yr:,.0f} to {self.to_kg_per_yr:,.0f} kg/yr in year {self.year}"

    def to_dict(self) -> dict[str, Any]:
        return {
            "kind": self.kind,
            "from_kg_per_yr": self.from_kg_per_yr,
            "to_kg_per_yr": self.to_kg_per_yr,
            "year": self.year,
        }


@dataclass(frozen=True)
class TableLoad:
    """One load a year: ``L_t = kg_per_yr[t − 1]`` [kg yr⁻¹]; the length must equal the scenario's years."""

    kg_per_yr: tuple[float, ...]
    kind: ClassVar[str] = "table"

    def __post_init__(self) -> None:
        values = self.kg_per_yr
        if isinstance(values, str | bytes | Mapping) or not isinstance(values, Sequence | np.ndarray):
            raise FieldError(("kg_per_yr",), f"must be a list of numbers, one a year; got {type(values).__name__}")
        if len(values) == 0:
            raise FieldError(("kg_per_yr",), "must hold at least one value (one a year)")
        if len(values) > MAX_YEARS:
            raise FieldError(("kg_per_yr",), f"must hold at most {MAX_YEARS} values")
        out = tuple(number(v, ("kg_per_yr", i), lo=0.0, unit="[kg yr⁻¹]") for i, v in enumerate(values))
        object.__setattr__(self, "kg_per_yr", out)

    @property
    def baseline_kg_per_yr(self) -> float:
        return self.kg_per_yr[0]

    def loads(self, years: int) -> NDArray[np.float64]:
        if len(self.kg_per_yr) != years:
            raise FieldError(("kg_per_yr",), f"must have one value a year ({years}); got {len(self.kg_per_yr)}")
        return np.array(self.kg_per_yr, dtype=float)

    def describe(self) -> str:
        v = self.kg_per_yr
        return f"table of {len(v)} yearly loads, {min(v):,.0f} to {max(v):,.0f} kg/yr"

    def to_dict(self) -> dict[str, Any]:
        return {"kind": self.kind, "kg_per_yr": list(self.kg_per_yr)}


LoadSchedule: TypeAlias = ConstantLoad | LinearCut | StepLoad | TableLoad
_LOADS: dict[str, tuple[type, tuple[str, ...]]] = {
    "constant": (ConstantLoad, ("kg_per_yr",)),
    "linear_cut": (LinearCut, ("from_kg_per_yr", "percent", "over_years")),
    "step": (StepLoad, ("from_kg_per_yr", "to_kg_per_yr", "year")),
    "table": (TableLoad, ("kg_per_yr",)),
}


def load_from_dict(data: object) -> LoadSchedule:
    d = mapping(data, (), "a load schedule with a kind: " + ", ".join(_LOADS))
    kind = d.get("kind")
    if not isinstance(kind, str) or kind not in _LOADS:
        raise FieldError(("kind",), f"must be one of {', '.join(_LOADS)}; got {kind!r}")
    cls, names = _LOADS[str(kind)]
    known_keys(d, (), ("kind", *names))
    if cls is TableLoad and not isinstance(d["kg_per_yr"], list):
        raise FieldError(("kg_per_yr",), "must be a list of numbers, one a year")
    obj: LoadSchedule = cls(**{n: d[n] for n in names})
    return obj


# --------------------------------------------------------------------------
# in-lake treatments
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class Removal:
    """In-lake P removal of ``kg`` [kg] at the start of year ``year`` (less if the pool holds less).

    ``pool`` is ``"water"`` (the default) or, for a two-pool lake,
    ``"sediment"``: dredging of mobile sediment P.  Dredging needs permits
    and licensed practice.
    """

    year: int
    kg: float
    pool: str = "water"
    kind: ClassVar[str] = "removal"

    def __post_init__(self) -> None:
        object.__setattr__(self, "year", whole(self.year, ("year",), 1, MAX_YEARS))
        object.__setattr__(self, "kg", number(self.kg, ("kg",), lo=0.0, lo_open=True, unit="[kg]"))
        if self.pool not in POOLS:
            raise FieldError(("pool",), f"must be 'water' or 'sediment'; got {self.pool!r}")

    def describe(self) -> str:
        if self.pool == "sediment":
            return f"dredging of {self.kg:,.0f} kg sediment P in year {self.year}"
        return f"removal of {self.kg:,.0f} kg P in year {self.year}"

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"kind": self.kind, "year": self.year, "kg": self.kg}
        if self.pool != "water":
            out["pool"] = self.pool
        return out


@dataclass(frozen=True)
class Inactivation:
    """Sediment P inactivation: recycling cut by ``percent`` % in years ``year`` … ``year + years − 1``.

    The recycling multiplier of the annual map is ``c_t = 1 − percent/100``
    in those years; overlapping treatments multiply.
    """

    year: int
    percent: float
    years: int
    kind: ClassVar[str] = "inactivation"

    def __post_init__(self) -> None:
        object.__setattr__(self, "year", whole(self.year, ("year",), 1, MAX_YEARS))
        object.__setattr__(
            self, "percent", number(self.percent, ("percent",), lo=0.0, hi=100.0, lo_open=True, unit="[%]")
        )
        object.__setattr__(self, "years", whole(self.years, ("years",), 1, MAX_YEARS))

    def describe(self) -> str:
        return f"recycling cut by {self.percent:g}% for {self.years} years from year {self.year}"

    def to_dict(self) -> dict[str, Any]:
        return {"kind": self.kind, "year": self.year, "percent": self.percent, "years": self.years}


Treatment: TypeAlias = Removal | Inactivation
_TREATMENTS: dict[str, tuple[type, tuple[str, ...]]] = {
    "removal": (Removal, ("year", "kg")),
    "inactivation": (Inactivation, ("year", "percent", "years")),
}
_OPTIONAL_FIELDS: dict[str, tuple[str, ...]] = {"removal": ("pool",)}


def treatment_from_dict(data: object) -> Treatment:
    d = mapping(data, (), "a treatment with a kind: " + ", ".join(_TREATMENTS))
    kind = d.get("kind")
    if not isinstance(kind, str) or kind not in _TREATMENTS:
        raise FieldError(("kind",), f"must be one of {', '.join(_TREATMENTS)}; got {kind!r}")
    cls, names = _TREATMENTS[str(kind)]
    optional = _OPTIONAL_FIELDS.get(str(kind), ())
    known_keys(d, (), ("kind", *names), optional)
    obj: Treatment = cls(**{n: d[n] for n in (*names, *optional) if n in d})
    return obj
