"""Judging readings against limits: verdicts and plain-words reasons.

The thresholds here are defaults of common practice, not values from a
published standard; every one is a keyword argument so a site or a checklist
template can set its own.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import StrEnum
from itertools import pairwise

from engineering import validate as v
from engineering.errors import EngineeringInputError
from engineering.faults.thresholds import FaultThresholds

__all__ = [
    "BAND_ORDER",
    "Check",
    "Verdict",
    "band_check",
    "band_in_order",
    "damper_position_check",
    "sensor_drift_check",
    "static_pressure_check",
    "supply_temperature_check",
    "valve_leak_check",
    "worst",
]

# Deviations are rounded before comparison so that 17.9 − 16.9 counts as
# exactly 1.0 K against a 1.0 K limit, as a technician would read it.
_ROUND = 9


class Verdict(StrEnum):
    """The verdict of a judged reading: the one vocabulary of the checks here, the stored evaluations and
    readings (``inspections.models``), pages, PDFs and the phone (evaluate.js, checklist.js keep the values).
    ``NOT_APPLICABLE`` is an answer "not applicable": recorded, never judged."""

    OK = "ok"
    WATCH = "watch"
    FAIL = "fail"
    NOT_APPLICABLE = "na"

    @property
    def label(self) -> str:
        """The verdict as a person reads it: "OK", "Watch", "Fail", "Not applicable"."""
        return _LABELS[self]


_LABELS = {
    Verdict.OK: "OK",
    Verdict.WATCH: "Watch",
    Verdict.FAIL: "Fail",
    Verdict.NOT_APPLICABLE: "Not applicable",
}
# Not applicable is no judgement: any judged verdict outranks it.
_RANK = {Verdict.NOT_APPLICABLE: -1, Verdict.OK: 0, Verdict.WATCH: 1, Verdict.FAIL: 2}


def worst(*verdicts: Verdict) -> Verdict:
    """The most severe of the verdicts given (OK when none)."""
    return max(verdicts, key=_RANK.__getitem__, default=Verdict.OK)


@dataclass(frozen=True)
class Check:
    """Outcome of one check.

    ``decided`` is False when the measurement's uncertainty band straddles a
    limit, so no honest verdict exists; ``verdict`` is then WATCH and the
    reason starts with "cannot decide".
    """

    verdict: Verdict
    value: float
    limits: dict[str, float] = field(default_factory=dict)
    reason: str = ""
    decided: bool = True


def _grade(deviation: float, watch: float, fail: float) -> Verdict:
    d = round(abs(deviation), _ROUND)
    if d > fail:
        return Verdict.FAIL
    if d > watch:
        return Verdict.WATCH
    return Verdict.OK


def _ordered_limits(watch_name: str, watch: float, fail_name: str, fail: float, unit: str) -> None:
    if fail < watch:
        raise EngineeringInputError(
            field=fail_name,
            value=fail,
            allowed=f"at least {watch_name}={v.fmt(watch)} {unit}".rstrip(),
            message=(f"{fail_name}={v.fmt(fail)} is outside at least {watch_name}={v.fmt(watch)} {unit}".rstrip()),
            low=watch,
        )


# The order of a band's limits (any may be open): what band_check, a checklist's installed limits and the readings
# judged against a band all hold to (inspections.services.library, inspections.evaluation.readings).
BAND_ORDER = "watch_low ≤ ok_low ≤ ok_high ≤ watch_high"


def band_in_order(
    *,
    ok_low: float | None = None,
    ok_high: float | None = None,
    watch_low: float | None = None,
    watch_high: float | None = None,
) -> bool:
    """Whether the limits that are set (None: open) are in the order ``BAND_ORDER``: each at most the next."""
    ordered = [x for x in (watch_low, ok_low, ok_high, watch_high) if x is not None]
    return all(a <= b for a, b in pairwise(ordered))


def band_check(
    *,
    value: float,
    ok_low: float | None,
    ok_high: float | None,
    watch_low: float | None = None,
    watch_high: float | None = None,
    label: str = "value",
    unit: str = "",
) -> Check:
    """OK inside [ok_low, ok_high], WATCH inside [watch_low, watch_high], else FAIL.

    Any limit may be None (open). A missing watch limit means the band goes
    straight from OK to FAIL on that side. Common practice (no published source).
    """
    x = v.finite("value", value)
    lims = {}
    for name, lim in (("watch_low", watch_low), ("ok_low", ok_low), ("ok_high", ok_high), ("watch_high", watch_high)):
        if lim is not None:
            lims[name] = v.finite(name, lim)
    wl = lims.get("watch_low", lims.get("ok_low"))
    wh = lims.get("watch_high", lims.get("ok_high"))
    if not band_in_order(**lims):
        ordered = tuple(lims[k] for k in ("watch_low", "ok_low", "ok_high", "watch_high") if k in lims)
        raise EngineeringInputError(
            field="ok_low",
            value=ordered,
            allowed=BAND_ORDER,
            message=f"limits {lims} are not in order {BAND_ORDER}",
        )
    u = f" {unit}" if unit else ""
    ok_lo, ok_hi = lims.get("ok_low"), lims.get("ok_high")
    ok_text = _span_text(ok_lo, ok_hi, u)
    if (ok_lo is None or x >= ok_lo) and (ok_hi is None or x <= ok_hi):
        verdict = Verdict.OK
        reason = f"{label} {v.fmt(x)}{u} is within {ok_text}"
    elif (wl is None or x >= wl) and (wh is None or x <= wh):
        verdict = Verdict.WATCH
        reason = f"{label} {v.fmt(x)}{u} is outside {ok_text} but within {_span_text(wl, wh, u)}"
    else:
        verdict = Verdict.FAIL
        reason = f"{label} {v.fmt(x)}{u} is outside {_span_text(wl, wh, u)}"
    return Check(verdict=verdict, value=x, limits=lims, reason=reason)


def _span_text(low: float | None, high: float | None, u: str) -> str:
    if low is not None and high is not None:
        return f"{v.fmt(low)}–{v.fmt(high)}{u}"
    if low is not None:
        return f"at least {v.fmt(low)}{u}"
    if high is not None:
        return f"at most {v.fmt(high)}{u}"
    return "any value"


def supply_temperature_check(
    *, measured_c: float, setpoint_c: float, watch_k: float = 1.0, fail_k: float = 2.0
) -> Check:
    """Supply-air temperature against its set point: |t − t_set| graded by
    watch_k / fail_k (defaults 1 K / 2 K: common practice, no published source).
    """
    t = v.air_temperature("measured_c", measured_c, label="supply air temperature")
    sp = v.air_temperature("setpoint_c", setpoint_c, label="supply air set point")
    watch = v.non_negative("watch_k", watch_k, unit="K")
    fail = v.non_negative("fail_k", fail_k, unit="K")
    _ordered_limits("watch_k", watch, "fail_k", fail, "K")
    dev = t - sp
    verdict = _grade(dev, watch, fail)
    side = "above" if dev > 0 else "below"
    where = "at" if round(dev, 1) == 0 else f"{abs(dev):.1f} K {side}"
    reason = (
        f"supply air {t:.1f} °C, {where} set point {sp:.1f} °C (watch above {watch:.1f} K, fail above {fail:.1f} K)"
    )
    return Check(
        verdict=verdict,
        value=t,
        limits={"setpoint_c": sp, "watch_k": watch, "fail_k": fail, "deviation_k": dev},
        reason=reason,
    )


def static_pressure_check(
    *, measured_pa: float, setpoint_pa: float, watch_pct: float = 10.0, fail_pct: float = 20.0
) -> Check:
    """Duct static pressure against its set point, deviation as % of set point
    (defaults 10 % / 20 %: common practice, no published source)."""
    p = v.in_range("measured_pa", measured_pa, -5_000.0, 5_000.0, unit="Pa", label="static pressure")
    sp = v.in_range(
        "setpoint_pa",
        setpoint_pa,
        0.0,
        5_000.0,
        unit="Pa",
        label="static pressure set point",
        low_open=True,
    )
    watch = v.non_negative("watch_pct", watch_pct, unit="%")
    fail = v.non_negative("fail_pct", fail_pct, unit="%")
    _ordered_limits("watch_pct", watch, "fail_pct", fail, "%")
    dev_pct = (p - sp) / sp * 100.0
    verdict = _grade(dev_pct, watch, fail)
    side = "above" if dev_pct > 0 else "below"
    reason = (
        f"static pressure {p:.0f} Pa, {abs(dev_pct):.1f} % {side} set point {sp:.0f} Pa "
        f"(watch above {watch:g} %, fail above {fail:g} %)"
    )
    return Check(
        verdict=verdict,
        value=p,
        limits={"setpoint_pa": sp, "watch_pct": watch, "fail_pct": fail, "deviation_pct": dev_pct},
        reason=reason,
    )


def damper_position_check(
    *, commanded_pct: float, measured_pct: float, watch_pct: float = 5.0, fail_pct: float = 10.0
) -> Check:
    """Damper position feedback against command, in percentage points of
    stroke (defaults 5 / 10 points: common practice, no published source)."""
    cmd = v.in_range("commanded_pct", commanded_pct, 0.0, 100.0, unit="%", label="commanded position")
    pos = v.in_range("measured_pct", measured_pct, 0.0, 100.0, unit="%", label="measured position")
    watch = v.non_negative("watch_pct", watch_pct, unit="%")
    fail = v.non_negative("fail_pct", fail_pct, unit="%")
    _ordered_limits("watch_pct", watch, "fail_pct", fail, "%")
    dev = pos - cmd
    verdict = _grade(dev, watch, fail)
    side = "more open" if dev > 0 else "more closed"
    where = "matching" if round(dev, 1) == 0 else f"{abs(dev):.1f} points {side} than"
    reason = (
        f"damper at {pos:.0f} %, {where} commanded {cmd:.0f} % "
        f"(watch above {watch:g} points, fail above {fail:g} points)"
    )
    return Check(
        verdict=verdict,
        value=pos,
        limits={"commanded_pct": cmd, "watch_pct": watch, "fail_pct": fail, "deviation_pct": dev},
        reason=reason,
    )


def sensor_drift_check(
    *,
    sensor_value: float,
    reference_value: float,
    tolerance_abs: float,
    tolerance_pct_of_reading: float = 0.0,
    watch_fraction: float = 0.8,
    unit: str = "",
) -> Check:
    """Installed sensor against a reference meter.

    Allowed error = tolerance_abs + tolerance_pct_of_reading/100 × |reference|
    (the usual form of a sensor accuracy specification, e.g. a CO2 sensor
    ±(50 ppm + 3 % of reading) — common practice for NDIR sensors, from
    memory). FAIL beyond the allowed error, WATCH beyond watch_fraction of it
    (0.8 by default: an early warning, common practice).
    """
    s = v.finite("sensor_value", sensor_value)
    ref = v.finite("reference_value", reference_value)
    tol_abs = v.non_negative("tolerance_abs", tolerance_abs, unit=unit)
    tol_pct = v.in_range("tolerance_pct_of_reading", tolerance_pct_of_reading, 0.0, 100.0, unit="%")
    frac = v.in_range("watch_fraction", watch_fraction, 0.0, 1.0, label="watch fraction")
    allowed = tol_abs + tol_pct / 100.0 * abs(ref)
    if allowed <= 0:
        raise EngineeringInputError(
            field="tolerance_abs",
            value=tol_abs,
            allowed="a tolerance above 0 (absolute or % of reading)",
            message="tolerance_abs=0 with tolerance_pct_of_reading=0 allows no error at all",
            low=0.0,
        )
    diff = s - ref
    verdict = _grade(diff, frac * allowed, allowed)
    u = f" {unit}" if unit else ""
    side = "above" if diff > 0 else "below"
    spec = f"±{v.fmt(tol_abs)}{u}" if tol_pct == 0 else f"±({v.fmt(tol_abs)}{u} + {v.fmt(tol_pct)} %)"
    reason = (
        f"sensor reads {v.fmt(s)}{u}, {v.fmt(abs(round(diff, 6)))}{u} {side} reference "
        f"{v.fmt(ref)}{u}; allowed {spec} = ±{v.fmt(round(allowed, 6))}{u}"
    )
    return Check(
        verdict=verdict,
        value=s,
        limits={"reference_value": ref, "allowed_error": allowed, "watch_error": frac * allowed, "error": diff},
        reason=reason,
    )


COIL_DUTIES = ("cooling", "heating", "preheat")
# What a shut coil's air changing the wrong way beyond the allowance says, by duty (valve_leak_check's WATCH).
WRONG_WAY = {
    "cooling": "warmed across a shut cooling coil (sensor error or heat from another coil)",
    "heating": "cooled across a shut heating coil (sensor error or cooling from another coil)",
    "preheat": "cooled across a shut preheat coil (sensor error or cooling from another coil)",
}


def valve_leak_check(*, entering_c: float, leaving_c: float, duty: str, limit_k: float | None = None) -> Check:
    """A coil's valve commanded closed, the fan running: does the coil still change the air's temperature?

    A cooling coil's drop (entering − leaving) or a heating or preheat coil's rise (leaving − entering) at or
    above ``limit_k`` means water passes the closed valve (FAIL); below it the valve holds (OK). The default
    limit is the one the trend rules FC#14/FC#15 use (ASHRAE Guideline 36-2018 5.16.14, from memory):
    ``FaultThresholds().coil_change_k``, the two coil sensors' errors in quadrature plus the fan's heat, 2.68 K.
    A change the other way within the same allowance (air warmed a little by a closed cooling coil) is the fan's
    heat or a sensor: OK. Beyond it (entering 18 °C, leaving 25 °C across a shut cooling coil; a heating coil whose
    air cools markedly) the reading shows a sensor error or heat (or cold) from elsewhere, such as a heating valve
    passing upstream: WATCH, re-check, for it cannot show that the valve holds.
    """
    t_in = v.air_temperature("entering_c", entering_c, label="entering air temperature")
    t_out = v.air_temperature("leaving_c", leaving_c, label="leaving air temperature")
    if duty not in COIL_DUTIES:
        raise EngineeringInputError(
            field="duty",
            value=duty,
            allowed=", ".join(COIL_DUTIES),
            message=f"duty={duty!r} is not one of {', '.join(COIL_DUTIES)}",
        )
    limit = FaultThresholds().coil_change_k if limit_k is None else v.non_negative("limit_k", limit_k, unit="K")
    change = t_in - t_out if duty == "cooling" else t_out - t_in
    what = "drop" if duty == "cooling" else "rise"
    reason = (
        f"air {t_in:.1f} °C entering, {t_out:.1f} °C leaving the closed coil: a {what} of {change:.1f} K "
        f"(a leak from {limit:.1f} K)"
    )
    if round(change, _ROUND) >= round(limit, _ROUND):
        verdict = Verdict.FAIL
    elif round(-change, _ROUND) >= round(limit, _ROUND):
        verdict = Verdict.WATCH
        reason = (
            f"re-check: air {WRONG_WAY[duty]}: {t_in:.1f} °C entering, "
            f"{t_out:.1f} °C leaving, {abs(change):.1f} K the wrong way, beyond the {limit:.1f} K allowance"
        )
    else:
        verdict = Verdict.OK
    return Check(verdict=verdict, value=change, limits={"change_k": change, "limit_k": limit}, reason=reason)
