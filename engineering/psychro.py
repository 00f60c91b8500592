"""Moist-air properties.

psychrolib implements the ASHRAE Handbook—Fundamentals (2017) chapter 1
ideal-gas formulation (Meyer & Thevenard, "PsychroLib", JOSS 4(33), 2019).
The unit system is set once here; nothing else in Plenum may call
``psychrolib.SetUnitSystem`` because it is global state.
"""

from __future__ import annotations

from dataclasses import dataclass

import psychrolib

from engineering import validate as v
from engineering.errors import EngineeringInputError

psychrolib.SetUnitSystem(psychrolib.SI)

__all__ = ["STANDARD_PRESSURE_PA", "AirState", "air_state", "pressure_from_altitude"]

STANDARD_PRESSURE_PA = 101_325.0

# psychrolib clamps the humidity ratio to this floor instead of failing; a
# result at the floor means the input described air drier than dry air.
_PSYCHROLIB_MIN_W = 1e-7

ALTITUDE_M = (-500.0, 5_500.0)
# Very dry cold air has dew points well below the −60 °C air-temperature band;
# any dew point this package reports must be accepted back as an input.
DEW_POINT_MIN_C = -90.0


@dataclass(frozen=True)
class AirState:
    """One moist-air state; all values SI, per kg of dry air where specific."""

    dry_bulb_c: float
    humidity_ratio: float  # kg water / kg dry air
    enthalpy_j_per_kg: float  # per kg dry air, 0 at 0 °C dry air
    dew_point_c: float
    wet_bulb_c: float
    rh_pct: float
    specific_volume_m3_per_kg: float  # m³ moist air / kg dry air
    density_kg_m3: float  # kg moist air / m³
    pressure_pa: float


def air_state(
    *,
    dry_bulb_c: float,
    rh_pct: float | None = None,
    wet_bulb_c: float | None = None,
    dew_point_c: float | None = None,
    pressure_pa: float = STANDARD_PRESSURE_PA,
) -> AirState:
    """Moist-air state from dry bulb plus exactly one of RH, wet bulb, dew point.

    Formulas: ASHRAE Handbook—Fundamentals 2017, ch.1 (saturation pressure
    eq. 5–6, humidity ratio eq. 20/22/33–35, enthalpy eq. 32, specific volume
    eq. 28, wet bulb by iteration on eq. 33/35), via psychrolib.

    Raises EngineeringInputError for out-of-range inputs, for more or fewer
    than one humidity argument, and for humidity inputs that describe air
    drier than dry air (e.g. a wet bulb too far below the dry bulb).
    """
    t = v.air_temperature("dry_bulb_c", dry_bulb_c, label="dry bulb temperature")
    p = v.pressure("pressure_pa", pressure_pa)
    given = {
        name: value
        for name, value in (
            ("rh_pct", rh_pct),
            ("wet_bulb_c", wet_bulb_c),
            ("dew_point_c", dew_point_c),
        )
        if value is not None
    }
    if len(given) != 1:
        raise EngineeringInputError(
            field="rh_pct",
            value=tuple(given) or None,
            allowed="exactly one of rh_pct, wet_bulb_c, dew_point_c",
            message=(
                f"give exactly one of rh_pct, wet_bulb_c, dew_point_c (got {', '.join(given) if given else 'none'})"
            ),
        )
    ((name, raw),) = given.items()
    if name == "rh_pct":
        rh = v.in_range(name, raw, *v.RH_PCT, unit="%", label="relative humidity")
        if rh == 0.0:
            raise EngineeringInputError(
                field=name,
                value=rh,
                allowed="above 0 and at most 100 %",
                message=(
                    "relative humidity rh_pct=0 is not allowed: must be above 0 and "
                    "at most 100 % (perfectly dry air has no dew point)"
                ),
                low=0.0,
                high=100.0,
                unit="%",
            )
        w, twb, tdp, *_ = psychrolib.CalcPsychrometricsFromRelHum(t, rh / 100.0, p)
        rh_frac = rh / 100.0
    elif name == "wet_bulb_c":
        twb = v.in_range(
            name,
            raw,
            v.AIR_TEMPERATURE_C[0],
            t,
            unit="°C",
            label="wet bulb temperature (not above the dry bulb)",
        )
        w, tdp, rh_frac, *_ = psychrolib.CalcPsychrometricsFromTWetBulb(t, twb, p)
    else:
        tdp = v.in_range(
            name,
            raw,
            DEW_POINT_MIN_C,
            t,
            unit="°C",
            label="dew point temperature (not above the dry bulb)",
        )
        w, twb, rh_frac, *_ = psychrolib.CalcPsychrometricsFromTDewPoint(t, tdp, p)
    if w <= _PSYCHROLIB_MIN_W * 1.000001:
        min_twb = psychrolib.GetTWetBulbFromHumRatio(t, 2 * _PSYCHROLIB_MIN_W, p)
        raise EngineeringInputError(
            field=name,
            value=float(raw),
            allowed=f"a wet bulb of at least {min_twb:.1f} °C at this dry bulb",
            message=(
                f"{name}={v.fmt(float(raw))} describes air drier than dry air at dry bulb "
                f"{v.fmt(t)} °C (wet bulb must be at least {min_twb:.1f} °C)"
            ),
            low=min_twb,
            unit="°C",
        )
    h = psychrolib.GetMoistAirEnthalpy(t, w)
    vol = psychrolib.GetMoistAirVolume(t, w, p)
    rho = psychrolib.GetMoistAirDensity(t, w, p)
    return AirState(
        dry_bulb_c=t,
        humidity_ratio=float(w),
        enthalpy_j_per_kg=float(h),
        dew_point_c=float(min(tdp, t)),
        wet_bulb_c=float(min(twb, t)),
        rh_pct=float(min(rh_frac * 100.0, 100.0)),
        specific_volume_m3_per_kg=float(vol),
        density_kg_m3=float(rho),
        pressure_pa=p,
    )


def pressure_from_altitude(*, altitude_m: float) -> float:
    """Standard-atmosphere barometric pressure in Pa at an altitude in m.

    p = 101.325 (1 − 2.25577×10⁻⁵ Z)^5.2559 kPa — ASHRAE Handbook—Fundamentals
    2017, ch.1, eq. 3. Valid in the troposphere; limited here to −500…5500 m,
    which keeps the result inside the 50–110 kPa pressure band.
    """
    z = v.in_range("altitude_m", altitude_m, *ALTITUDE_M, unit="m", label="altitude")
    return float(101_325.0 * (1.0 - 2.25577e-5 * z) ** 5.2559)
