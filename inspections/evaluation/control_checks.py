"""Controls: supply temperature and duct static pressure against their set points, damper position against its
command, and sensor drift against a reference instrument."""

from __future__ import annotations

from engineering import controls
from inspections.display import DRIFT_QUANTITIES
from inspections.reasons import q as qty

from .form import Form
from .results import Result

# Sensor accuracy when the registry gives none (common practice, from memory):
# NDIR CO2 ±(50 ppm + 3 % of reading); duct temperature ±0.5 K; RH ±3 points;
# differential pressure ±(5 Pa + 2 % of reading).
DRIFT_DEFAULTS = {
    "co2": (50.0, 3.0, "ppm"),
    "temp": (0.5, 0.0, "°C"),
    "rh": (3.0, 0.0, "%"),
    "pressure": (5.0, 2.0, "Pa"),
}


def supply_temperature_checks(form: Form, consumed: set) -> list[Result]:
    """The supply air temperature against its set point (the form's, or the unit's), on each checklist that reads it."""
    out = []
    ahu = form.ahu
    for template in ("controls_check", "cooling_season_check"):
        t = form.num(f"{template}.supply_air")
        if t is None:
            continue
        sp = form.num(f"{template}.supply_setpoint")
        sp = sp if sp is not None else ahu.supply_air_setpoint_c
        if sp is None:
            continue
        consumed.add((f"{template}.supply_air", None))
        chk = controls.supply_temperature_check(measured_c=t, setpoint_c=sp)
        res = Result(
            check="supply_temperature",
            item=f"{template}.supply_air",
            verdict=chk.verdict.value,
            condition_code="supply_temp_off",
            method="|supply − set point| against 1 K / 2 K (common practice)",
            derived={"supply_air_c": t, "setpoint_c": sp, "deviation_k": round(chk.limits["deviation_k"], 2)},
        )
        dev = chk.limits["deviation_k"]
        where = (
            ["at"]
            if round(dev, 1) == 0
            else [qty(abs(dev), "temperature_difference"), " above" if dev > 0 else " below"]
        )
        res.say(
            "supply air ",
            qty(t, "temperature"),
            ", ",
            where,
            " set point ",
            qty(sp, "temperature"),
            " (watch above ",
            qty(chk.limits["watch_k"], "temperature_difference"),
            ", fail above ",
            qty(chk.limits["fail_k"], "temperature_difference"),
            ")",
        )
        out.append(res)
    return out


def duct_static_checks(form: Form, consumed: set) -> list[Result]:
    """The duct static pressure against its set point (the form's, or the unit's)."""
    out = []
    ahu = form.ahu
    p = form.num("controls_check.duct_static")
    if p is not None:
        sp = form.num("controls_check.duct_static_setpoint")
        sp = sp if sp is not None else ahu.duct_static_setpoint_pa
        if sp:
            consumed.add(("controls_check.duct_static", None))
            chk = controls.static_pressure_check(measured_pa=p, setpoint_pa=sp)
            res = Result(
                check="duct_static",
                item="controls_check.duct_static",
                verdict=chk.verdict.value,
                method="deviation as % of set point, 10 % / 20 % (common practice)",
                derived={"static_pa": p, "setpoint_pa": sp, "deviation_pct": round(chk.limits["deviation_pct"], 1)},
            )
            dev = chk.limits["deviation_pct"]
            res.say(
                "static pressure ",
                qty(p, "pressure"),
                f", {abs(dev):.1f} % {'above' if dev > 0 else 'below'} set point ",
                qty(sp, "pressure"),
                f" (watch above {chk.limits['watch_pct']:g} %, fail above {chk.limits['fail_pct']:g} %)",
            )
            out.append(res)
    return out


def damper_checks(form: Form, consumed: set) -> list[Result]:
    """Each damper's measured position against its command."""
    out = []
    for damper in (c for c in form.components if c.kind == "damper"):
        cmd, pos = form.num("damper_actuator.command", damper), form.num("damper_actuator.position", damper)
        if cmd is None or pos is None:
            continue
        consumed.add(("damper_actuator.position", damper.pk))
        chk = controls.damper_position_check(commanded_pct=cmd, measured_pct=pos)
        out.append(
            Result(
                check="damper_position",
                item="damper_actuator.position",
                component=damper,
                verdict=chk.verdict.value,
                reason=f"{damper.name}: {chk.reason}",
                condition_code="damper_position",
                method="position − command, 5 / 10 points (common practice)",
                derived={"commanded_pct": cmd, "measured_pct": pos, "error_pct": round(chk.limits["deviation_pct"], 1)},
            )
        )
    return out


def drift_checks(form: Form, consumed: set) -> list[Result]:
    """Each sensor against a reference instrument, within its stated accuracy or a typical one."""
    out = []
    for sensor in (c for c in form.components if c.kind == "sensor"):
        for prefix, (tol_abs, tol_pct, unit) in DRIFT_DEFAULTS.items():
            s = form.num(f"sensor_calibration.{prefix}_sensor", sensor)
            r = form.num(f"sensor_calibration.{prefix}_reference", sensor)
            if s is None or r is None:
                continue
            consumed.add((f"sensor_calibration.{prefix}_reference", sensor.pk))
            source = "the sensor's stated accuracy"
            if sensor.specs.get("accuracy"):
                tol_abs, tol_pct = float(sensor.specs["accuracy"]), 0.0
            else:
                source = "a typical accuracy (common practice, from memory)"
            chk = controls.sensor_drift_check(
                sensor_value=s, reference_value=r, tolerance_abs=tol_abs, tolerance_pct_of_reading=tol_pct, unit=unit
            )
            res = Result(
                check="sensor_drift",
                item=f"sensor_calibration.{prefix}_reference",
                component=sensor,
                verdict=chk.verdict.value,
                condition_code="sensor_drift",
                method=f"sensor − reference against {source}",
                derived={
                    "sensor": s,
                    "reference": r,
                    "error": round(chk.limits["error"], 3),
                    "allowed_error": round(chk.limits["allowed_error"], 3),
                },
            )
            value_q, diff_q = DRIFT_QUANTITIES[prefix]
            diff = chk.limits["error"]
            spec = (
                [qty(tol_abs, diff_q)] if tol_pct == 0 else ["(", qty(tol_abs, diff_q), f" + {tol_pct:g} % of reading)"]
            )
            res.say(
                f"{sensor.name}: sensor reads ",
                qty(s, value_q),
                ", ",
                qty(abs(diff), diff_q),
                f" {'above' if diff > 0 else 'below'} reference ",
                qty(r, value_q),
                "; allowed ±",
                spec,
                # The sum only when there is one to work out ("±(0.3 K + 1 % of reading) = ±0.5 K").
                *([] if tol_pct == 0 else [" = ±", qty(chk.limits["allowed_error"], diff_q)]),
            )
            out.append(res)
    return out
