"""The energy cost of a loaded filter and the economic point to change it."""

from __future__ import annotations

import math
from dataclasses import dataclass

from engineering import validate as v
from engineering.errors import EngineeringInputError

from .loading import FILTER_DP_PA, pressure_drop_input

__all__ = ["EconomicChangePoint", "FilterEnergy", "economic_change_point", "filter_extra_energy"]


@dataclass(frozen=True)
class FilterEnergy:
    mean_extra_dp_pa: float
    extra_energy_wh: float
    extra_cost: float | None


def filter_extra_energy(
    *,
    airflow_m3s: float,
    clean_dp_pa: float,
    final_dp_pa: float,
    run_hours: float,
    fan_system_efficiency: float,
    price_per_kwh: float | None = None,
) -> FilterEnergy:
    """Extra fan energy over one filter life caused by its pressure rise.

    E = Q · Δp_mean,extra · t / η with Δp rising linearly from clean to final,
    so Δp_mean,extra = (Δp_final − Δp_clean)/2. Fan electric power = QΔp/η
    (ASHRAE Handbook—HVAC Systems and Equipment, Fans chapter); the
    linear-rise average is the approach of Eurovent 4/21's filter energy
    rating (from memory). η is fan × motor × drive efficiency.
    """
    q = v.in_range("airflow_m3s", airflow_m3s, 0.0, 100.0, unit="m³/s", label="airflow")
    clean = pressure_drop_input("clean_dp_pa", clean_dp_pa, "clean filter pressure drop")
    final = v.in_range(
        "final_dp_pa", final_dp_pa, clean, FILTER_DP_PA[1], unit="Pa", label="final filter pressure drop"
    )
    t = v.non_negative("run_hours", run_hours, unit="h", label="run-hours")
    eta = v.efficiency("fan_system_efficiency", fan_system_efficiency, "fan system efficiency")
    extra = (final - clean) / 2.0
    wh = q * extra * t / eta
    cost = None
    if price_per_kwh is not None:
        cost = wh / 1000.0 * v.non_negative("price_per_kwh", price_per_kwh, label="energy price")
    return FilterEnergy(mean_extra_dp_pa=extra, extra_energy_wh=wh, extra_cost=cost)


@dataclass(frozen=True)
class EconomicChangePoint:
    run_hours: float  # since the last change
    extra_cost_at_point: float
    limited_by_final_dp: bool
    reason: str


def economic_change_point(
    *,
    rate_pa_per_hour: float,
    airflow_m3s: float,
    fan_system_efficiency: float,
    price_per_kwh: float,
    filter_set_cost: float,
    clean_dp_pa: float | None = None,
    final_dp_pa: float | None = None,
) -> EconomicChangePoint:
    """Run-hours since the last change at which the cumulative extra energy
    cost equals the cost of a new set of filters (material plus labour).

    With Δp rising linearly at rate r, the extra cost after t hours is
    C(t) = price · Q r t² / (2 η · 1000), so C(t*) = K gives
    t* = √(2 η K · 1000 / (price · Q · r)). For a linear rise this is also
    the interval minimising total cost per run-hour (elementary calculus;
    common practice in filter life-cycle costing). If clean and final Δp are
    given and the final Δp is reached first, the final Δp governs.
    """
    r = v.positive("rate_pa_per_hour", rate_pa_per_hour, unit="Pa/h", label="pressure-drop rate")
    q = v.positive("airflow_m3s", airflow_m3s, unit="m³/s", label="airflow")
    eta = v.efficiency("fan_system_efficiency", fan_system_efficiency, "fan system efficiency")
    price = v.positive("price_per_kwh", price_per_kwh, label="energy price")
    k = v.positive("filter_set_cost", filter_set_cost, label="filter set cost")
    t = math.sqrt(2.0 * eta * k * 1000.0 / (price * q * r))
    limited = False
    reason = f"extra fan energy costs as much as a new set ({k:g}) after {t:.0f} run-hours"
    if (clean_dp_pa is None) != (final_dp_pa is None):
        raise EngineeringInputError(
            field="final_dp_pa",
            value=final_dp_pa,
            allowed="both clean_dp_pa and final_dp_pa, or neither",
            message="give both clean_dp_pa and final_dp_pa, or neither",
        )
    if clean_dp_pa is not None and final_dp_pa is not None:
        clean = pressure_drop_input("clean_dp_pa", clean_dp_pa, "clean filter pressure drop")
        final = v.in_range(
            "final_dp_pa",
            final_dp_pa,
            clean,
            FILTER_DP_PA[1],
            unit="Pa",
            label="final filter pressure drop",
            low_open=True,
        )
        t_final = (final - clean) / r
        if t_final < t:
            t, limited = t_final, True
            reason = (
                f"final pressure drop {final:.0f} Pa is reached after {t:.0f} run-hours, "
                "before the energy cost would pay for a new set"
            )
    cost = price * q * r * t * t / (2.0 * eta * 1000.0)
    return EconomicChangePoint(run_hours=t, extra_cost_at_point=cost, limited_by_final_dp=limited, reason=reason)
