"""Air-filter pressure drop: correction to design airflow, loading, forecast
of the day the final pressure drop is reached, and the energy cost of a
loaded filter.

One module per job: ``loading`` (correction to design airflow, a bank's loading, the check of new filters
after a change, and the input limits), ``forecast`` (the day the final pressure drop is reached) and
``energy`` (the extra fan energy of a loaded filter and the economic change point). The package answers
with their public names.
"""

from __future__ import annotations

from .energy import EconomicChangePoint, FilterEnergy, economic_change_point, filter_extra_energy
from .forecast import FilterForecast, FilterPoint, filter_forecast
from .loading import (
    AFTER_CHANGE_HIGH_FAIL,
    AFTER_CHANGE_TOLERANCE,
    BELOW_CLEAN_RULE,
    BYPASS_FAIL_FRACTION,
    BYPASS_WATCH_FRACTION,
    DEFAULT_EXPONENT,
    FALL_WATCH_FRACTION,
    FilterAfterChange,
    FilterLoading,
    corrected_pressure_drop,
    corrected_pressure_drops,
    filter_after_change,
    filter_loading,
    loading_percent,
)
from .loading import (
    AIRFLOW_RATIO as AIRFLOW_RATIO,  # the limits the calculators show, read as filters.X outside __all__
)
from .loading import (
    FILTER_DP_PA as FILTER_DP_PA,
)

__all__ = [
    "AFTER_CHANGE_HIGH_FAIL",
    "AFTER_CHANGE_TOLERANCE",
    "BELOW_CLEAN_RULE",
    "BYPASS_FAIL_FRACTION",
    "BYPASS_WATCH_FRACTION",
    "DEFAULT_EXPONENT",
    "FALL_WATCH_FRACTION",
    "EconomicChangePoint",
    "FilterAfterChange",
    "FilterEnergy",
    "FilterForecast",
    "FilterLoading",
    "FilterPoint",
    "corrected_pressure_drop",
    "corrected_pressure_drops",
    "economic_change_point",
    "filter_after_change",
    "filter_extra_energy",
    "filter_forecast",
    "filter_loading",
    "loading_percent",
]
