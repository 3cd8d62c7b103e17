r"""Scenario plans: the lake, the scenarios and the plan that holds them.

A *scenario* is a plan over a horizon of ``years`` for one lake: a load
schedule, optional in-lake treatments (:mod:`turnback.model.schedules`),
year-to-year load variability and process noise, an ensemble size and a
seed, and the rule that says when the lake counts as clear
(:mod:`turnback.model.clear_state`).  A *plan* is a lake and the scenarios to
compare for it; it is what a PLAN.json file holds (read by
:mod:`turnback.model.io.plan_file`).  The simulation and its outcomes are in
:mod:`turnback.model.ensemble`.

Year numbering
    Year 0 is the starting state (``initial_tp_ug_l``).  Year ``t`` (1 ≤ t ≤
    ``years``) is the ``t``-th simulated year: its load, removal and
    inactivation act during that year, and the state reported for year ``t``
    is lake P at the end of it.  Trajectories have ``years + 1`` points.

Every class validates on construction and raises
:class:`~turnback.model.validation.FieldError` with the path of the bad
field, so ``Plan.from_dict`` on a bad plan says, for example,
``scenarios[1].load.percent must be between 0 and 100 [%]; got 120``.

References
----------
Carpenter, S. R., Ludwig, D. & Brock, W. A. (1999). Management of
eutrophication for lakes subject to potentially irreversible change.
Ecological Applications 9(3), 751–771.
"""

from __future__ import annotations

import json
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np
from numpy.typing import NDArray

from . import units
from .dynamics import MAX_LOSS_RATE
from .lake_models import AnyLakeParameters, lake_folds, model_name
from .parameter_draws import ParameterDraws
from .params import LakeParameters
from .schedules import (
    MAX_YEARS,
    ConstantLoad,
    Inactivation,
    LinearCut,
    LoadSchedule,
    Removal,
    StepLoad,
    TableLoad,
    Treatment,
    load_from_dict,
    treatment_from_dict,
)
from .two_pool import TwoPoolParameters, check_map_limits
from .validation import FieldError, known_keys, mapping, number, text, whole, within

__all__ = [
    "CLEAR_RULES",
    "MAX_CELLS",
    "MAX_MEMBERS",
    "MAX_SCENARIOS",
    "MAX_YEARS",
    "NO_FOLDS",
    "Plan",
    "Precaution",
    "Scenario",
    "ScenarioLake",
]

#: Largest ensemble of a scenario.
MAX_MEMBERS = 100_000
#: Members × years held in memory at once.
MAX_CELLS = 5_000_000
#: Most scenarios in one plan.
MAX_SCENARIOS = 50

CLEAR_RULES = ("separatrix", "tipping_fold")
_TWO_POOL_DRAWS = (
    "is for one-box lakes only: a two-pool lake's sediment parameters are set by you, not drawn from a fit; "
    "leave parameter_draws out, or plan with the one-box lake of the fit"
)
NO_FOLDS = (
    "must be a TP [µg L⁻¹] for this lake: it has no folds (no tipping load), so there is "
    "no separatrix or tipping fold to define the clear state"
)


@dataclass(frozen=True)
class ScenarioLake:
    """The lake a plan is about: model parameters, volume and starting state.

    Parameters
    ----------
    params : LakeParameters or TwoPoolParameters
        One-box: ``s`` [yr⁻¹] (below 2 for the annual map), ``r`` [kg yr⁻¹],
        ``m`` [kg], ``q`` [–].  Two-pool (:mod:`turnback.model.two_pool`):
        ``s``, ``h``, ``b``, ``r`` [yr⁻¹] with ``s + h <= 1`` and
        ``b + r <= 1``, ``m`` [kg], ``q`` [–].
    volume_m3 : float
        Lake volume [m³], > 0; converts P [kg] to TP [µg L⁻¹] as ``TP = 10⁶ P / V``.
    initial_tp_ug_l : float
        Total phosphorus at year 0 [µg L⁻¹], >= 0.
    name : str
        Display name.
    initial_sediment_p_kg : float or None
        Two-pool lake only: mobile sediment P at year 0 [kg], >= 0; None
        (the default) is the balance ``M* = s P₀ / (b + r g(P₀))`` with the
        starting water P.
    parameter_draws : ParameterDraws or None
        One-box lake only: parameter sets the record leaves possible
        (:mod:`turnback.model.parameter_draws`); member ``i`` of every
        scenario runs set ``i mod n``.  ``params`` stays the lake's nominal
        parameters (the folds shown, and the clear threshold of any set
        without folds).  A two-pool lake refuses them: its sediment
        parameters are set by the user, not drawn from a fit.
    """

    params: AnyLakeParameters
    volume_m3: float
    initial_tp_ug_l: float
    name: str = "lake"
    initial_sediment_p_kg: float | None = None
    parameter_draws: ParameterDraws | None = None

    def __post_init__(self) -> None:
        if self.parameter_draws is not None:
            if isinstance(self.params, TwoPoolParameters):
                raise FieldError(("parameter_draws",), _TWO_POOL_DRAWS)
            if not isinstance(self.parameter_draws, ParameterDraws):
                raise FieldError(("parameter_draws",), "must be ParameterDraws")
        if isinstance(self.params, TwoPoolParameters):
            check_map_limits(self.params)
            if self.initial_sediment_p_kg is not None:
                object.__setattr__(
                    self,
                    "initial_sediment_p_kg",
                    number(self.initial_sediment_p_kg, ("initial_sediment_p_kg",), lo=0.0, unit="[kg]"),
                )
        elif not isinstance(self.params, LakeParameters):
            raise FieldError(("params",), "must be LakeParameters or TwoPoolParameters")
        elif self.params.s >= MAX_LOSS_RATE:
            raise FieldError(
                ("loss_rate",), f"must be below {MAX_LOSS_RATE:g} [yr⁻¹] for the annual model; got {self.params.s:g}"
            )
        elif self.initial_sediment_p_kg is not None:
            raise FieldError(("initial_sediment_p_kg",), "belongs to the two-pool lake ('model': 'two-pool')")
        object.__setattr__(self, "volume_m3", number(self.volume_m3, ("volume_m3",), lo=0.0, lo_open=True, unit="[m³]"))
        object.__setattr__(
            self, "initial_tp_ug_l", number(self.initial_tp_ug_l, ("initial_tp_ug_l",), lo=0.0, unit="[µg L⁻¹]")
        )
        object.__setattr__(self, "name", text(self.name, ("name",)))

    @property
    def model(self) -> str:
        """``"one-box"`` or ``"two-pool"``."""
        return model_name(self.params)

    @property
    def initial_p_kg(self) -> float:
        """Lake (water) P at year 0 [kg]."""
        return float(self.mass(self.initial_tp_ug_l))

    @property
    def initial_m_kg(self) -> float | None:
        """Two-pool lake: sediment P at year 0 [kg] (given, or in balance with the water); None for one-box."""
        if not isinstance(self.params, TwoPoolParameters):
            return None
        if self.initial_sediment_p_kg is not None:
            return self.initial_sediment_p_kg
        return float(self.params.sediment_balance(self.initial_p_kg))

    def tp(self, p_kg: Any) -> Any:
        """Total phosphorus [µg L⁻¹] from lake P [kg]: ``10⁶ P / V``."""
        return units.tp_ug_l(p_kg, self.volume_m3)

    def mass(self, tp_ug_l: Any) -> Any:
        """Lake P [kg] from total phosphorus [µg L⁻¹]: ``TP V / 10⁶``."""
        return units.p_kg(tp_ug_l, self.volume_m3)

    _PARAM_KEYS: ClassVar[tuple[str, ...]] = ("loss_rate", "recycling_max", "recycling_half", "recycling_exponent")
    _TWO_POOL_KEYS: ClassVar[tuple[str, ...]] = (
        "sedimentation",
        "outflow",
        "burial",
        "recycling_rate",
        "recycling_half",
        "recycling_exponent",
    )

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"model": "two-pool"} if isinstance(self.params, TwoPoolParameters) else {}
        out |= {
            **self.params.to_dict(),
            "volume_m3": self.volume_m3,
            "initial_tp_ug_l": self.initial_tp_ug_l,
            "name": self.name,
        }
        if self.initial_sediment_p_kg is not None:
            out["initial_sediment_p_kg"] = self.initial_sediment_p_kg
        if self.parameter_draws is not None:
            out["parameter_draws"] = self.parameter_draws.to_list()
        return out

    @classmethod
    def from_dict(cls, data: object) -> ScenarioLake:
        d = mapping(
            data,
            (),
            "the lake's loss_rate, recycling_max, recycling_half, recycling_exponent, volume_m3, initial_tp_ug_l",
        )
        model = d.get("model", "one-box")
        if model == "two-pool" and "parameter_draws" in d:
            raise FieldError(("parameter_draws",), _TWO_POOL_DRAWS)
        if model == "two-pool":
            known_keys(
                d,
                (),
                (*cls._TWO_POOL_KEYS, "volume_m3", "initial_tp_ug_l"),
                ("model", "name", "initial_sediment_p_kg"),
            )
            two = TwoPoolParameters(**{k: d[k] for k in cls._TWO_POOL_KEYS})
            return cls(two, d["volume_m3"], d["initial_tp_ug_l"], d.get("name", "lake"), d.get("initial_sediment_p_kg"))
        if model != "one-box":
            raise FieldError(("model",), f"must be 'one-box' or 'two-pool'; got {model!r}")
        optional = ("name", "model", "parameter_draws") if "model" in d else ("name", "parameter_draws")
        known_keys(d, (), (*cls._PARAM_KEYS, "volume_m3", "initial_tp_ug_l"), optional)
        for key in cls._PARAM_KEYS:
            number(d[key], (key,), lo=0.0, lo_open=True)  # a type message naming the field
        params = LakeParameters(**{k: d[k] for k in cls._PARAM_KEYS})
        draws = None if d.get("parameter_draws") is None else ParameterDraws.from_list(d["parameter_draws"])
        return cls(params, d["volume_m3"], d["initial_tp_ug_l"], d.get("name", "lake"), parameter_draws=draws)


# load schedules
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class Precaution:
    """Ask for the largest sustained load with ``P(flip within within_years) <= max_percent`` %."""

    within_years: int
    max_percent: float

    def __post_init__(self) -> None:
        object.__setattr__(self, "within_years", whole(self.within_years, ("within_years",), 1, MAX_YEARS))
        object.__setattr__(
            self,
            "max_percent",
            number(self.max_percent, ("max_percent",), lo=0.0, hi=100.0, lo_open=True, hi_open=True, unit="[%]"),
        )

    def to_dict(self) -> dict[str, Any]:
        return {"within_years": self.within_years, "max_percent": self.max_percent}

    @classmethod
    def from_dict(cls, data: object) -> Precaution:
        d = mapping(data, (), "within_years and max_percent")
        known_keys(d, (), ("within_years", "max_percent"))
        return cls(d["within_years"], d["max_percent"])


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
        set_(self, "name", text(self.name, ("name",)))
        years = whole(self.years, ("years",), 1, MAX_YEARS)
        set_(self, "years", years)
        if not isinstance(self.load, ConstantLoad | LinearCut | StepLoad | TableLoad):
            raise FieldError(("load",), "must be a load schedule (constant, linear_cut, step or table)")
        if isinstance(self.load, TableLoad) and len(self.load.kg_per_yr) != years:
            raise FieldError(
                ("load", "kg_per_yr"),
                f"must have one value a year: {years} values for years = {years}; got {len(self.load.kg_per_yr)}",
            )
        if isinstance(self.load, StepLoad) and self.load.year > years:
            raise FieldError(
                ("load", "year"), f"must be between 1 and {years} (the scenario's years); got {self.load.year}"
            )
        set_(self, "variability_cv", number(self.variability_cv, ("variability_cv",), lo=0.0, hi=5.0, unit="[–]"))
        set_(
            self, "process_noise_sd_kg", number(self.process_noise_sd_kg, ("process_noise_sd_kg",), lo=0.0, unit="[kg]")
        )
        members = whole(self.members, ("members",), 1, MAX_MEMBERS)
        if members * years > MAX_CELLS:
            raise FieldError(
                ("members",),
                f"× years must be at most {MAX_CELLS:,} (got {members} × {years}); "
                "use fewer members or a shorter horizon",
            )
        set_(self, "members", members)
        if self.seed is not None:
            set_(self, "seed", whole(self.seed, ("seed",), 0, 2**63 - 1))
        treatments = self.treatments
        if isinstance(treatments, str | bytes | Mapping) or not isinstance(treatments, Sequence):
            raise FieldError(("treatments",), "must be a list")
        for i, t in enumerate(treatments):
            if not isinstance(t, Removal | Inactivation):
                raise FieldError(("treatments", i), "must be a removal or an inactivation")
            if t.year > years:
                raise FieldError(
                    ("treatments", i, "year"), f"must be between 1 and {years} (the scenario's years); got {t.year}"
                )
        set_(self, "treatments", tuple(treatments))
        rule = self.clear_threshold
        if isinstance(rule, str):
            if rule not in CLEAR_RULES:
                rules = " or ".join(repr(r) for r in CLEAR_RULES)
                raise FieldError(("clear_threshold",), f"must be {rules} or a TP [µg L⁻¹]; got {rule!r}")
        else:
            set_(self, "clear_threshold", number(rule, ("clear_threshold",), lo=0.0, lo_open=True, unit="[µg L⁻¹]"))
        set_(self, "recovery_stay_years", whole(self.recovery_stay_years, ("recovery_stay_years",), 1, MAX_YEARS))
        if self.precaution is not None and not isinstance(self.precaution, Precaution):
            raise FieldError(("precaution",), "must be a Precaution")
        set_(self, "description", text(self.description, ("description",), 2000, allow_empty=True))

    # schedules --------------------------------------------------------
    def loads(self) -> NDArray[np.float64]:
        """Scheduled load of years 1 … ``years`` [kg yr⁻¹] (the mean of the varied load)."""
        return self.load.loads(self.years)

    def removal_by_year(self) -> NDArray[np.float64]:
        """In-lake removal from the water scheduled at the start of years 1 … ``years`` [kg]."""
        out = np.zeros(self.years)
        for t in self.treatments:
            if isinstance(t, Removal) and t.pool == "water":
                out[t.year - 1] += t.kg
        return out

    def sediment_removal_by_year(self) -> NDArray[np.float64]:
        """Sediment P dredged at the start of years 1 … ``years`` [kg] (two-pool lakes)."""
        out = np.zeros(self.years)
        for t in self.treatments:
            if isinstance(t, Removal) and t.pool == "sediment":
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
        d = mapping(data, (), "a scenario with name, years and load")
        known_keys(d, (), ("name", "years", "load"), cls._OPTIONAL)
        with within("load"):
            load = load_from_dict(d["load"])
        raw_t = d.get("treatments", [])
        if raw_t is None:
            raw_t = []
        if not isinstance(raw_t, list):
            raise FieldError(("treatments",), "must be a list of treatments (kind removal or inactivation)")
        treatments = []
        for i, t in enumerate(raw_t):
            with within("treatments", i):
                treatments.append(treatment_from_dict(t))
        precaution = None
        if d.get("precaution") is not None:
            with within("precaution"):
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
            raise FieldError(("lake",), "must be a ScenarioLake")
        scen = self.scenarios
        if isinstance(scen, str | bytes | Mapping) or not isinstance(scen, Sequence) or len(scen) == 0:
            raise FieldError(("scenarios",), "must be a non-empty list of scenarios")
        if len(scen) > MAX_SCENARIOS:
            raise FieldError(("scenarios",), f"must hold at most {MAX_SCENARIOS} scenarios; got {len(scen)}")
        seen: dict[str, int] = {}
        has_folds = bool(lake_folds(self.lake.params))
        two_pool = isinstance(self.lake.params, TwoPoolParameters)
        for i, s in enumerate(scen):
            if not isinstance(s, Scenario):
                raise FieldError(("scenarios", i), "must be a Scenario")
            for j, t in enumerate(s.treatments):
                if isinstance(t, Removal) and t.pool == "sediment" and not two_pool:
                    raise FieldError(
                        ("scenarios", i, "treatments", j, "pool"),
                        '\'sediment\' needs a two-pool lake ("model": "two-pool" in the plan\'s lake)',
                    )
            if s.name in seen:
                raise FieldError(("scenarios", i, "name"), f"{s.name!r} is already used by scenarios[{seen[s.name]}]")
            seen[s.name] = i
            if not has_folds and isinstance(s.clear_threshold, str):
                raise FieldError(("scenarios", i, "clear_threshold"), NO_FOLDS)
        object.__setattr__(self, "scenarios", tuple(scen))
        object.__setattr__(self, "description", text(self.description, ("description",), 2000, allow_empty=True))

    def to_dict(self) -> dict[str, Any]:
        return {
            "lake": self.lake.to_dict(),
            "scenarios": [s.to_dict() for s in self.scenarios],
            "description": self.description,
        }

    @classmethod
    def from_dict(cls, data: object) -> Plan:
        if not isinstance(data, Mapping):
            raise FieldError((), "the plan must be a JSON object with 'lake' and 'scenarios'")
        known_keys(data, (), ("lake", "scenarios"), ("description",))
        with within("lake"):
            lake = ScenarioLake.from_dict(data["lake"])
        raw = data["scenarios"]
        if not isinstance(raw, list) or not raw:
            raise FieldError(("scenarios",), "must be a non-empty list of scenarios")
        scenarios = []
        for i, s in enumerate(raw):
            with within("scenarios", i):
                scenarios.append(Scenario.from_dict(s))
        return cls(lake, tuple(scenarios), data.get("description") or "")

    def to_json(self) -> str:
        return json.dumps(self.to_dict(), indent=1)

    @classmethod
    def from_json(cls, text: str) -> Plan:
        return cls.from_dict(json.loads(text))
