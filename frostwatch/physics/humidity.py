"""Psychrometrics for frost nights, in one import: saturation, dew and frost point, wet bulb.

The functions live in the topic modules and are gathered here because much of frostwatch asks
for "humidity" as one thing:

* `frostwatch.physics.saturation`: saturation vapour pressure over water and ice (Hyland &
  Wexler 1983), vapour pressure from the dew point;
* `frostwatch.physics.dew_frost_point`: dew point, frost point, relative humidity;
* `frostwatch.physics.wet_bulb`: ASHRAE wet (ice) bulb, its inverse (the sprinkler start and
  stop air temperature), the humidity ratio;
* `frostwatch.physics.air_pressure`: standard pressure, pressure from elevation (FAO-56).

Conventions: a dew point and a relative humidity are over liquid water (WMO), also below
0 degC; the frost point is the over-ice quantity; the wet bulb is an ice bulb below 0 degC.
"""

from frostwatch.physics.air_pressure import STANDARD_PRESSURE_HPA, pressure_hpa_from_elevation
from frostwatch.physics.dew_frost_point import (
    DEW_POINT_EXCESS_TOLERANCE_K,
    dew_point_c_from_rel_humidity,
    dew_point_c_from_vapour_pressure,
    frost_point_c_from_dew_point,
    rel_humidity_pct_from_dew_point,
)
from frostwatch.physics.saturation import (
    saturation_vapour_pressure_ice_hpa,
    saturation_vapour_pressure_water_hpa,
    vapour_pressure_hpa_from_dew_point,
)
from frostwatch.physics.wet_bulb import (
    air_temp_c_for_wet_bulb,
    humidity_ratio_from_vapour_pressure,
    wet_bulb_c_from_dew_point,
    wet_bulb_c_from_rel_humidity,
)

__all__ = [
    "DEW_POINT_EXCESS_TOLERANCE_K",
    "STANDARD_PRESSURE_HPA",
    "air_temp_c_for_wet_bulb",
    "dew_point_c_from_rel_humidity",
    "dew_point_c_from_vapour_pressure",
    "frost_point_c_from_dew_point",
    "humidity_ratio_from_vapour_pressure",
    "pressure_hpa_from_elevation",
    "rel_humidity_pct_from_dew_point",
    "saturation_vapour_pressure_ice_hpa",
    "saturation_vapour_pressure_water_hpa",
    "vapour_pressure_hpa_from_dew_point",
    "wet_bulb_c_from_dew_point",
    "wet_bulb_c_from_rel_humidity",
]
