r"""Scenario plans over years: load schedules, in-lake treatments, variability and ensembles.

A *scenario* is a lake plus a plan over a horizon of ``years``.  Every
scenario is run with the one dynamic model of the product, the annual map of
:func:`model.dynamics.simulate`,

.. math:: P_{t+1} = P_t - R_t + L_t\,\mu_t - s (P_t - R_t) + c_t\, r \frac{(P_t - R_t)^q}{m^q + (P_t - R_t)^q}
          + \sigma_P\, \eta_t

(Carpenter, Ludwig & Brock 1999, Ecological Applications 9:751–771), with
lake P ``P`` [kg], scheduled load ``L_t`` [kg yr⁻¹], in-lake removal ``R_t``
[kg] taken out at the start of the year, recycling multiplier ``c_t`` in
[0, 1] from sediment P inactivation, and lake P kept at or above zero.

Year numbering
    Year 0 is the starting state (``initial_tp_ug_l``).  Year ``t`` (1 ≤ t ≤
    ``years``) is the ``t``-th simulated year: its load, removal and
    inactivation act during that year, and the state reported for year ``t``
    is lake P at the end of it.  Trajectories have ``years + 1`` points.

Load variability
    Year-to-year lognormal variability with coefficient of variation ``cv``,
    mean-preserving: ``μ_t = exp(σ ε_t − σ²/2)`` with ``σ² = ln(1 + cv²)``
    and ``ε_t`` independent standard normal, so ``E[μ_t] = 1`` and
    ``sd[μ_t] = cv``.

Process noise
    Optional additive Gaussian disturbance on lake P at the end of each year,
    ``σ_P η_t`` with ``η_t`` standard normal and ``σ_P`` =
    ``process_noise_sd_kg`` [kg]; lake P is then kept at or above zero.

Clear state
    By default a lake is *clear* in year ``t`` when its P is below the
    unstable separatrix (middle equilibrium) of the untreated lake at that
    year's scheduled load; beyond the folds the threshold is held at the P of
    the nearest fold (the tipping-fold P above the tipping load, the
    recovery-fold P below the recovery load), which makes it continuous in
    the load.  Year 0 uses the load of year 1.  This is the rule
    ``clear_threshold = "separatrix"``: clear means "on the clear side of the
    basin boundary".  Below the recovery load every state is bound for clear
    water, so a lake can count as clear while its TP is still falling.  The
    rule ``"tipping_fold"`` instead uses the fixed TP of the tipping fold, the
    highest TP any clear-water equilibrium has ("TP within the clear-water
    range"); a number gives a fixed TP [µg L⁻¹] (needed for lakes without
    folds).  The threshold is that of the untreated lake.  "Turbid" means not
    clear.

Recovery time
    The first year ``t >= 0`` in which the lake is clear and stays clear for
    ``recovery_stay_years`` consecutive years (``t`` to ``t + k − 1``, default
    ``k = 3``), all within the horizon; members that never do are "not
    recovered".  A lake that starts clear and stays clear recovers in year 0.

Flip to turbid
    For members clear in year 0: turbid in at least one year 1 … ``years``
    (first passage out of the clear state).  Undefined (``None``) when no
    member starts clear.

Precautionary load
    The largest sustained load for which the probability of flipping within
    ``N`` years, starting from the clear equilibrium at that load, is at most
    ``X``; found by bisection on one ensemble with common random numbers.
    Its Monte-Carlo error is the binomial standard error of the probability
    at the answer, ``sqrt(X (1 − X) / M)``, converted to load through the
    local slope ``dp/dL`` (a central difference on the same random numbers).

References
----------
Carpenter, S. R., Ludwig, D. & Brock, W. A. (1999). Management of
eutrophication for lakes subject to potentially irreversible change.
Ecological Applications 9(3), 751–771.
"""

from __future__ import annotations

import json
import math
from collections.abc import Callable, Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any, ClassVar, Literal, TypeAlias

import numpy as np
from numpy.typing import NDArray

from .dynamics import MAX_LOSS_RATE, simulate
from .equilibrium import Fold, equilibria, folds
from .params import LakeParameters, recycling_fraction

__all__ = [
    "CLEAR_RULES",
    "MAX_MEMBERS",
    "MAX_YEARS",
    "Comparison",
    "ConstantLoad",
    "FlipEstimate",
    "Inactivation",
    "LinearCut",
    "LoadSchedule",
    "Plan",
    "Precaution",
    "PrecautionResult",
    "Removal",
    "RunCancelled",
    "Scenario",
    "ScenarioLake",
    "ScenarioResult",
    "StepLoad",
    "TableLoad",
    "Treatment",
    "clear_threshold_kg",
    "compare_plan",
    "flip_probability",
    "load_plan_file",
    "lognormal_sigma",
    "precautionary_load",
    "recovery_years",
    "run_scenario",
    "scenario_clear_below_kg",
    "scenario_precaution",
]

Progress: TypeAlias = Callable[[float, str], None]
"""``progress(fraction, message)`` with ``fraction`` in [0, 1]."""
Cancel: TypeAlias = Callable[[], bool]
"""``cancel()`` returns True to stop the run (:class:`RunCancelled` is raised)."""
RngLike: TypeAlias = np.random.Generator | int | None

MAX_YEARS = 1000
MAX_MEMBERS = 100_000
MAX_CELLS = 5_000_000  # members × years held in memory at once
MAX_SCENARIOS = 50
MAX_PLAN_BYTES = 20_000_000
_CHUNK_MEMBERS = 4096


class RunCancelled(Exception):
    """Raised when the ``cancel`` hook of a run returns True."""


# --------------------------------------------------------------------------
# validation helpers: messages start with the field name so callers can
# prefix the path ("scenarios[1].load." + "percent must be ...")
# --------------------------------------------------------------------------
def _g(x: float) -> str:
    return f"{x:g}"


def _range_text(lo: float | None, hi: float | None, lo_open: bool, hi_open: bool) -> str:
    if lo is not None and hi is not None:
        if lo_open or hi_open:
            left = "greater than" if lo_open else "at least"
            right = "below" if hi_open else "at most"
            return f"{left} {_g(lo)} and {right} {_g(hi)}"
        return f"between {_g(lo)} and {_g(hi)}"
    if lo is not None:
        return f"greater than {_g(lo)}" if lo_open else f"at least {_g(lo)}"
    if hi is not None:
        return f"below {_g(hi)}" if hi_open else f"at most {_g(hi)}"
    return "a finite number"


def _num(
    name: str,
    value: object,
    *,
    lo: float | None = None,
    hi: float | None = None,
    lo_open: bool = False,
    hi_open: bool = False,
    unit: str = "",
) -> float:
    """``value`` as a finite float within the range, or ValueError naming ``name``."""
    text = _range_text(lo, hi, lo_open, hi_open)
    u = f" {unit}" if unit else ""
    if isinstance(value, bool) or not isinstance(value, int | float | np.integer | np.floating):
        kind = "a finite number" if lo is None and hi is None else f"a number ({text})"
        raise ValueError(f"{name} must be {kind}{u}; got {value!r}")
    v = float(value)
    bad = not math.isfinite(v)
    if lo is not None and (v < lo or (lo_open and v == lo)):
        bad = True
    if hi is not None and (v > hi or (hi_open and v == hi)):
        bad = True
    if bad:
        raise ValueError(f"{name} must be {text}{u}; got {value!r}")
    return v


def _int(name: str, value: object, lo: int, hi: int) -> int:
    """``value`` as an int in ``[lo, hi]`` (integral floats accepted), or ValueError naming ``name``."""
    msg = f"{name} must be a whole number between {lo} and {hi}; got {value!r}"
    if isinstance(value, bool) or not isinstance(value, int | float | np.integer | np.floating):
        raise ValueError(msg)
    v = float(value)
    if not math.isfinite(v) or v != math.floor(v) or not lo <= v <= hi:
        raise ValueError(msg)
    return int(v)


def _text(name: str, value: object, max_len: int = 120, allow_empty: bool = False) -> str:
    if not isinstance(value, str):
        raise ValueError(f"{name} must be text; got {value!r}")
    v = value.strip()
    if not v and not allow_empty:
        raise ValueError(f"{name} must not be empty")
    if len(v) > max_len:
        raise ValueError(f"{name} must be at most {max_len} characters")
    return v


@contextmanager
def _at(prefix: str) -> Iterator[None]:
    """Prefix ValueError messages raised inside with the path ``prefix``."""
    try:
        yield
    except ValueError as exc:
        msg = str(exc)
        if msg.startswith("["):
            raise ValueError(f"{prefix}{msg}") from None
        if msg.startswith(("must ", "is ", "has ")):
            raise ValueError(f"{prefix} {msg}") from None
        raise ValueError(f"{prefix}.{msg}") from None


def _object(value: object, what: str) -> Mapping[str, Any]:
    if not isinstance(value, Mapping):
        raise ValueError(f"must be an object ({what}); got {type(value).__name__}")
    return value


def _keys(data: Mapping[str, Any], required: Sequence[str], optional: Sequence[str] = ()) -> None:
    allowed = (*required, *optional)
    for key in data:
        if key not in allowed:
            raise ValueError(f"{key} is not a known field; use {', '.join(allowed)}")
    for key in required:
        if key not in data:
            raise ValueError(f"{key} is required")


def lognormal_sigma(cv: float) -> float:
    """Log-scale sd ``σ = sqrt(ln(1 + cv²))`` of a lognormal with coefficient of variation ``cv`` [–]."""
    return math.sqrt(math.log1p(cv * cv))


# --------------------------------------------------------------------------
# the lake of a plan
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class ScenarioLake:
    """The lake a plan is about: model parameters, volume and starting state.

    Parameters
    ----------
    params : LakeParameters
        ``s`` [yr⁻¹] (below 2 for the annual map), ``r`` [kg yr⁻¹], ``m`` [kg], ``q`` [–].
    volume_m3 : float
        Lake volume [m³], > 0; converts P [kg] to TP [µg L⁻¹] as ``TP = 10⁶ P / V``.
    initial_tp_ug_l : float
        Total phosphorus at year 0 [µg L⁻¹], >= 0.
    name : str
        Display name.
    """

    params: LakeParameters
    volume_m3: float
    initial_tp_ug_l: float
    name: str = "lake"

    def __post_init__(self) -> None:
        if not isinstance(self.params, LakeParameters):
            raise ValueError("params must be LakeParameters")
        if self.params.s >= MAX_LOSS_RATE:
            raise ValueError(
                f"loss_rate must be below {MAX_LOSS_RATE:g} [yr⁻¹] for the annual model; got {self.params.s:g}"
            )
        object.__setattr__(self, "volume_m3", _num("volume_m3", self.volume_m3, lo=0.0, lo_open=True, unit="[m³]"))
        object.__setattr__(
            self, "initial_tp_ug_l", _num("initial_tp_ug_l", self.initial_tp_ug_l, lo=0.0, unit="[µg L⁻¹]")
        )
        object.__setattr__(self, "name", _text("name", self.name))

    @property
    def initial_p_kg(self) -> float:
        """Lake P at year 0 [kg]."""
        return float(self.mass(self.initial_tp_ug_l))

    def tp(self, p_kg: Any) -> Any:
        """Total phosphorus [µg L⁻¹] from lake P [kg]: ``10⁶ P / V``."""
        return np.asarray(p_kg, dtype=float) * 1.0e6 / self.volume_m3

    def mass(self, tp_ug_l: Any) -> Any:
        """Lake P [kg] from total phosphorus [µg L⁻¹]: ``TP V / 10⁶``."""
        return np.asarray(tp_ug_l, dtype=float) * self.volume_m3 / 1.0e6

    _PARAM_KEYS: ClassVar[tuple[str, ...]] = ("loss_rate", "recycling_max", "recycling_half", "recycling_exponent")

    def to_dict(self) -> dict[str, Any]:
        return {
            **self.params.to_dict(),
            "volume_m3": self.volume_m3,
            "initial_tp_ug_l": self.initial_tp_ug_l,
            "name": self.name,
        }

    @classmethod
    def from_dict(cls, data: object) -> ScenarioLake:
        d = _object(
            data, "the lake's loss_rate, recycling_max, recycling_half, recycling_exponent, volume_m3, initial_tp_ug_l"
        )
        _keys(d, (*cls._PARAM_KEYS, "volume_m3", "initial_tp_ug_l"), ("name",))
        for key in cls._PARAM_KEYS:
            _num(key, d[key], lo=0.0, lo_open=True)  # a type message naming the field
        params = LakeParameters(**{k: d[k] for k in cls._PARAM_KEYS})
        return cls(params, d["volume_m3"], d["initial_tp_ug_l"], d.get("name", "lake"))


# --------------------------------------------------------------------------
# load schedules
# --------------------------------------------------------------------------
def _year_index(years: int) -> NDArray[np.float64]:
    return np.arange(1, years + 1, dtype=float)


@dataclass(frozen=True)
class ConstantLoad:
    """The same load every year: ``L_t = kg_per_yr`` [kg yr⁻¹]."""

    kg_per_yr: float
    kind: ClassVar[str] = "constant"

    def __post_init__(self) -> None:
        object.__setattr__(self, "kg_per_yr", _num("kg_per_yr", self.kg_per_yr, lo=0.0, unit="[kg yr⁻¹]"))

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
            self, "from_kg_per_yr", _num("from_kg_per_yr", self.from_kg_per_yr, lo=0.0, unit="[kg yr⁻¹]")
        )
        object.__setattr__(self, "percent", _num("percent", self.percent, lo=0.0, hi=100.0, unit="[%]"))
        object.__setattr__(self, "over_years", _int("over_years", self.over_years, 1, MAX_YEARS))

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
            self, "from_kg_per_yr", _num("from_kg_per_yr", self.from_kg_per_yr, lo=0.0, unit="[kg yr⁻¹]")
        )
        object.__setattr__(self, "to_kg_per_yr", _num("to_kg_per_yr", self.to_kg_per_yr, lo=0.0, unit="[kg yr⁻¹]"))
        object.__setattr__(self, "year", _int("year", self.year, 1, MAX_YEARS))

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
            raise ValueError(f"kg_per_yr must be a list of numbers, one a year; got {type(values).__name__}")
        if len(values) == 0:
            raise ValueError("kg_per_yr must hold at least one value (one a year)")
        if len(values) > MAX_YEARS:
            raise ValueError(f"kg_per_yr must hold at most {MAX_YEARS} values")
        out = tuple(_num(f"kg_per_yr[{i}]", v, lo=0.0, unit="[kg yr⁻¹]") for i, v in enumerate(values))
        object.__setattr__(self, "kg_per_yr", out)

    @property
    def baseline_kg_per_yr(self) -> float:
        return self.kg_per_yr[0]

    def loads(self, years: int) -> NDArray[np.float64]:
        if len(self.kg_per_yr) != years:
            raise ValueError(f"kg_per_yr must have one value a year ({years}); got {len(self.kg_per_yr)}")
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


def _load_from_dict(data: object) -> LoadSchedule:
    d = _object(data, "a load schedule with a kind: " + ", ".join(_LOADS))
    kind = d.get("kind")
    if kind not in _LOADS:
        raise ValueError(f"kind must be one of {', '.join(_LOADS)}; got {kind!r}")
    cls, names = _LOADS[str(kind)]
    _keys(d, ("kind", *names))
    if cls is TableLoad and not isinstance(d["kg_per_yr"], list):
        raise ValueError("kg_per_yr must be a list of numbers, one a year")
    obj: LoadSchedule = cls(**{n: d[n] for n in names})
    return obj


# --------------------------------------------------------------------------
# in-lake treatments
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class Removal:
    """In-lake P removal of ``kg`` [kg] at the start of year ``year`` (less if the lake holds less)."""

    year: int
    kg: float
    kind: ClassVar[str] = "removal"

    def __post_init__(self) -> None:
        object.__setattr__(self, "year", _int("year", self.year, 1, MAX_YEARS))
        object.__setattr__(self, "kg", _num("kg", self.kg, lo=0.0, lo_open=True, unit="[kg]"))

    def describe(self) -> str:
        return f"removal of {self.kg:,.0f} kg P in year {self.year}"

    def to_dict(self) -> dict[str, Any]:
        return {"kind": self.kind, "year": self.year, "kg": self.kg}


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
        object.__setattr__(self, "year", _int("year", self.year, 1, MAX_YEARS))
        object.__setattr__(self, "percent", _num("percent", self.percent, lo=0.0, hi=100.0, lo_open=True, unit="[%]"))
        object.__setattr__(self, "years", _int("years", self.years, 1, MAX_YEARS))

    def describe(self) -> str:
        return f"recycling cut by {self.percent:g}% for {self.years} years from year {self.year}"

    def to_dict(self) -> dict[str, Any]:
        return {"kind": self.kind, "year": self.year, "percent": self.percent, "years": self.years}


Treatment: TypeAlias = Removal | Inactivation
_TREATMENTS: dict[str, tuple[type, tuple[str, ...]]] = {
    "removal": (Removal, ("year", "kg")),
    "inactivation": (Inactivation, ("year", "percent", "years")),
}


def _treatment_from_dict(data: object) -> Treatment:
    d = _object(data, "a treatment with a kind: " + ", ".join(_TREATMENTS))
    kind = d.get("kind")
    if kind not in _TREATMENTS:
        raise ValueError(f"kind must be one of {', '.join(_TREATMENTS)}; got {kind!r}")
    cls, names = _TREATMENTS[str(kind)]
    _keys(d, ("kind", *names))
    obj: Treatment = cls(**{n: d[n] for n in names})
    return obj


@dataclass(frozen=True)
class Precaution:
    """Ask for the largest sustained load with ``P(flip within within_years) <= max_percent`` %."""

    within_years: int
    max_percent: float

    def __post_init__(self) -> None:
        object.__setattr__(self, "within_years", _int("within_years", self.within_years, 1, MAX_YEARS))
        object.__setattr__(
            self,
            "max_percent",
            _num("max_percent", self.max_percent, lo=0.0, hi=100.0, lo_open=True, hi_open=True, unit="[%]"),
        )

    def to_dict(self) -> dict[str, Any]:
        return {"within_years": self.within_years, "max_percent": self.max_percent}

    @classmethod
    def from_dict(cls, data: object) -> Precaution:
        d = _object(data, "within_years and max_percent")
        _keys(d, ("within_years", "max_percent"))
        return cls(d["within_years"], d["max_percent"])


# --------------------------------------------------------------------------
# scenario and plan
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class Scenario:
    """A plan over ``years`` years for one lake.

    Parameters
    ----------
    name : str
        Unique within a plan.
    years : int
        Horizon, 1 … 1000 years (year numbering in the module docstring).
    load : LoadSchedule
        Scheduled external load [kg yr⁻¹].
    variability_cv : float
        Coefficient of variation of the mean-preserving lognormal load
        multiplier [–], 0 … 5.
    process_noise_sd_kg : float
        Sd of the additive Gaussian disturbance on lake P [kg], >= 0.
    members : int
        Ensemble size, 1 … 100 000 (``members × years`` at most 5 000 000).
    seed : int or None
        Seed of the ensemble's random numbers (None: fresh entropy).
    treatments : tuple of Removal / Inactivation
    clear_threshold : {"separatrix", "tipping_fold"} or float
        Clear-state rule (module docstring), or a fixed TP [µg L⁻¹].
    recovery_stay_years : int
        Consecutive clear years that count as recovered (default 3); with a
        horizon shorter than ``k − 1`` years no member can be confirmed recovered.
    precaution : Precaution or None
        Also solve for the precautionary load under this scenario's variability.
    description : str
    """

    name: str
    years: int
    load: LoadSchedule
    variability_cv: float = 0.0
    process_noise_sd_kg: float = 0.0
    members: int = 1
    seed: int | None = None
    treatments: tuple[Treatment, ...] = ()
    clear_threshold: str | float = "separatrix"
    recovery_stay_years: int = 3
    precaution: Precaution | None = None
    description: str = ""

    def __post_init__(self) -> None:
        set_ = object.__setattr__
        set_(self, "name", _text("name", self.name))
        years = _int("years", self.years, 1, MAX_YEARS)
        set_(self, "years", years)
        if not isinstance(self.load, ConstantLoad | LinearCut | StepLoad | TableLoad):
            raise ValueError("load must be a load schedule (constant, linear_cut, step or table)")
        if isinstance(self.load, TableLoad) and len(self.load.kg_per_yr) != years:
            raise ValueError(
                f"load.kg_per_yr must have one value a year: {years} values for years = {years}; "
                f"got {len(self.load.kg_per_yr)}"
            )
        if isinstance(self.load, StepLoad) and self.load.year > years:
            raise ValueError(f"load.year must be between 1 and {years} (the scenario's years); got {self.load.year}")
        set_(self, "variability_cv", _num("variability_cv", self.variability_cv, lo=0.0, hi=5.0, unit="[–]"))
        set_(self, "process_noise_sd_kg", _num("process_noise_sd_kg", self.process_noise_sd_kg, lo=0.0, unit="[kg]"))
        members = _int("members", self.members, 1, MAX_MEMBERS)
        if members * years > MAX_CELLS:
            raise ValueError(
                f"members × years must be at most {MAX_CELLS:,} (got {members} × {years}); "
                "use fewer members or a shorter horizon"
            )
        set_(self, "members", members)
        if self.seed is not None:
            set_(self, "seed", _int("seed", self.seed, 0, 2**63 - 1))
        treatments = self.treatments
        if isinstance(treatments, str | bytes | Mapping) or not isinstance(treatments, Sequence):
            raise ValueError("treatments must be a list")
        for i, t in enumerate(treatments):
            if not isinstance(t, Removal | Inactivation):
                raise ValueError(f"treatments[{i}] must be a removal or an inactivation")
            if t.year > years:
                raise ValueError(
                    f"treatments[{i}].year must be between 1 and {years} (the scenario's years); got {t.year}"
                )
        set_(self, "treatments", tuple(treatments))
        rule = self.clear_threshold
        if isinstance(rule, str):
            if rule not in CLEAR_RULES:
                rules = " or ".join(repr(r) for r in CLEAR_RULES)
                raise ValueError(f"clear_threshold must be {rules} or a TP [µg L⁻¹]; got {rule!r}")
        else:
            set_(self, "clear_threshold", _num("clear_threshold", rule, lo=0.0, lo_open=True, unit="[µg L⁻¹]"))
        set_(self, "recovery_stay_years", _int("recovery_stay_years", self.recovery_stay_years, 1, MAX_YEARS))
        if self.precaution is not None and not isinstance(self.precaution, Precaution):
            raise ValueError("precaution must be a Precaution")
        set_(self, "description", _text("description", self.description, 2000, allow_empty=True))

    # schedules --------------------------------------------------------
    def loads(self) -> NDArray[np.float64]:
        """Scheduled load of years 1 … ``years`` [kg yr⁻¹] (the mean of the varied load)."""
        return self.load.loads(self.years)

    def removal_by_year(self) -> NDArray[np.float64]:
        """In-lake removal scheduled at the start of years 1 … ``years`` [kg]."""
        out = np.zeros(self.years)
        for t in self.treatments:
            if isinstance(t, Removal):
                out[t.year - 1] += t.kg
        return out

    def recycling_scale_by_year(self) -> NDArray[np.float64]:
        """Recycling multiplier ``c_t`` of years 1 … ``years`` [–]."""
        out = np.ones(self.years)
        for t in self.treatments:
            if isinstance(t, Inactivation):
                out[t.year - 1 : t.year - 1 + t.years] *= 1.0 - t.percent / 100.0
        return out

    @property
    def stochastic(self) -> bool:
        return self.variability_cv > 0.0 or self.process_noise_sd_kg > 0.0

    def describe(self) -> str:
        parts = [self.load.describe()]
        parts += [t.describe() for t in self.treatments]
        if self.variability_cv > 0:
            parts.append(f"load CV {self.variability_cv:g}")
        if self.process_noise_sd_kg > 0:
            parts.append(f"process noise sd {self.process_noise_sd_kg:,.0f} kg")
        parts.append(f"{self.members} member{'s' if self.members != 1 else ''}, seed {self.seed}")
        return f"{self.years} years: " + "; ".join(parts)

    # JSON ---------------------------------------------------------------
    _OPTIONAL: ClassVar[tuple[str, ...]] = (
        "variability_cv",
        "process_noise_sd_kg",
        "members",
        "seed",
        "treatments",
        "clear_threshold",
        "recovery_stay_years",
        "precaution",
        "description",
    )

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "years": self.years,
            "load": self.load.to_dict(),
            "variability_cv": self.variability_cv,
            "process_noise_sd_kg": self.process_noise_sd_kg,
            "members": self.members,
            "seed": self.seed,
            "treatments": [t.to_dict() for t in self.treatments],
            "clear_threshold": self.clear_threshold,
            "recovery_stay_years": self.recovery_stay_years,
            "precaution": None if self.precaution is None else self.precaution.to_dict(),
            "description": self.description,
        }

    @classmethod
    def from_dict(cls, data: object) -> Scenario:
        d = _object(data, "a scenario with name, years and load")
        _keys(d, ("name", "years", "load"), cls._OPTIONAL)
        with _at("load"):
            load = _load_from_dict(d["load"])
        raw_t = d.get("treatments", [])
        if raw_t is None:
            raw_t = []
        if not isinstance(raw_t, list):
            raise ValueError("treatments must be a list of treatments (kind removal or inactivation)")
        treatments = []
        for i, t in enumerate(raw_t):
            with _at(f"treatments[{i}]"):
                treatments.append(_treatment_from_dict(t))
        precaution = None
        if d.get("precaution") is not None:
            with _at("precaution"):
                precaution = Precaution.from_dict(d["precaution"])
        kwargs: dict[str, Any] = {
            k: d[k]
            for k in (
                "variability_cv",
                "process_noise_sd_kg",
                "members",
                "seed",
                "clear_threshold",
                "recovery_stay_years",
                "description",
            )
            if k in d
        }
        if kwargs.get("members") is None:
            kwargs.pop("members", None)
        for k in ("variability_cv", "process_noise_sd_kg", "clear_threshold", "recovery_stay_years", "description"):
            if k in kwargs and kwargs[k] is None:
                kwargs.pop(k)
        return cls(
            name=d["name"],
            years=d["years"],
            load=load,
            treatments=tuple(treatments),
            precaution=precaution,
            **kwargs,
        )

    def to_json(self) -> str:
        return json.dumps(self.to_dict())

    @classmethod
    def from_json(cls, text: str) -> Scenario:
        return cls.from_dict(json.loads(text))


@dataclass(frozen=True)
class Plan:
    """A lake and the scenarios to compare for it (names unique, at most 50 scenarios)."""

    lake: ScenarioLake
    scenarios: tuple[Scenario, ...]
    description: str = ""

    def __post_init__(self) -> None:
        if not isinstance(self.lake, ScenarioLake):
            raise ValueError("lake must be a ScenarioLake")
        scen = self.scenarios
        if isinstance(scen, str | bytes | Mapping) or not isinstance(scen, Sequence) or len(scen) == 0:
            raise ValueError("scenarios must be a non-empty list of scenarios")
        if len(scen) > MAX_SCENARIOS:
            raise ValueError(f"scenarios must hold at most {MAX_SCENARIOS} scenarios; got {len(scen)}")
        seen: dict[str, int] = {}
        has_folds = bool(folds(self.lake.params))
        for i, s in enumerate(scen):
            if not isinstance(s, Scenario):
                raise ValueError(f"scenarios[{i}] must be a Scenario")
            if s.name in seen:
                raise ValueError(f"scenarios[{i}].name {s.name!r} is already used by scenarios[{seen[s.name]}]")
            seen[s.name] = i
            if not has_folds and isinstance(s.clear_threshold, str):
                raise ValueError(f"scenarios[{i}].{_NO_FOLDS}")
        object.__setattr__(self, "scenarios", tuple(scen))
        object.__setattr__(self, "description", _text("description", self.description, 2000, allow_empty=True))

    def to_dict(self) -> dict[str, Any]:
        return {
            "lake": self.lake.to_dict(),
            "scenarios": [s.to_dict() for s in self.scenarios],
            "description": self.description,
        }

    @classmethod
    def from_dict(cls, data: object) -> Plan:
        if not isinstance(data, Mapping):
            raise ValueError("the plan must be a JSON object with 'lake' and 'scenarios'")
        _keys(data, ("lake", "scenarios"), ("description",))
        with _at("lake"):
            lake = ScenarioLake.from_dict(data["lake"])
        raw = data["scenarios"]
        if not isinstance(raw, list) or not raw:
            raise ValueError("scenarios must be a non-empty list of scenarios")
        scenarios = []
        for i, s in enumerate(raw):
            with _at(f"scenarios[{i}]"):
                scenarios.append(Scenario.from_dict(s))
        return cls(lake, tuple(scenarios), data.get("description") or "")

    def to_json(self) -> str:
        return json.dumps(self.to_dict(), indent=1)

    @classmethod
    def from_json(cls, text: str) -> Plan:
        return cls.from_dict(json.loads(text))


CLEAR_RULES = ("separatrix", "tipping_fold")
_NO_FOLDS = (
    "clear_threshold must be a TP [µg L⁻¹] for this lake: it has no folds (no tipping load), so there is "
    "no separatrix or tipping fold to define the clear state"
)


def scenario_clear_below_kg(lake: ScenarioLake, scenario: Scenario) -> float | None:
    """The scenario's fixed clear threshold [kg], or None for the separatrix rule.

    ``"tipping_fold"`` gives the P of the tipping fold; a number is a TP [µg L⁻¹].

    Raises
    ------
    ValueError
        When a fold-based rule is asked of a lake without folds.
    """
    rule = scenario.clear_threshold
    if not isinstance(rule, str):
        return float(lake.mass(rule))
    fs = folds(lake.params)
    if not fs:
        raise ValueError(_NO_FOLDS)
    return None if rule == "separatrix" else fs[0].p


def load_plan_file(path: str | Path) -> Plan:
    """Read and validate a PLAN.json file.

    Raises
    ------
    ValueError
        For a missing, unreadable, non-JSON or malformed plan; the message
        names the field to fix (``scenarios[1].load.percent must be between 0 and 100 [%]; got 120``).
    """
    p = Path(path)
    try:
        if p.is_dir():
            raise ValueError(f"plan file {str(path)!r} is a folder; give the PLAN.json file")
        raw = p.read_bytes()
    except OSError as exc:
        raise ValueError(f"cannot read plan file {str(path)!r}: {exc.strerror or exc}") from None
    if len(raw) > MAX_PLAN_BYTES:
        raise ValueError(f"plan file {str(path)!r} is larger than {MAX_PLAN_BYTES // 1_000_000} MB")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise ValueError(f"plan file {str(path)!r} is not UTF-8 text") from None
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise ValueError(
            f"plan file {str(path)!r} is not valid JSON: {exc.msg} at line {exc.lineno} column {exc.colno}"
        ) from None
    except RecursionError:
        raise ValueError(f"plan file {str(path)!r} is nested too deeply to be a plan") from None
    return Plan.from_dict(data)


# --------------------------------------------------------------------------
# thresholds
# --------------------------------------------------------------------------
def _separatrix_kg(params: LakeParameters, load: float, fs: tuple[Fold, ...]) -> float:
    tip, rec = fs[0], fs[1]
    if load >= tip.load:
        return tip.p
    if load <= rec.load:
        return rec.p
    mids = [e.p for e in equilibria(params, load) if e.branch == "middle"]
    if mids:
        return mids[0]
    # numerically at a fold: the nearer fold's P
    return tip.p if abs(load - tip.load) <= abs(load - rec.load) else rec.p


def clear_threshold_kg(
    params: LakeParameters, load: float, *, clear_below_kg: float | None = None, fs: tuple[Fold, ...] | None = None
) -> float:
    """Lake P [kg] below which the lake counts as clear at ``load`` [kg yr⁻¹].

    The unstable separatrix ``P_u(L)`` (middle equilibrium of
    ``L − s P + r P^q/(m^q + P^q) = 0``, Carpenter, Ludwig & Brock 1999),
    held at the tipping-fold P for loads at or above the tipping load and at
    the recovery-fold P at or below the recovery load; or ``clear_below_kg``
    when given.

    Raises
    ------
    ValueError
        When the lake has no folds and no fixed threshold is given.
    """
    if clear_below_kg is not None:
        return float(clear_below_kg)
    if fs is None:
        fs = folds(params)
    if not fs:
        raise ValueError(_NO_FOLDS)
    return _separatrix_kg(params, float(load), fs)


def _thresholds(
    params: LakeParameters, loads: NDArray[np.float64], clear_below_kg: float | None
) -> NDArray[np.float64]:
    """Threshold [kg] for years 0 … T: year 0 uses year 1's load."""
    fs = folds(params)
    cache: dict[float, float] = {}
    out = np.empty(loads.size + 1)
    for i, load in enumerate(np.concatenate([loads[:1], loads])):
        key = float(load)
        if key not in cache:
            cache[key] = clear_threshold_kg(params, key, clear_below_kg=clear_below_kg, fs=fs)
        out[i] = cache[key]
    return out


def recovery_years(clear: NDArray[np.bool_], stay_years: int) -> NDArray[np.float64]:
    """First year each member is clear and stays clear ``stay_years`` years; NaN when it never does.

    Parameters
    ----------
    clear : ndarray of bool, shape (members, T + 1)
        Clear flag in years 0 … T.
    stay_years : int
        ``k >= 1``: the run ``t … t + k − 1`` must be clear and end by year T.
    """
    clear = np.asarray(clear, dtype=bool)
    n, width = clear.shape
    k = int(stay_years)
    out = np.full(n, np.nan)
    if k < 1 or k > width:
        return out
    w = width - k + 1
    if k <= 16:  # ok[:, t]: clear in every year t … t + k − 1
        ok = clear[:, :w].copy()
        for j in range(1, k):
            ok &= clear[:, j : j + w]
    else:
        c = np.concatenate([np.zeros((n, 1), dtype=np.int64), np.cumsum(clear, axis=1)], axis=1)
        ok = (c[:, k:] - c[:, :-k]) == k
    has = ok.any(axis=1)
    out[has] = np.argmax(ok[has], axis=1)
    return out


# --------------------------------------------------------------------------
# random numbers shared by every ensemble
# --------------------------------------------------------------------------
def _n_sources(cv: float, sd: float) -> int:
    return int(cv > 0.0) + int(sd > 0.0)


def _varied(
    loads: NDArray[np.float64], z: NDArray[np.float64], cv: float, sd: float
) -> tuple[NDArray[np.float64], NDArray[np.float64] | None]:
    """Loads [kg yr⁻¹] and process noise [kg] for standard normals ``z`` of shape (members, sources, T).

    ``L_t μ_t`` with ``μ_t = exp(σ ε_t − σ²/2)``, ``σ² = ln(1 + cv²)``; noise ``sd η_t``.
    """
    if cv > 0.0:
        sigma = lognormal_sigma(cv)
        varied = loads * np.exp(sigma * z[:, 0, :] - 0.5 * sigma * sigma)
    else:
        varied = np.broadcast_to(loads, (z.shape[0], loads.shape[-1]))
    noise = sd * z[:, -1, :] if sd > 0.0 else None
    return varied, noise


def _report(progress: Progress | None, fraction: float, message: str) -> None:
    if progress is not None:
        progress(min(max(fraction, 0.0), 1.0), message)


def _check_cancel(cancel: Cancel | None) -> None:
    if cancel is not None and cancel():
        raise RunCancelled("the run was cancelled")


# --------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class FlipEstimate:
    """Ensemble estimate of the probability of flipping within ``within_years`` at a sustained load.

    Attributes
    ----------
    probability : float
        Fraction of members turbid in at least one of years 1 … N [–].
    standard_error : float
        Binomial Monte-Carlo error ``sqrt(p (1 − p)/M)`` [–].
    load_kg_per_yr, start_p_kg, threshold_p_kg : float
        The load [kg yr⁻¹], the starting lake P [kg] and the clear threshold [kg].
    """

    probability: float
    standard_error: float
    members: int
    within_years: int
    load_kg_per_yr: float
    start_p_kg: float
    threshold_p_kg: float
    status: Literal["ok", "starts_turbid"] = "ok"
    message: str = ""


@dataclass(frozen=True)
class PrecautionResult:
    """The largest sustained load with ``P(flip within N years) <= X``.

    Attributes
    ----------
    status : {"ok", "none", "no_variability"}
        ``none`` when even zero load breaks the limit; ``no_variability``
        when there is no noise, so the answer is the top of the clear range
        (the tipping load with the separatrix threshold) with zero error.
    load_kg_per_yr : float or None
        The precautionary load [kg yr⁻¹].
    standard_error_kg_per_yr : float or None
        Monte-Carlo error of the load [kg yr⁻¹] (delta method, module docstring).
    probability : float or None
        Ensemble flip probability at the answer [–].
    upper_limit_kg_per_yr : float
        Top of the searched range [kg yr⁻¹]: where the clear state reaches the threshold.
    """

    status: Literal["ok", "none", "no_variability"]
    load_kg_per_yr: float | None
    standard_error_kg_per_yr: float | None
    probability: float | None
    within_years: int
    max_probability: float
    members: int
    upper_limit_kg_per_yr: float
    slope_per_kg_per_yr: float | None
    iterations: int
    message: str


@dataclass(frozen=True, eq=False)
class ScenarioResult:
    """Outcomes of one scenario; arrays run over years 0 … T unless stated.

    Attributes
    ----------
    years : ndarray of int, (T + 1,)
    load_kg_per_yr : ndarray, (T,)
        Scheduled (mean) load of years 1 … T [kg yr⁻¹].
    threshold_tp_ug_l : ndarray
        Clear-state threshold [µg L⁻¹] (module docstring).
    tp_median_ug_l, tp_p05_ug_l, tp_p95_ug_l : ndarray
        Ensemble median and 5–95 % band of TP [µg L⁻¹].
    p_clear : ndarray
        Fraction of members clear [–].
    recovery_year : ndarray, (members,)
        Recovery year of each member, NaN when not recovered.
    recovery_years_median : float or None
        Median recovery year counting non-recovered members as never; None
        when fewer than half recover.
    p_recovered : float
    p_flip : float or None
        Flip probability of members that start clear; None when none does.
    p_relapse : float or None
        Of recovered members, the fraction turbid again later; None when none recovered.
    p_clear_final, p_clear_final_se : float
        Fraction clear in year T and its binomial Monte-Carlo error [–].
    final_tp_median_ug_l, final_tp_p05_ug_l, final_tp_p95_ug_l : float
        End state [µg L⁻¹].
    end_state : {"clear", "turbid", "mixed"}
        ``clear`` when at least 95 % of members are clear in year T, ``turbid`` when at most 5 %.
    load_cut_kg : float
        ``Σ_t (L_base − L_t)`` [kg] against the do-nothing baseline (load held at its start).
    in_lake_removal_kg : float
        Mean P actually removed in the lake [kg] (a removal takes at most what the lake holds).
    sample_tp_ug_l : ndarray, (k, T + 1)
        The first ``k`` members' TP paths [µg L⁻¹].
    """

    name: str
    scenario: Scenario
    lake: ScenarioLake
    years: NDArray[np.int64]
    load_kg_per_yr: NDArray[np.float64]
    threshold_tp_ug_l: NDArray[np.float64]
    tp_median_ug_l: NDArray[np.float64]
    tp_p05_ug_l: NDArray[np.float64]
    tp_p95_ug_l: NDArray[np.float64]
    p_clear: NDArray[np.float64]
    recovery_year: NDArray[np.float64]
    recovery_years_median: float | None
    p_recovered: float
    p_flip: float | None
    p_relapse: float | None
    p_clear_final: float
    p_clear_final_se: float
    final_tp_median_ug_l: float
    final_tp_p05_ug_l: float
    final_tp_p95_ug_l: float
    end_state: Literal["clear", "turbid", "mixed"]
    load_cut_kg: float
    in_lake_removal_kg: float
    sample_tp_ug_l: NDArray[np.float64]
    precaution: PrecautionResult | None = None
    status: Literal["ok"] = "ok"
    message: str = ""

    @property
    def total_removed_kg(self) -> float:
        """External load cut plus in-lake removal [kg], against the do-nothing baseline."""
        return self.load_cut_kg + self.in_lake_removal_kg

    def summary(self) -> dict[str, Any]:
        """The five outcome numbers of the ``turnback compare --json`` contract."""
        return {
            "name": self.name,
            "p_clear_final": self.p_clear_final,
            "p_flip": self.p_flip,
            "recovery_years_median": self.recovery_years_median,
            "final_tp_median_ug_l": self.final_tp_median_ug_l,
        }

    def details(self) -> dict[str, Any]:
        """Summary plus the other scalar outcomes (JSON-ready, no NaN)."""
        rec = self.recovery_year[np.isfinite(self.recovery_year)]
        out = self.summary() | {
            "members": self.scenario.members,
            "years": self.scenario.years,
            "p_clear_final_se": self.p_clear_final_se,
            "p_recovered": self.p_recovered,
            "p_relapse": self.p_relapse,
            "recovery_years_p05": float(np.percentile(rec, 5)) if rec.size else None,
            "recovery_years_p95": float(np.percentile(rec, 95)) if rec.size else None,
            "final_tp_p05_ug_l": self.final_tp_p05_ug_l,
            "final_tp_p95_ug_l": self.final_tp_p95_ug_l,
            "end_state": self.end_state,
            "load_cut_kg": self.load_cut_kg,
            "in_lake_removal_kg": self.in_lake_removal_kg,
            "total_removed_kg": self.total_removed_kg,
            "final_threshold_tp_ug_l": float(self.threshold_tp_ug_l[-1]),
            "message": self.message,
        }
        if self.precaution is not None:
            pr = self.precaution
            out["precaution"] = {
                "status": pr.status,
                "load_kg_per_yr": pr.load_kg_per_yr,
                "standard_error_kg_per_yr": pr.standard_error_kg_per_yr,
                "probability": pr.probability,
                "within_years": pr.within_years,
                "max_probability": pr.max_probability,
                "message": pr.message,
            }
        return out


@dataclass(frozen=True, eq=False)
class Comparison:
    """All scenarios of a plan, in input order, with the lake's folds."""

    plan: Plan
    results: tuple[ScenarioResult, ...]
    regime: str
    tipping_load_kg_per_yr: float | None
    recovery_load_kg_per_yr: float | None
    status: Literal["ok"] = "ok"
    message: str = ""


# --------------------------------------------------------------------------
# running scenarios
# --------------------------------------------------------------------------
def _median_recovery(rec: NDArray[np.float64]) -> float | None:
    n = rec.size
    finite = np.sort(rec[np.isfinite(rec)])
    if 2 * finite.size < n or finite.size == 0:
        return None
    full = np.concatenate([finite, np.full(n - finite.size, np.inf)])
    med = float(np.median(full))
    if math.isfinite(med):
        return med
    return float(full[(n - 1) // 2])  # exactly half recovered: the lower median


def run_scenario(
    lake: ScenarioLake,
    scenario: Scenario,
    *,
    rng: RngLike = None,
    progress: Progress | None = None,
    cancel: Cancel | None = None,
    sample_paths: int = 20,
    with_precaution: bool = True,
) -> ScenarioResult:
    """Run one scenario's ensemble through the annual map and summarise it.

    Parameters
    ----------
    lake : ScenarioLake
    scenario : Scenario
    rng : numpy Generator, int or None
        Random numbers; None uses ``default_rng(scenario.seed)``.  Member
        ``i`` draws its standard normals (load, then process noise; shape
        (sources, T)) in member order, so results do not depend on how the
        run is chunked.
    progress : callable(fraction, message), optional
    cancel : callable() -> bool, optional
        Checked between chunks of members; True raises :class:`RunCancelled`.
    sample_paths : int
        How many members' TP paths to keep.
    with_precaution : bool
        Also solve ``scenario.precaution`` when set.

    Returns
    -------
    ScenarioResult
    """
    params = lake.params
    gen = np.random.default_rng(scenario.seed if rng is None else rng)
    T, M = scenario.years, scenario.members
    loads = scenario.loads()
    removal = scenario.removal_by_year()
    scale = scenario.recycling_scale_by_year()
    thr = _thresholds(params, loads, scenario_clear_below_kg(lake, scenario))
    p0 = lake.initial_p_kg
    cv, sd = scenario.variability_cv, scenario.process_noise_sd_kg
    n_src = _n_sources(cv, sd)
    has_prec = with_precaution and scenario.precaution is not None
    share = 0.6 if has_prec else 1.0
    _check_cancel(cancel)
    if n_src == 0:
        one = simulate(params, p0, loads[None, :], recycling_scale=scale, removal=removal).p
        P = np.broadcast_to(one, (M, T + 1))
    else:
        P = np.empty((M, T + 1))
        for start in range(0, M, _CHUNK_MEMBERS):
            _check_cancel(cancel)
            c = min(_CHUNK_MEMBERS, M - start)
            z = gen.standard_normal((c, n_src, T))
            varied, noise = _varied(loads, z, cv, sd)
            # year-major memory so that each year's slice is contiguous inside simulate (faster)
            P[start : start + c] = simulate(
                params,
                p0,
                np.asfortranarray(varied),
                recycling_scale=scale,
                removal=removal,
                process_noise=None if noise is None else np.asfortranarray(noise),
            ).p
            _report(progress, share * (start + c) / M, f"{scenario.name}: {start + c:,} of {M:,} members")
    to_tp = 1.0e6 / lake.volume_m3  # TP [µg L⁻¹] per kg
    # percentiles along members, on the time-major view (faster); identical members need one row
    q05, q50, q95 = to_tp * np.percentile((P if n_src else P[:1]).T, [5.0, 50.0, 95.0], axis=1)
    clear = P < thr[None, :]
    p_clear = clear.mean(axis=0)
    rec = recovery_years(clear, scenario.recovery_stay_years)
    recovered = np.isfinite(rec)
    starts = clear[:, 0]
    p_flip = float((~clear[starts, 1:].all(axis=1)).mean()) if starts.any() else None
    p_relapse: float | None = None
    if recovered.any():
        bad = ~clear
        any_bad = bad.any(axis=1)
        last_bad = np.where(any_bad, T - np.argmax(bad[:, ::-1], axis=1), -1)
        relapsed = recovered & (last_bad > np.where(recovered, rec, np.inf))
        p_relapse = float(relapsed.sum() / recovered.sum())
    p_final = float(p_clear[-1])
    final = to_tp * P[:, -1]
    end_state: Literal["clear", "turbid", "mixed"] = (
        "clear" if p_final >= 0.95 else "turbid" if p_final <= 0.05 else "mixed"
    )
    load_cut = float(np.sum(scenario.load.baseline_kg_per_yr - loads))
    has_removal = removal > 0.0
    removed = (
        float(np.minimum(P[:, :-1][:, has_removal], removal[has_removal]).sum(axis=1).mean())
        if (has_removal.any())
        else 0.0
    )
    med = _median_recovery(rec)
    msg = f"{p_final:.0%} of {M:,} member{'s' if M != 1 else ''} clear in year {T}"
    msg += f"; median recovery year {med:g}" if med is not None else "; fewer than half recover"
    if scenario.stochastic and M < 200:
        msg += f"; only {M} members, so probabilities are rough (±{math.sqrt(0.25 / M):.0%})"
    precaution = None
    if has_prec:
        precaution = scenario_precaution(
            lake,
            scenario,
            rng=gen if rng is not None else None,
            progress=None
            if progress is None
            else (lambda f, m: _report(progress, share + (1 - share) * f, f"{scenario.name}: {m}")),
            cancel=cancel,
        )
    _report(progress, 1.0, f"{scenario.name}: done")
    k = max(0, min(int(sample_paths), M))
    return ScenarioResult(
        name=scenario.name,
        scenario=scenario,
        lake=lake,
        years=np.arange(T + 1),
        load_kg_per_yr=loads,
        threshold_tp_ug_l=lake.tp(thr),
        tp_median_ug_l=q50,
        tp_p05_ug_l=q05,
        tp_p95_ug_l=q95,
        p_clear=p_clear,
        recovery_year=rec,
        recovery_years_median=med,
        p_recovered=float(recovered.mean()),
        p_flip=p_flip,
        p_relapse=p_relapse,
        p_clear_final=p_final,
        p_clear_final_se=math.sqrt(p_final * (1.0 - p_final) / M),
        final_tp_median_ug_l=float(np.median(final)),
        final_tp_p05_ug_l=float(np.percentile(final, 5.0)),
        final_tp_p95_ug_l=float(np.percentile(final, 95.0)),
        end_state=end_state,
        load_cut_kg=load_cut,
        in_lake_removal_kg=removed,
        sample_tp_ug_l=to_tp * np.array(P[:k]),
        precaution=precaution,
        message=msg,
    )


def compare_plan(
    plan: Plan,
    *,
    progress: Progress | None = None,
    cancel: Cancel | None = None,
    sample_paths: int = 20,
) -> Comparison:
    """Run every scenario of ``plan`` (each with its own seed) and return them in input order.

    ``progress(fraction, message)`` is called as members finish, weighted
    by members × years; ``cancel()`` is checked between chunks.
    """
    fs = folds(plan.lake.params)
    weights = [float(s.members * s.years) * (2.0 if s.precaution else 1.0) for s in plan.scenarios]
    total = sum(weights)
    done = 0.0
    results = []
    for s, w in zip(plan.scenarios, weights, strict=True):
        base = done

        def sub(f: float, m: str, base: float = base, w: float = w) -> None:
            _report(progress, (base + f * w) / total, m)

        results.append(run_scenario(plan.lake, s, progress=sub, cancel=cancel, sample_paths=sample_paths))
        done += w
    reg = "reversible" if not fs else ("irreversible" if fs[1].load <= 0.0 else "hysteretic")
    return Comparison(
        plan=plan,
        results=tuple(results),
        regime=reg,
        tipping_load_kg_per_yr=fs[0].load if fs else None,
        recovery_load_kg_per_yr=fs[1].load if fs else None,
        message=f"{len(results)} scenario{'s' if len(results) != 1 else ''} compared",
    )


# --------------------------------------------------------------------------
# flip probability and the precautionary load
# --------------------------------------------------------------------------
def _clear_equilibrium(params: LakeParameters, load: float) -> float:
    """The lowest stable equilibrium at ``load`` [kg] (the clear state, or the only state)."""
    eqs = [e for e in equilibria(params, load) if e.branch in ("lower", "single")]
    if not eqs:
        raise ValueError(f"the lake has no clear state at load {load:g} kg/yr (above the tipping load)")
    return eqs[0].p


def _load_at_equilibrium(params: LakeParameters, p: float) -> float:
    """Load [kg yr⁻¹] that holds the lake at P [kg]: ``s P − r P^q/(m^q + P^q)``."""
    return params.s * p - params.r * float(recycling_fraction(p, params.m, params.q))


def _flips(
    params: LakeParameters,
    load: float,
    z: NDArray[np.float64],
    cv: float,
    sd: float,
    p0: float | None,
    clear_below_kg: float | None,
    fs: tuple[Fold, ...],
) -> tuple[NDArray[np.bool_], float, float]:
    thr = clear_threshold_kg(params, load, clear_below_kg=clear_below_kg, fs=fs)
    start = _clear_equilibrium(params, load) if p0 is None else float(p0)
    n = z.shape[0]
    if start >= thr:
        return np.ones(n, dtype=bool), start, thr
    loads = np.full(z.shape[-1], float(load))
    if z.shape[1] == 0:
        varied: NDArray[np.float64] = np.broadcast_to(loads, (n, loads.size))
        noise = None
    else:
        varied, noise = _varied(loads, z, cv, sd)
    P = simulate(params, start, varied, process_noise=noise).p
    flipped: NDArray[np.bool_] = np.asarray((P[:, 1:] >= thr).any(axis=1), dtype=bool)
    return flipped, start, thr


def flip_probability(
    params: LakeParameters,
    load: float,
    *,
    within_years: int,
    variability_cv: float,
    process_noise_sd_kg: float = 0.0,
    members: int = 2000,
    p0_kg: float | None = None,
    clear_below_kg: float | None = None,
    rng: RngLike = None,
) -> FlipEstimate:
    """Probability that a clear lake turns turbid within ``within_years`` at a sustained load.

    Members start at ``p0_kg`` (default: the clear equilibrium at ``load``)
    and run the annual map with the mean-preserving lognormal load
    ``L μ_t`` and optional process noise; a member flips when its P reaches
    the clear threshold (:func:`clear_threshold_kg`) in any of years 1 … N.

    Returns
    -------
    FlipEstimate
        With the binomial standard error ``sqrt(p (1 − p) / M)``.
    """
    load = _num("load", load, lo=0.0, unit="[kg yr⁻¹]")
    n_years = _int("within_years", within_years, 1, MAX_YEARS)
    m = _int("members", members, 1, MAX_MEMBERS)
    cv = _num("variability_cv", variability_cv, lo=0.0, hi=5.0)
    sd = _num("process_noise_sd_kg", process_noise_sd_kg, lo=0.0)
    fs = folds(params)
    gen = np.random.default_rng(rng)
    z = gen.standard_normal((m, _n_sources(cv, sd), n_years))
    flipped, start, thr = _flips(params, load, z, cv, sd, p0_kg, clear_below_kg, fs)
    p = float(flipped.mean())
    if start >= thr:
        return FlipEstimate(
            1.0,
            0.0,
            m,
            n_years,
            load,
            start,
            thr,
            "starts_turbid",
            "the starting state is not below the clear threshold",
        )
    return FlipEstimate(
        p,
        math.sqrt(p * (1.0 - p) / m),
        m,
        n_years,
        load,
        start,
        thr,
        "ok",
        f"{p:.1%} of {m:,} members flip within {n_years} years",
    )


def precautionary_load(
    params: LakeParameters,
    *,
    within_years: int,
    max_probability: float,
    variability_cv: float,
    process_noise_sd_kg: float = 0.0,
    members: int = 2000,
    clear_below_kg: float | None = None,
    rng: RngLike = None,
    load_rtol: float = 1e-4,
    max_iter: int = 60,
    progress: Progress | None = None,
    cancel: Cancel | None = None,
) -> PrecautionResult:
    r"""Largest sustained load ``L*`` with ``P(flip within N years | start clear at L) <= X``.

    One set of standard normals (members × sources × N) is drawn and reused
    for every trial load (common random numbers), so the ensemble estimate
    :math:`\hat p(L)` is a step function that is non-decreasing in ``L``
    for ``s <= 1`` (the annual map is then increasing in both ``P`` and
    ``L``).  Bisection on ``[0, L_max)`` keeps ``p̂(lo) <= X < p̂(hi)``
    until ``hi − lo <= load_rtol · L_max``; ``L* = lo``.  ``L_max`` is where
    the clear state reaches the threshold (the tipping load with the
    separatrix threshold, Carpenter, Ludwig & Brock 1999).

    Monte-Carlo error: ``SE_p = sqrt(X (1 − X) / M)`` converted to load by
    the local slope, ``SE_L = SE_p / (dp̂/dL)``, with ``dp̂/dL`` a central
    difference over ``L* ± h`` on the same random numbers; ``h`` starts at
    2 % of ``L_max`` and doubles (up to 32 %) until at least 10 members
    change state.

    Parameters
    ----------
    params : LakeParameters
    within_years : int
        ``N`` [yr].
    max_probability : float
        ``X`` in (0, 1) [–].
    variability_cv, process_noise_sd_kg : float
        As in :class:`Scenario`.
    members : int
        Ensemble size ``M``.
    clear_below_kg : float, optional
        Fixed clear threshold [kg]; default the separatrix.
    rng : numpy Generator, int or None
    load_rtol : float
        Bisection tolerance relative to ``L_max``.
    max_iter : int
    progress, cancel : callables, optional
        As in :func:`run_scenario`; checked every bisection step.
    """
    n_years = _int("within_years", within_years, 1, MAX_YEARS)
    x = _num("max_probability", max_probability, lo=0.0, hi=1.0, lo_open=True, hi_open=True)
    m = _int("members", members, 1, MAX_MEMBERS)
    if m * n_years > MAX_CELLS:
        raise ValueError(f"members × within_years must be at most {MAX_CELLS:,}")
    cv = _num("variability_cv", variability_cv, lo=0.0, hi=5.0)
    sd = _num("process_noise_sd_kg", process_noise_sd_kg, lo=0.0)
    tol = _num("load_rtol", load_rtol, lo=0.0, hi=0.1, lo_open=True)
    fs = folds(params)
    if clear_below_kg is None:
        if not fs:
            raise ValueError(_NO_FOLDS)
        l_max = fs[0].load
    else:
        thr = _num("clear_below_kg", clear_below_kg, lo=0.0, lo_open=True, unit="[kg]")
        if fs and thr >= fs[0].p:
            l_max = fs[0].load  # the clear branch ends (tipping fold) before it reaches the threshold
        else:
            l_max = _load_at_equilibrium(params, thr)  # the clear (or only) branch reaches the threshold here
    if l_max <= 0.0:
        return PrecautionResult(
            "none",
            None,
            None,
            None,
            n_years,
            x,
            m,
            l_max,
            None,
            0,
            "the clear state is at or above the threshold even at zero load",
        )
    if _n_sources(cv, sd) == 0:
        return PrecautionResult(
            "no_variability",
            l_max,
            0.0,
            0.0,
            n_years,
            x,
            m,
            l_max,
            None,
            0,
            "without variability a lake at its clear state stays there up to the top of the clear range",
        )
    gen = np.random.default_rng(rng)
    z = gen.standard_normal((m, _n_sources(cv, sd), n_years))
    top = l_max * (1.0 - 1e-9)

    def p_hat(load: float) -> float:
        return float(_flips(params, load, z, cv, sd, None, clear_below_kg, fs)[0].mean())

    p_lo = p_hat(0.0)
    if p_lo > x:
        return PrecautionResult(
            "none",
            None,
            None,
            p_lo,
            n_years,
            x,
            m,
            l_max,
            None,
            1,
            f"even at zero load {p_lo:.1%} of members flip within {n_years} years, above {x:.1%}",
        )
    lo, hi = 0.0, top
    p_at_lo = p_lo
    it = 0
    n_planned = max(1, math.ceil(math.log2(1.0 / tol)))
    while hi - lo > tol * l_max and it < max_iter:
        _check_cancel(cancel)
        mid = 0.5 * (lo + hi)
        pm = p_hat(mid)
        if pm <= x:
            lo, p_at_lo = mid, pm
        else:
            hi = mid
        it += 1
        _report(progress, 0.9 * min(it / n_planned, 1.0), f"precautionary load: step {it}")
    # local slope on the same random numbers
    slope = None
    h = 0.02 * l_max
    for _ in range(5):
        a, b = max(0.0, lo - h), min(top, lo + h)
        pa, pb = p_hat(a), p_hat(b)
        if (pb - pa) * m >= 10 or h >= 0.32 * l_max:
            slope = (pb - pa) / (b - a) if b > a else None
            break
        h *= 2.0
    _report(progress, 1.0, "precautionary load: done")
    se_p = math.sqrt(x * (1.0 - x) / m)
    se = se_p / slope if slope else None
    msg = f"largest sustained load with at most {x:.1%} chance of flipping within {n_years} years: {lo:,.0f} kg/yr"
    msg += f" ± {se:,.0f} (Monte-Carlo error)" if se is not None else " (Monte-Carlo error not available)"
    return PrecautionResult("ok", lo, se, p_at_lo, n_years, x, m, l_max, slope, it, msg)


def scenario_precaution(
    lake: ScenarioLake,
    scenario: Scenario,
    *,
    rng: RngLike = None,
    progress: Progress | None = None,
    cancel: Cancel | None = None,
) -> PrecautionResult:
    """:func:`precautionary_load` for ``scenario.precaution`` under the scenario's variability and members.

    ``rng`` None uses ``default_rng(scenario.seed)``.
    """
    if scenario.precaution is None:
        raise ValueError("precaution is not set for this scenario")
    pr = scenario.precaution
    clear_below = scenario_clear_below_kg(lake, scenario)
    return precautionary_load(
        lake.params,
        within_years=pr.within_years,
        max_probability=pr.max_percent / 100.0,
        variability_cv=scenario.variability_cv,
        process_noise_sd_kg=scenario.process_noise_sd_kg,
        members=min(scenario.members, MAX_CELLS // pr.within_years),
        clear_below_kg=clear_below,
        rng=np.random.default_rng(scenario.seed) if rng is None else rng,
        progress=progress,
        cancel=cancel,
    )
