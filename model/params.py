"""Lake parameters and lake profile: validation, units and the dimensionless form.

The lake model is the phosphorus-recycling model of Carpenter, Ludwig &
Brock (1999)::

    dP/dt = L - s P + r P**q / (m**q + P**q)

with lake phosphorus mass ``P`` [kg], external load ``L`` [kg yr⁻¹], loss
rate ``s`` [yr⁻¹] (burial plus outflow), maximum recycling rate ``r``
[kg yr⁻¹], recycling half-saturation mass ``m`` [kg] and recycling exponent
``q`` [–].

Scaling ``x = P/m``, ``a = L/r``, ``b = s m / r`` and ``τ = t r / m`` gives
the dimensionless form used in that paper::

    dx/dτ = a - b x + x**q / (1 + x**q)

References
----------
Carpenter, S. R., Ludwig, D. & Brock, W. A. (1999). Management of
eutrophication for lakes subject to potentially irreversible change.
Ecological Applications 9(3), 751–771.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, fields
from typing import Any, ClassVar

from . import units
from .validation import FieldError, NumberFields, known_keys, mapping, number, text

__all__ = ["DimensionlessLake", "LakeParameters", "LakeProfile", "recycling_fraction"]


#: Largest value of any parameter accepted (in kg and years).
MAX_VALUE = 1.0e15
#: Steepest recycling curve accepted; beyond it the folds of the closed form lose precision.
MAX_EXPONENT = 100.0
#: Range of the dimensionless ``b = s m / r`` the equilibrium engine resolves.
B_MIN, B_MAX = 1.0e-10, 1.0e10


def _check_positive(name: str, value: object, unit: str) -> float:
    """``value`` as a finite float greater than 0, or :class:`FieldError` naming the field."""
    return number(value, (name,), lo=0.0, lo_open=True, unit=unit)


@dataclass(frozen=True)
class LakeParameters(NumberFields):
    """Parameters of the phosphorus-recycling lake model.

    Parameters
    ----------
    loss_rate : float
        ``s`` [yr⁻¹], fraction of lake P lost per year to burial and outflow, > 0.
    recycling_max : float
        ``r`` [kg yr⁻¹], maximum rate of P recycling from the sediments, > 0.
    recycling_half : float
        ``m`` [kg], lake P mass at which recycling is half its maximum, > 0.
    recycling_exponent : float
        ``q`` [–], steepness of the recycling curve, > 0.  Folds (and hence
        hysteresis) are possible only for ``q > 1``.

    Raises
    ------
    FieldError
        When any value is not a finite number greater than zero, or lies
        beyond what the equilibrium engine resolves: each value at most
        :data:`MAX_VALUE`, ``q`` at most :data:`MAX_EXPONENT`, and the
        dimensionless ``b = s m / r`` within ``[B_MIN, B_MAX]`` (outside it
        the recycling term is either negligible or so large that the folds
        lie beyond double precision).  The message names the field and the
        allowed range.
    """

    WHAT: ClassVar[str] = "the four model parameters"

    loss_rate: float
    recycling_max: float
    recycling_half: float
    recycling_exponent: float

    _UNITS: ClassVar[dict[str, str]] = {
        "loss_rate": "[yr⁻¹]",
        "recycling_max": "[kg yr⁻¹]",
        "recycling_half": "[kg]",
        "recycling_exponent": "[–]",
    }

    def __post_init__(self) -> None:
        for f in fields(self):
            hi = MAX_EXPONENT if f.name == "recycling_exponent" else MAX_VALUE
            value = number(getattr(self, f.name), (f.name,), lo=0.0, lo_open=True, hi=hi, unit=self._UNITS[f.name])
            object.__setattr__(self, f.name, value)
        b = self.loss_rate * self.recycling_half / self.recycling_max
        if not B_MIN <= b <= B_MAX:
            raise FieldError(
                ("recycling_max",),
                f"gives b = s m / r = {b:.3g}, beyond what the engine resolves ({B_MIN:g} to {B_MAX:g}); "
                "check the units of r, m and s",
            )

    # short names used in equations
    @property
    def s(self) -> float:
        return self.loss_rate

    @property
    def r(self) -> float:
        return self.recycling_max

    @property
    def m(self) -> float:
        return self.recycling_half

    @property
    def q(self) -> float:
        return self.recycling_exponent

    def rate(self, t: float, p: Any, load: Any) -> Any:
        """Right-hand side ``f(t, P, L) = L - s P + r P^q/(m^q + P^q)`` [kg yr⁻¹].

        Shaped ``f(t, y, *args)`` so it can be passed to
        :func:`scipy.integrate.solve_ivp` with ``args=(load,)``.
        """
        return load - self.s * p + self.r * recycling_fraction(p, self.m, self.q)

    def to_dimensionless(self) -> DimensionlessLake:
        """The dimensionless lake ``(b, q)`` with ``b = s m / r``."""
        return DimensionlessLake(b=self.s * self.m / self.r, q=self.q)


def recycling_fraction(p: Any, m: float, q: float) -> Any:
    """Hill function ``P^q / (m^q + P^q)`` [–], computed without overflow.

    Written as the logistic function of ``q ln(P/m)``, accurate in both
    tails; works for scalars and numpy arrays,
    and returns 0 at ``P = 0``.
    """
    import numpy as np
    from scipy.special import expit

    p_arr = np.asarray(p, dtype=float)
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        z = q * (np.log(np.maximum(p_arr, 0.0)) - math.log(m))
        out = np.where(p_arr > 0.0, expit(z), 0.0)
    if np.ndim(out) == 0:
        return float(out)
    return out


@dataclass(frozen=True)
class DimensionlessLake:
    """The lake in the dimensionless form of Carpenter et al. (1999).

    ``dx/dτ = a - b x + x^q/(1 + x^q)`` with ``x = P/m``, ``a = L/r``,
    ``b = s m / r`` and ``τ = t r / m``.
    """

    b: float
    q: float

    def __post_init__(self) -> None:
        object.__setattr__(self, "b", _check_positive("b", self.b, "[–]"))
        object.__setattr__(self, "q", _check_positive("q", self.q, "[–]"))

    def to_parameters(self, recycling_max: float = 1.0, recycling_half: float = 1.0) -> LakeParameters:
        """Dimensional parameters with the given ``r`` and ``m``; ``s = b r / m``."""
        return LakeParameters(
            loss_rate=self.b * recycling_max / recycling_half,
            recycling_max=recycling_max,
            recycling_half=recycling_half,
            recycling_exponent=self.q,
        )


@dataclass(frozen=True)
class LakeProfile:
    """A lake's physical description, used to convert model units.

    Parameters
    ----------
    name : str
        Display name of the lake.
    area_km2 : float
        Surface area [km²], > 0.
    volume_m3 : float
        Lake volume [m³], > 0.  Use :meth:`from_depth` to give a mean depth
        instead.
    load_kg_per_yr : float
        Present-day external P load [kg yr⁻¹], >= 0.  (Lake files and
        ``to_dict`` call it ``load_kg_yr``, the published file key.)
    """

    name: str
    area_km2: float
    volume_m3: float
    load_kg_per_yr: float

    def __post_init__(self) -> None:
        object.__setattr__(self, "name", text(self.name, ("name",)))
        object.__setattr__(self, "area_km2", _check_positive("area_km2", self.area_km2, "[km²]"))
        object.__setattr__(self, "volume_m3", _check_positive("volume_m3", self.volume_m3, "[m³]"))
        load = number(self.load_kg_per_yr, ("load_kg_yr",), lo=0.0, unit="[kg yr⁻¹]")
        object.__setattr__(self, "load_kg_per_yr", load)

    @classmethod
    def from_depth(cls, name: str, area_km2: float, mean_depth_m: float, load_kg_per_yr: float) -> LakeProfile:
        """Profile from surface area [km²] and mean depth [m]."""
        area = _check_positive("area_km2", area_km2, "[km²]")
        depth = _check_positive("mean_depth_m", mean_depth_m, "[m]")
        return cls(name=name, area_km2=area, volume_m3=units.volume_m3(area, depth), load_kg_per_yr=load_kg_per_yr)

    @property
    def mean_depth_m(self) -> float:
        """Mean depth [m] = volume / area."""
        return float(units.mean_depth_m(self.volume_m3, self.area_km2))

    def concentration(self, p_kg: Any) -> Any:
        """Total phosphorus [µg L⁻¹] from lake P mass [kg]: ``TP = 10⁶ P / V`` (:mod:`turnback.model.units`)."""
        return units.tp_ug_l(p_kg, self.volume_m3)

    def mass(self, tp_ug_l: Any) -> Any:
        """Lake P mass [kg] from total phosphorus [µg L⁻¹]; inverse of :meth:`concentration`."""
        return units.p_kg(tp_ug_l, self.volume_m3)

    def areal_load(self, load_kg_per_yr: Any) -> Any:
        """Areal load [mg m⁻² yr⁻¹] from load [kg yr⁻¹]: ``10⁶ L / (A · 10⁶) = L / A``."""
        return units.areal_load(load_kg_per_yr, self.area_km2)

    def load_from_areal(self, areal_mg_m2_yr: Any) -> Any:
        """Load [kg yr⁻¹] from areal load [mg m⁻² yr⁻¹]."""
        return units.load_from_areal(areal_mg_m2_yr, self.area_km2)

    def to_dict(self) -> dict[str, Any]:
        """The lake-file fields: ``name``, ``area_km2``, ``volume_m3``, ``load_kg_yr``."""
        return {
            "name": self.name,
            "area_km2": self.area_km2,
            "volume_m3": self.volume_m3,
            "load_kg_yr": self.load_kg_per_yr,
        }

    @classmethod
    def from_dict(cls, data: object) -> LakeProfile:
        d = mapping(data, (), "name, area_km2, volume_m3 or mean_depth_m, load_kg_yr")
        known_keys(d, (), ("name", "area_km2", "load_kg_yr"), ("volume_m3", "mean_depth_m"))
        if "volume_m3" in d and "mean_depth_m" in d:
            raise FieldError(
                ("mean_depth_m",), "cannot be given with volume_m3: give either volume_m3 or mean_depth_m, not both"
            )
        if "volume_m3" in d:
            return cls(d["name"], d["area_km2"], d["volume_m3"], d["load_kg_yr"])
        if "mean_depth_m" in d:
            return cls.from_depth(d["name"], d["area_km2"], d["mean_depth_m"], d["load_kg_yr"])
        raise FieldError(("volume_m3",), "is required: give volume_m3 or mean_depth_m")

    def to_json(self) -> str:
        return json.dumps(self.to_dict())

    @classmethod
    def from_json(cls, text: str) -> LakeProfile:
        return cls.from_dict(json.loads(text))
