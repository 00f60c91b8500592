"""Heat added to moist air across a coil, by the air side's sign convention (the package docstring)."""

from __future__ import annotations

from dataclasses import dataclass

import psychrolib

from engineering import psychro  # noqa: F401  (sets psychrolib to SI once)
from engineering import validate as v
from engineering.errors import EngineeringInputError
from engineering.psychro import STANDARD_PRESSURE_PA, AirState

__all__ = ["AirHeat", "dry_air_density_kg_m3", "latent_heat_w", "sensible_heat_w", "total_heat_w"]

# ASHRAE Handbook—Fundamentals 2017 ch.1 eq. 32: h = 1.006 t + W (2501 + 1.86 t) kJ/kg.
CP_DRY_AIR_J_PER_KG_K = 1006.0
CP_WATER_VAPOUR_J_PER_KG_K = 1860.0
H_FG_0C_J_PER_KG = 2_501_000.0

HUMIDITY_RATIO_KG_KG = (0.0, 0.1)
AIRFLOW_MAX_M3S = 100.0  # a very large AHU moves ~50 m³/s; more is a typo.
# Where a volumetric airflow was measured, relative to the coil.
AIRFLOW_STATES = ("entering", "leaving")


@dataclass(frozen=True)
class AirHeat:
    """Heat added to the air stream, W (sensible + latent = total)."""

    sensible_w: float
    latent_w: float
    total_w: float


def _airflow(name: str, value: object, *, strictly_positive: bool = False) -> float:
    return v.in_range(name, value, 0.0, AIRFLOW_MAX_M3S, unit="m³/s", label="airflow", low_open=strictly_positive)


def _w(name: str, value: object) -> float:
    return v.in_range(name, value, *HUMIDITY_RATIO_KG_KG, unit="kg/kg", label="humidity ratio")


def _dry_air_mass_flow(airflow_m3s: float, t_c: float, w: float, p_pa: float) -> float:
    return float(airflow_m3s / psychrolib.GetMoistAirVolume(t_c, w, p_pa))


def dry_air_density_kg_m3(*, t_c: float, pressure_pa: float = STANDARD_PRESSURE_PA) -> float:
    """Density of dry air, kg/m³: ρ = p / (R_da·T), R_da = 287.042 J/kg·K
    (ASHRAE Handbook—Fundamentals 2017 ch.1; psychrolib's 1/GetMoistAirVolume at W = 0)."""
    t = v.air_temperature("t_c", t_c, label="air temperature")
    p = v.pressure("pressure_pa", pressure_pa)
    return float(1.0 / psychrolib.GetMoistAirVolume(t, 0.0, p))


def sensible_heat_w(
    *,
    airflow_m3s: float,
    t_in_c: float,
    t_out_c: float,
    pressure_pa: float = STANDARD_PRESSURE_PA,
    humidity_ratio: float = 0.0,
    airflow_at: str = "entering",
) -> float:
    """Sensible heat added to an air stream, W.

    q_s = ṁ_da (c_p,da + W c_p,v) (t_out − t_in), with ṁ_da = V / v and v the
    moist-air specific volume at the state where the airflow V was measured
    (ASHRAE Handbook—Fundamentals 2017 ch.1 eq. 28 and 32; c_p,da =
    1.006 kJ/kg·K, c_p,v = 1.86 kJ/kg·K from eq. 32). ``airflow_at`` is
    "entering" (the default) or "leaving": a supply airflow measured at a fan
    downstream of the coil is at the leaving state, and taking it at the
    entering state misstates ṁ by T_out/T_in (+11 % on a preheat coil
    from −10 to 20 °C, −4 % on a cooling coil from 24 to 12 °C). The
    humidity ratio defaults to 0 (dry air), which matches the "standard air"
    of the 1.08 × cfm × ΔT°F rule of thumb.
    """
    q = _airflow("airflow_m3s", airflow_m3s)
    t_in = v.air_temperature("t_in_c", t_in_c, label="entering air temperature")
    t_out = v.air_temperature("t_out_c", t_out_c, label="leaving air temperature")
    p = v.pressure("pressure_pa", pressure_pa)
    w = _w("humidity_ratio", humidity_ratio)
    at = v.choice("airflow_at", airflow_at, AIRFLOW_STATES)
    m = _dry_air_mass_flow(q, t_in if at == "entering" else t_out, w, p)
    return m * (CP_DRY_AIR_J_PER_KG_K + w * CP_WATER_VAPOUR_J_PER_KG_K) * (t_out - t_in)


def latent_heat_w(
    *,
    airflow_m3s: float,
    humidity_ratio_in: float,
    humidity_ratio_out: float,
    t_in_c: float,
    t_out_c: float,
    pressure_pa: float = STANDARD_PRESSURE_PA,
) -> float:
    """Latent heat added to an air stream, W (negative when a coil dehumidifies).

    q_l = ṁ_da (W_out − W_in)(2501 + 1.86 t_out) kJ/kg — the vapour part of
    ASHRAE Handbook—Fundamentals 2017 ch.1 eq. 32. Together with
    ``sensible_heat_w`` at W = W_in the two add up exactly to ṁ_da Δh.
    """
    q = _airflow("airflow_m3s", airflow_m3s)
    w_in = _w("humidity_ratio_in", humidity_ratio_in)
    w_out = _w("humidity_ratio_out", humidity_ratio_out)
    t_in = v.air_temperature("t_in_c", t_in_c, label="entering air temperature")
    t_out = v.air_temperature("t_out_c", t_out_c, label="leaving air temperature")
    p = v.pressure("pressure_pa", pressure_pa)
    m = _dry_air_mass_flow(q, t_in, w_in, p)
    return m * (w_out - w_in) * (H_FG_0C_J_PER_KG + CP_WATER_VAPOUR_J_PER_KG_K * t_out)


def total_heat_w(*, airflow_m3s: float, state_in: AirState, state_out: AirState) -> AirHeat:
    """Sensible, latent and total heat added to an air stream, W.

    q_t = ṁ_da (h_out − h_in) (ASHRAE Handbook—Fundamentals 2017 ch.1 eq. 32
    enthalpies), ṁ_da = V / v_in; split into sensible and latent parts as in
    ``sensible_heat_w`` and ``latent_heat_w`` so that the parts sum to the total.
    """
    for name, state in (("state_in", state_in), ("state_out", state_out)):
        if not isinstance(state, AirState):
            raise EngineeringInputError(
                field=name,
                value=state,
                allowed="an AirState from air_state()",
                message=f"{name}={state!r} is not an AirState from air_state()",
            )
    q = _airflow("airflow_m3s", airflow_m3s)
    m = q / state_in.specific_volume_m3_per_kg
    total = m * (state_out.enthalpy_j_per_kg - state_in.enthalpy_j_per_kg)
    sensible = (
        m
        * (CP_DRY_AIR_J_PER_KG_K + state_in.humidity_ratio * CP_WATER_VAPOUR_J_PER_KG_K)
        * (state_out.dry_bulb_c - state_in.dry_bulb_c)
    )
    return AirHeat(sensible_w=sensible, latent_w=total - sensible, total_w=total)
