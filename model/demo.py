"""The built-in demo lake: Lake Amberlin, a fictional lowland lake.

Every number here is invented for demonstration; no real lake is described.
"""

from __future__ import annotations

from .params import LakeParameters, LakeProfile

__all__ = ["DEMO_PARAMETERS", "DEMO_PROFILE"]

#: 6.2 km², 4.5 m mean depth (2.79e7 m³), present-day load 420 kg P yr⁻¹.
DEMO_PROFILE = LakeProfile.from_depth(
    name="Lake Amberlin (fictional)", area_km2=6.2, mean_depth_m=4.5, load_kg_per_yr=420.0
)

#: Loss 0.5 yr⁻¹, recycling up to 1800 kg yr⁻¹, half-saturation 2500 kg, exponent 4.
DEMO_PARAMETERS = LakeParameters(loss_rate=0.5, recycling_max=1800.0, recycling_half=2500.0, recycling_exponent=4.0)
