r"""The two-pool lake: water phosphorus and a mobile sediment-phosphorus pool.

The lake holds water P ``P`` [kg] and mobile sediment P ``M`` [kg]
(Carpenter 2005, the lake and sediment part of his model)::

    dP/dt = L - (s + h) P + r M g(P)
    dM/dt = s P - b M - r M g(P)          g(P) = P**q / (m**q + P**q)

with external load ``L`` [kg yr⁻¹], sedimentation ``s`` [yr⁻¹] (water P
settling to the sediment), outflow (flushing) ``h`` [yr⁻¹], permanent burial
of sediment P ``b`` [yr⁻¹], the largest yearly recycled fraction of sediment
P ``r`` [yr⁻¹], and the recycling half-saturation ``m`` [kg] and exponent
``q`` [–] of the one-box model.  Recycling ``r M g(P)`` [kg yr⁻¹] grows with
the sediment pool and switches on as the water gets rich in P (anoxic
release); the sediment stores P and gives it back for years after a load cut,
the legacy that delays recovery (Søndergaard, Jensen & Jeppesen 2003;
Jeppesen et al. 2005).

Equilibria (derivation)
    ``dM/dt = 0`` gives ``M* = s P / (b + r g(P))``; putting it into
    ``dP/dt = 0`` gives the load that holds the lake at ``P``::

        L(P) = (s + h) P - r g(P) s P / (b + r g(P)) = h P + b M*(P)

    explicit in ``P``: at balance the load leaves by outflow and burial.  So
    ``L(P) > 0`` for every ``P > 0``: with burial ``b > 0`` the recovery fold
    is always at a positive load, and the regime is reversible or hysteretic,
    never irreversible (that needs ``b → 0``).  See
    :mod:`turnback.model.two_pool_equilibrium`.

The one-box model as a limit
    *Slow, large sediment pool.*  With ``r`` and ``b`` divided by ``k`` and
    the sediment pool ``M = k M₀`` (``k → ∞``), the recycling flux stays
    ``r M₀ g(P)`` while the pool changes by a fraction ``O(1/k)`` a year:
    over a horizon short against ``k`` years the water follows the one-box
    model of Carpenter, Ludwig & Brock (1999) with loss rate ``s + h`` and
    maximum recycling ``r M₀`` (:meth:`TwoPoolParameters.one_box_frozen`).
    *Fast, small sediment pool.*  With ``r`` and ``b`` multiplied by ``k``
    (:meth:`TwoPoolParameters.fast_sediment`), ``M*`` shrinks as ``1/k``
    while the flux ``r M* g = s P r g/(b + r g)`` and the whole equilibrium
    curve stay the same; the sediment relaxes at the rate ``k (b + r g)`` and
    tracks ``M*(P)``, so the water follows the one-state (one-box) model
    ``dP/dt = L - L(P)`` with the same equilibria, folds and regime and no
    sediment lag (:meth:`TwoPoolParameters.one_state_rate`).  The lag of the
    two-pool lake is therefore a property of a sediment pool that is both
    large and slow.

References
----------
Carpenter, S. R. (2005). Eutrophication of aquatic ecosystems: bistability
and soil phosphorus. PNAS 102(29), 10002–10005.

Carpenter, S. R., Ludwig, D. & Brock, W. A. (1999). Management of
eutrophication for lakes subject to potentially irreversible change.
Ecological Applications 9(3), 751–771.

Søndergaard, M., Jensen, J. P. & Jeppesen, E. (2003). Role of sediment and
internal loading of phosphorus in shallow lakes. Hydrobiologia 506–509,
135–145.

Jeppesen, E. et al. (2005). Lake responses to reduced nutrient loading – an
analysis of contemporary long-term data from 35 case studies. Freshwater
Biology 50, 1747–1771.
"""

from __future__ import annotations

from dataclasses import dataclass, fields, replace
from typing import Any, ClassVar, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .params import LakeParameters, recycling_fraction
from .validation import FieldError, NumberFields, number

__all__ = ["MODEL_NAMES", "ModelName", "TwoPoolParameters", "check_map_limits", "map_limits_message"]

ModelName = Literal["one-box", "two-pool"]
#: The two lake models, as PLAN.json and the command line name them.
MODEL_NAMES: tuple[ModelName, ...] = ("one-box", "two-pool")


@dataclass(frozen=True)
class TwoPoolParameters(NumberFields):
    """Parameters of the two-pool lake (module docstring).

    Parameters
    ----------
    sedimentation : float
        ``s`` [yr⁻¹], fraction of water P settling to the sediment a year, > 0.
    outflow : float
        ``h`` [yr⁻¹], fraction of water P flushed out a year, >= 0.
    burial : float
        ``b`` [yr⁻¹], fraction of mobile sediment P buried for good a year, > 0.
    recycling_rate : float
        ``r`` [yr⁻¹], largest fraction of sediment P recycled to the water a
        year (reached when the water is rich in P), > 0.
    recycling_half : float
        ``m`` [kg], water P at which recycling is half its largest, > 0.
    recycling_exponent : float
        ``q`` [–], steepness of the recycling switch, > 0.

    Raises
    ------
    FieldError
        When a value is not a finite number in its range; the error's path
        names the field.
    """

    WHAT: ClassVar[str] = "the six two-pool parameters"

    sedimentation: float
    outflow: float
    burial: float
    recycling_rate: float
    recycling_half: float
    recycling_exponent: float

    _UNITS: ClassVar[dict[str, str]] = {
        "sedimentation": "[yr⁻¹]",
        "outflow": "[yr⁻¹]",
        "burial": "[yr⁻¹]",
        "recycling_rate": "[yr⁻¹]",
        "recycling_half": "[kg]",
        "recycling_exponent": "[–]",
    }

    def __post_init__(self) -> None:
        for f in fields(self):
            zero_ok = f.name == "outflow"
            value = number(getattr(self, f.name), (f.name,), lo=0.0, lo_open=not zero_ok, unit=self._UNITS[f.name])
            object.__setattr__(self, f.name, value)

    # short names used in equations
    @property
    def s(self) -> float:
        return self.sedimentation

    @property
    def h(self) -> float:
        return self.outflow

    @property
    def b(self) -> float:
        return self.burial

    @property
    def r(self) -> float:
        return self.recycling_rate

    @property
    def m(self) -> float:
        return self.recycling_half

    @property
    def q(self) -> float:
        return self.recycling_exponent

    # the model -----------------------------------------------------------
    def recycling(self, p: Any) -> Any:
        """``g(P) = P^q / (m^q + P^q)`` [–]."""
        return recycling_fraction(p, self.m, self.q)

    def rate(self, t: float, y: Any, load: Any) -> NDArray[np.float64]:
        """Right-hand side ``(dP/dt, dM/dt)`` [kg yr⁻¹] at ``y = (P, M)`` [kg].

        Shaped ``f(t, y, *args)`` for :func:`scipy.integrate.solve_ivp` with
        ``args=(load,)``.
        """
        p, m_sed = np.asarray(y, dtype=float)
        flux = self.r * m_sed * np.asarray(self.recycling(p))
        return np.array([load - (self.s + self.h) * p + flux, self.s * p - self.b * m_sed - flux])

    def sediment_balance(self, p: ArrayLike) -> Any:
        """``M*(P) = s P / (b + r g(P))`` [kg]: the sediment P in balance with water P ``P`` [kg]."""
        p_arr = np.asarray(p, dtype=float)
        out = self.s * p_arr / (self.b + self.r * np.asarray(self.recycling(p_arr)))
        return float(out) if out.ndim == 0 else out

    def load_at(self, p: ArrayLike) -> Any:
        """``L(P) = h P + s b P / (b + r g(P))`` [kg yr⁻¹]: the load that holds the lake at ``P`` [kg]."""
        p_arr = np.asarray(p, dtype=float)
        out = self.h * p_arr + self.b * np.asarray(self.sediment_balance(p_arr))
        return float(out) if np.ndim(out) == 0 else out

    def one_state_rate(self, t: float, p: Any, load: Any) -> Any:
        """``dP/dt = L − L(P)`` [kg yr⁻¹]: the water in the fast-sediment limit (module docstring)."""
        return load - self.load_at(p)

    def jacobian(self, p: float, m_sed: float) -> NDArray[np.float64]:
        """The 2×2 Jacobian of ``(dP/dt, dM/dt)`` at ``(P, M)`` [yr⁻¹].

        ``[[-(s+h) + r M g'(P), r g(P)], [s - r M g'(P), -(b + r g(P))]]`` with
        ``g'(P) = q g (1 - g) / P``.
        """
        g = float(self.recycling(p))
        dg = self.q * g * (1.0 - g) / p if p > 0.0 else 0.0
        u = self.r * m_sed * dg
        return np.array([[-(self.s + self.h) + u, self.r * g], [self.s - u, -(self.b + self.r * g)]])

    # the limits of the module docstring -----------------------------------
    def fast_sediment(self, k: float) -> TwoPoolParameters:
        """The same lake with burial and recycling rate multiplied by ``k``.

        The equilibrium curve, the folds and the recycling flux at balance are
        unchanged; the sediment pool at balance is ``1/k`` as large and
        relaxes ``k`` times faster.
        """
        return replace(self, burial=self.b * k, recycling_rate=self.r * k)

    def one_box_frozen(self, sediment_p_kg: float) -> LakeParameters:
        """The one-box lake seen while the sediment pool stays at ``sediment_p_kg`` [kg].

        Loss rate ``s + h`` [yr⁻¹], maximum recycling ``r M`` [kg yr⁻¹], the
        same ``m`` and ``q`` (the slow, large sediment limit).
        """
        return LakeParameters(
            loss_rate=self.s + self.h,
            recycling_max=self.r * sediment_p_kg,
            recycling_half=self.m,
            recycling_exponent=self.q,
        )

    # JSON ---------------------------------------------------------------------


def map_limits_message(params: TwoPoolParameters) -> str | None:
    """Why ``params`` cannot run in the annual map, or None when it can.

    An annual step cannot take more than a whole pool in a year:
    ``s + h <= 1`` and ``b + r <= 1`` [yr⁻¹].  These bounds also keep every
    real eigenvalue of the Jacobian above −2, one of the two conditions under
    which the map and the differential equations agree on stability
    (:mod:`turnback.model.two_pool_equilibrium`).
    """
    if params.s + params.h > 1.0:
        return (
            f"sedimentation + outflow must be at most 1 [yr⁻¹] for the annual model (a year cannot take more "
            f"than the water holds); got {params.s + params.h:g}"
        )
    if params.b + params.r > 1.0:
        return (
            f"burial + recycling_rate must be at most 1 [yr⁻¹] for the annual model (a year cannot take more "
            f"than the sediment holds); got {params.b + params.r:g}"
        )
    return None


def check_map_limits(params: TwoPoolParameters) -> None:
    """Raise :class:`FieldError` (path ``outflow`` or ``recycling_rate``) when ``params`` break the map's limits."""
    msg = map_limits_message(params)
    if msg is None:
        return
    field = "outflow" if params.s + params.h > 1.0 else "recycling_rate"
    raise FieldError((field,), "is too large: " + msg)
