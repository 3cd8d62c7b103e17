"""Unit conversions of the lake model, in one place.

Lake phosphorus is a mass ``P`` [kg]; total phosphorus is a concentration
``TP`` [µg L⁻¹].  With the lake volume ``V`` [m³] (1 m³ = 1000 L, 1 kg =
10⁹ µg)::

    TP = 10⁶ P / V        P = TP V / 10⁶

Areal loads divide a load [kg yr⁻¹] by the surface area ``A`` [km²]
(1 km² = 10⁶ m², 1 kg = 10⁶ mg)::

    areal [mg m⁻² yr⁻¹] = L / A

Every module converts through these functions; they accept scalars or arrays.
"""

from __future__ import annotations

from typing import Any

import numpy as np

__all__ = [
    "KG_PER_LB",
    "M2_PER_ACRE",
    "M3_PER_ACRE_FT",
    "M_PER_FT",
    "UG_L_PER_KG_M3",
    "areal_load",
    "load_from_areal",
    "mean_depth_m",
    "p_kg",
    "tp_ug_l",
    "volume_m3",
]

#: TP [µg L⁻¹] of 1 kg of P in 1 m³ of water: 10⁹ µg / 10³ L.
UG_L_PER_KG_M3 = 1.0e6

# US customary units, exact by definition (NIST Special Publication 811, 2008 edition, appendix B:
# Taylor & Thompson, Guide for the Use of the International System of Units).
#: kilograms in one avoirdupois pound [kg lb⁻¹] (NIST SP 811)
KG_PER_LB = 0.45359237
#: metres in one international foot [m ft⁻¹] (NIST SP 811)
M_PER_FT = 0.3048
#: square metres in one acre (U.S. survey foot basis as tabulated in NIST SP 811) [m² acre⁻¹]
M2_PER_ACRE = 4046.8564224
#: cubic metres in one acre-foot [m³ acre-ft⁻¹] (NIST SP 811)
M3_PER_ACRE_FT = 1233.48183754752


def _values(x: Any) -> Any:
    return float(x) if isinstance(x, int | float) else np.asarray(x, dtype=float)


def tp_ug_l(p_kg: Any, volume_m3: float) -> Any:
    """Total phosphorus [µg L⁻¹] from lake P [kg] and volume [m³]: ``10⁶ P / V``."""
    return _values(p_kg) * (UG_L_PER_KG_M3 / volume_m3)


def p_kg(tp_ug_l: Any, volume_m3: float) -> Any:
    """Lake P [kg] from total phosphorus [µg L⁻¹] and volume [m³]: ``TP V / 10⁶``."""
    return _values(tp_ug_l) * (volume_m3 / UG_L_PER_KG_M3)


def areal_load(load_kg_per_yr: Any, area_km2: float) -> Any:
    """Areal load [mg m⁻² yr⁻¹] from a load [kg yr⁻¹] over ``area_km2`` [km²]: ``10⁶ mg/kg L / (10⁶ m²/km² A)``."""
    return _values(load_kg_per_yr) / area_km2


def load_from_areal(areal_mg_m2_yr: Any, area_km2: float) -> Any:
    """Load [kg yr⁻¹] from an areal load [mg m⁻² yr⁻¹] over ``area_km2`` [km²]."""
    return _values(areal_mg_m2_yr) * area_km2


def volume_m3(area_km2: float, mean_depth_m: float) -> float:
    """Lake volume [m³] from surface area [km²] and mean depth [m]."""
    return area_km2 * 1.0e6 * mean_depth_m


def mean_depth_m(volume_m3: float, area_km2: float) -> float:
    """Mean depth [m] from volume [m³] and surface area [km²]."""
    return volume_m3 / (area_km2 * 1.0e6)
