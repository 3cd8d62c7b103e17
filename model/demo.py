"""The built-in demo lake: Lake Amberlin, a fictional lowland lake.

Every number here is invented for demonstration; no real lake is described.
"""

from __future__ import annotations

from .params import LakeParameters, LakeProfile
from .two_pool import TwoPoolParameters

__all__ = ["DEMO_PARAMETERS", "DEMO_PROFILE", "DEMO_TWO_POOL_PARAMETERS"]

#: 6.2 km², 4.5 m mean depth (2.79e7 m³), present-day load 420 kg P yr⁻¹.
DEMO_PROFILE = LakeProfile.from_depth(
    name="Lake Amberlin (fictional)", area_km2=6.2, mean_depth_m=4.5, load_kg_per_yr=420.0
)

#: Loss 0.5 yr⁻¹, recycling up to 1800 kg yr⁻¹, half-saturation 2500 kg, exponent 4.
DEMO_PARAMETERS = LakeParameters(loss_rate=0.5, recycling_max=1800.0, recycling_half=2500.0, recycling_exponent=4.0)

#: The same lake as a two-pool lake (:mod:`turnback.model.two_pool`): sedimentation 0.45 yr⁻¹,
#: outflow 0.05 yr⁻¹, burial 0.06 yr⁻¹, recycling up to 25 % of the sediment P a year,
#: half-saturation 1650 kg, exponent 6.  At the present load it is turbid (about 108 µg/L) with
#: about 4500 kg of mobile sediment P; a 50 % load cut brings clear water only after about
#: 13 years, while the sediment pool drains.
DEMO_TWO_POOL_PARAMETERS = TwoPoolParameters(
    sedimentation=0.45,
    outflow=0.05,
    burial=0.06,
    recycling_rate=0.25,
    recycling_half=1650.0,
    recycling_exponent=6.0,
)
