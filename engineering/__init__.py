"""Plenum's engineering calculations: pure Python, SI units in and out.

Nothing here imports Django, DRF or Celery (an import-linter contract keeps
it so). Every public function takes keyword-only arguments and refuses bad
input with ``EngineeringInputError`` naming the field, the value and what is
allowed.
"""

from engineering.airside import (
    FLUIDS,
    AirHeat,
    CoilBalance,
    coil_balance,
    fluid_properties,
    latent_heat_w,
    sensible_heat_w,
    total_heat_w,
    water_side_heat_w,
)
from engineering.controls import (
    Check,
    Verdict,
    band_check,
    damper_position_check,
    sensor_drift_check,
    static_pressure_check,
    supply_temperature_check,
    worst,
)
from engineering.errors import EngineeringInputError, IndeterminateError, InsufficientDataError
from engineering.fans import (
    FanPoint,
    expected_flow_at_speed,
    fan_air_power_w,
    fan_electric_power_w,
    fan_law_scale,
    fan_shaft_power_w,
)
from engineering.filters import (
    EconomicChangePoint,
    FilterEnergy,
    FilterForecast,
    FilterLoading,
    FilterPoint,
    corrected_pressure_drop,
    economic_change_point,
    filter_extra_energy,
    filter_forecast,
    filter_loading,
)
from engineering.freeze import (
    HDD_BASE_65F_C,
    cooling_degree_days,
    cooling_season_start,
    daily_minimums_from_normals,
    daily_values_from_normals,
    freeze_risk,
    freeze_season_start,
    heating_degree_days,
    heating_degree_days_65f,
)
from engineering.heat_recovery import HeatRecovery, heat_recovery_check, heat_recovery_effectiveness
from engineering.outdoor_air import (
    OaFraction,
    fraction_check,
    oa_fraction_from_co2,
    oa_fraction_from_temperatures,
    outdoor_airflow_m3s,
)
from engineering.psychro import AirState, air_state, pressure_from_altitude
from engineering.trends import Rate, robust_rate, run_hours_per_day
from engineering.units import QUANTITIES, from_display, to_display, unit_label
from engineering.ventilation import (
    SPACE_KINDS,
    ZONE_AIR_DISTRIBUTION_EFFECTIVENESS,
    breathing_zone_outdoor_airflow,
    co2_differential_for_outdoor_air,
    co2_generation_for_activity,
    outdoor_air_per_person_from_co2,
    zone_outdoor_airflow,
)

__all__ = [
    "FLUIDS",
    "HDD_BASE_65F_C",
    "QUANTITIES",
    "SPACE_KINDS",
    "ZONE_AIR_DISTRIBUTION_EFFECTIVENESS",
    "AirHeat",
    "AirState",
    "Check",
    "CoilBalance",
    "EconomicChangePoint",
    "EngineeringInputError",
    "FanPoint",
    "FilterEnergy",
    "FilterForecast",
    "FilterLoading",
    "FilterPoint",
    "HeatRecovery",
    "IndeterminateError",
    "InsufficientDataError",
    "OaFraction",
    "Rate",
    "Verdict",
    "air_state",
    "band_check",
    "breathing_zone_outdoor_airflow",
    "co2_differential_for_outdoor_air",
    "co2_generation_for_activity",
    "coil_balance",
    "cooling_degree_days",
    "cooling_season_start",
    "corrected_pressure_drop",
    "daily_minimums_from_normals",
    "daily_values_from_normals",
    "damper_position_check",
    "economic_change_point",
    "expected_flow_at_speed",
    "fan_air_power_w",
    "fan_electric_power_w",
    "fan_law_scale",
    "fan_shaft_power_w",
    "filter_extra_energy",
    "filter_forecast",
    "filter_loading",
    "fluid_properties",
    "fraction_check",
    "freeze_risk",
    "freeze_season_start",
    "from_display",
    "heat_recovery_check",
    "heat_recovery_effectiveness",
    "heating_degree_days",
    "heating_degree_days_65f",
    "latent_heat_w",
    "oa_fraction_from_co2",
    "oa_fraction_from_temperatures",
    "outdoor_air_per_person_from_co2",
    "outdoor_airflow_m3s",
    "pressure_from_altitude",
    "robust_rate",
    "run_hours_per_day",
    "sensible_heat_w",
    "sensor_drift_check",
    "static_pressure_check",
    "supply_temperature_check",
    "to_display",
    "total_heat_w",
    "unit_label",
    "water_side_heat_w",
    "worst",
    "zone_outdoor_airflow",
]
