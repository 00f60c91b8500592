"""Fan laws and fan power.

Fan laws: AMCA Publication 201 and ASHRAE Handbook—HVAC Systems and
Equipment, "Fans" chapter (fan laws table; from memory): for a given fan and
air density, Q ∝ N, p ∝ N², P ∝ N³; pressure and power scale with density.
Air power P_air = Q·p (definition of fan air power, same sources).
"""

from __future__ import annotations

from dataclasses import dataclass

from engineering import validate as v
from engineering.errors import EngineeringInputError

__all__ = [
    "FanPoint",
    "expected_flow_at_speed",
    "fan_air_power_w",
    "fan_electric_power_w",
    "fan_law_scale",
    "fan_shaft_power_w",
]

_FLOW = (0.0, 100.0)
_PRESSURE = (0.0, 10_000.0)


@dataclass(frozen=True)
class FanPoint:
    flow_m3s: float
    pressure_pa: float
    power_w: float


def _flow(name: str, value: object) -> float:
    return v.in_range(name, value, *_FLOW, unit="m³/s", label="airflow")


def _pressure(name: str, value: object) -> float:
    return v.in_range(name, value, *_PRESSURE, unit="Pa", label="fan pressure")


def _speed(name: str, value: object) -> float:
    return v.in_range(name, value, 0.0, 100_000.0, unit="Hz or rpm", label="fan speed", low_open=True)


def fan_law_scale(
    *,
    flow_m3s: float,
    pressure_pa: float,
    power_w: float,
    speed_from: float,
    speed_to: float,
    density_from: float | None = None,
    density_to: float | None = None,
) -> FanPoint:
    """Operating point of the same fan at another speed (and air density).

    Q₂ = Q₁ (N₂/N₁); p₂ = p₁ (N₂/N₁)² (ρ₂/ρ₁); P₂ = P₁ (N₂/N₁)³ (ρ₂/ρ₁).
    AMCA 201 / ASHRAE Handbook—HVAC Systems and Equipment, Fans (from memory).
    Speeds in any one unit (Hz or rpm). Holds along a system curve through
    the origin; a duct system with a static-pressure set point does not
    follow it.
    """
    q = _flow("flow_m3s", flow_m3s)
    p = _pressure("pressure_pa", pressure_pa)
    pw = v.in_range("power_w", power_w, 0.0, 1e7, unit="W", label="fan power")
    n1 = _speed("speed_from", speed_from)
    n2 = _speed("speed_to", speed_to)
    if (density_from is None) != (density_to is None):
        raise EngineeringInputError(
            field="density_to",
            value=density_to,
            allowed="both densities or neither",
            message="give both density_from and density_to, or neither",
        )
    rho = 1.0
    if density_from is not None and density_to is not None:
        d1 = v.in_range("density_from", density_from, 0.5, 1.6, unit="kg/m³", label="air density")
        d2 = v.in_range("density_to", density_to, 0.5, 1.6, unit="kg/m³", label="air density")
        rho = d2 / d1
    r = n2 / n1
    return FanPoint(flow_m3s=q * r, pressure_pa=p * r**2 * rho, power_w=pw * r**3 * rho)


def fan_air_power_w(*, flow_m3s: float, pressure_pa: float) -> float:
    """Fan air power P_air = Q·p, W (AMCA 201; ASHRAE HVAC Systems and
    Equipment, Fans). Use total pressure for total air power, static for
    static air power."""
    return _flow("flow_m3s", flow_m3s) * _pressure("pressure_pa", pressure_pa)


def fan_shaft_power_w(*, flow_m3s: float, pressure_pa: float, fan_efficiency: float) -> float:
    """Fan shaft power P_shaft = Q·p / η_fan, W (same sources as
    ``fan_air_power_w``; η_fan on the same pressure basis as p)."""
    eta = v.efficiency("fan_efficiency", fan_efficiency, "fan efficiency")
    return fan_air_power_w(flow_m3s=flow_m3s, pressure_pa=pressure_pa) / eta


def fan_electric_power_w(
    *,
    flow_m3s: float,
    pressure_pa: float,
    fan_efficiency: float,
    motor_efficiency: float,
    drive_efficiency: float = 1.0,
) -> float:
    """Electric input P_el = Q·p / (η_fan η_drive η_motor), W (same sources;
    drive_efficiency is the belt (about 0.9–0.97, common practice) or 1.0 for
    a direct drive; include a VFD's efficiency in it if one is fitted)."""
    eta_m = v.efficiency("motor_efficiency", motor_efficiency, "motor efficiency")
    eta_d = v.efficiency("drive_efficiency", drive_efficiency, "drive efficiency")
    return fan_shaft_power_w(flow_m3s=flow_m3s, pressure_pa=pressure_pa, fan_efficiency=fan_efficiency) / (
        eta_m * eta_d
    )


def expected_flow_at_speed(*, design_flow_m3s: float, design_speed: float, measured_speed: float) -> float:
    """Airflow expected at a measured speed by the first fan law, Q = Q_d·N/N_d,
    m³/s (same sources). Speeds in one unit, Hz or rpm; for a VFD-driven
    motor the output frequency stands in for speed (slip neglected)."""
    q = _flow("design_flow_m3s", design_flow_m3s)
    nd = _speed("design_speed", design_speed)
    n = v.in_range("measured_speed", measured_speed, 0.0, 100_000.0, unit="Hz or rpm", label="fan speed")
    return q * n / nd
