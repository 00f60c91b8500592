"""Heat recovery: temperature (sensible) effectiveness from field temperatures, and a check against design.

Supply-side temperature ratio, EN 308:1997 "Heat exchangers — Test procedures
for establishing performance of air to air and flue gases heat recovery
devices" (η_t = (t₂₂ − t₂₁)/(t₁₁ − t₂₁), outdoor air 21 → 22, extract air
11), the same as the sensible effectiveness of ASHRAE Handbook—HVAC Systems and
Equipment, chapter "Air-to-air energy recovery equipment"
(ε = (t₂ − t₁)/(t₃ − t₁) when the supply airflow is the smaller capacity
rate). Both quoted from memory. The ratio equals the exchanger's
effectiveness only with balanced airflows and no condensation or frosting on
the extract side; a field reading is an indication, not a rating test.
Sensor uncertainty is propagated by first-order partial derivatives combined
root-sum-square (JCGM 100:2008, "GUM", §5.1.2).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from engineering import validate as v
from engineering.controls import Check, Verdict
from engineering.errors import EngineeringInputError, IndeterminateError

__all__ = [
    "HR_FAIL_POINTS",
    "HR_MAX_UNCERTAINTY",
    "HR_MIN_DIFFERENCE_K",
    "HR_WATCH_POINTS",
    "HeatRecovery",
    "heat_recovery_check",
    "heat_recovery_effectiveness",
]

# Below this extract–outdoor difference, a ±0.5 K sensor error alone moves
# the ratio by more than 0.1: common practice, no published source. (EN 308
# rating tests use about 20 K, from memory.)
HR_MIN_DIFFERENCE_K = 5.0
# An uncertainty of ±0.2 or more cannot tell a working exchanger from a bad one.
HR_MAX_UNCERTAINTY = 0.2
# Points (percentage points of effectiveness) below design before watch / fail:
# common practice, no published source.
HR_WATCH_POINTS = 5.0
HR_FAIL_POINTS = 15.0


@dataclass(frozen=True)
class HeatRecovery:
    """Temperature effectiveness 0–1 (clipped), its ± uncertainty and the unclipped value."""

    effectiveness: float
    uncertainty: float
    low: float
    high: float
    raw_effectiveness: float
    extract_outdoor_difference_k: float


def heat_recovery_effectiveness(
    *,
    t_outdoor_c: float,
    t_supply_after_recovery_c: float,
    t_extract_c: float,
    sensor_accuracy_k: float = 0.5,
    min_difference_k: float = HR_MIN_DIFFERENCE_K,
    max_uncertainty: float = HR_MAX_UNCERTAINTY,
) -> HeatRecovery:
    """ε = (t_supply − t_outdoor)/(t_extract − t_outdoor), supply-side temperature ratio.

    EN 308:1997 temperature ratio / ASHRAE HVAC Systems and Equipment sensible
    effectiveness (from memory; see the module docstring). Works for heating
    (outdoor colder) and cooling recovery (outdoor warmer) alike. Refuses with
    ``IndeterminateError`` when extract and outdoor differ by less than
    ``min_difference_k`` (5 K), when the propagated uncertainty reaches
    ``max_uncertainty`` (±0.2), or when the supply temperature lies outside the
    outdoor–extract range by more than the uncertainty (a sensor in the wrong
    place, or a heater upstream of it).
    """
    o = v.air_temperature("t_outdoor_c", t_outdoor_c, label="outdoor air temperature")
    s = v.air_temperature(
        "t_supply_after_recovery_c", t_supply_after_recovery_c, label="supply air after recovery temperature"
    )
    e = v.air_temperature("t_extract_c", t_extract_c, label="extract air temperature")
    acc = v.in_range("sensor_accuracy_k", sensor_accuracy_k, 0.0, 5.0, unit="K", label="sensor accuracy")
    mind = v.positive("min_difference_k", min_difference_k, unit="K")
    maxu = v.in_range("max_uncertainty", max_uncertainty, 0.0, 1.0, low_open=True)
    diff = e - o
    if abs(diff) < mind:
        raise IndeterminateError(
            field="t_extract_c",
            value=e,
            allowed=f"extract and outdoor must differ by at least {v.fmt(mind)} K",
            message=(
                f"cannot compute a heat-recovery effectiveness: outdoor {v.fmt(o)} °C and extract "
                f"{v.fmt(e)} °C differ by {v.fmt(round(abs(diff), 3))} K; they must differ by at least "
                f"{v.fmt(mind)} K (measure on a colder or warmer day)"
            ),
            low=mind,
            unit="K",
        )
    x = (s - o) / diff
    # ∂ε/∂s = 1/(e−o); ∂ε/∂o = (s−e)/(e−o)²; ∂ε/∂e = −(s−o)/(e−o)².
    u = acc * math.sqrt((1 / diff) ** 2 + ((s - e) / diff**2) ** 2 + ((s - o) / diff**2) ** 2)
    if u >= maxu:
        raise IndeterminateError(
            field="t_extract_c",
            value=e,
            allowed=f"an uncertainty below ±{v.fmt(maxu)}",
            message=(
                f"cannot compute a heat-recovery effectiveness: with the sensor accuracy given the result "
                f"would be {x:.2f} ± {u:.2f}; outdoor and extract differ by only {v.fmt(round(abs(diff), 3))} K"
            ),
            high=maxu,
        )
    if x < -u or x > 1.0 + u:
        raise IndeterminateError(
            field="t_supply_after_recovery_c",
            value=s,
            allowed=f"between outdoor {v.fmt(o)} and extract {v.fmt(e)} °C",
            message=(
                f"supply after recovery {v.fmt(s)} °C is not between outdoor {v.fmt(o)} °C and extract "
                f"{v.fmt(e)} °C (even allowing ±{u:.2f}): check that the sensor sits after the exchanger "
                "and before any heating or cooling coil"
            ),
            unit="°C",
        )
    clipped = min(max(x, 0.0), 1.0)
    return HeatRecovery(
        effectiveness=clipped,
        uncertainty=u,
        low=max(clipped - u, 0.0),
        high=min(clipped + u, 1.0),
        raw_effectiveness=x,
        extract_outdoor_difference_k=diff,
    )


def heat_recovery_check(
    *,
    effectiveness: float,
    uncertainty: float,
    design_effectiveness_pct: float,
    watch_points: float = HR_WATCH_POINTS,
    fail_points: float = HR_FAIL_POINTS,
) -> Check:
    """Measured effectiveness against the unit's design effectiveness.

    OK when at most ``watch_points`` (5) percentage points below design;
    FAIL when even the top of the uncertainty band is more than
    ``fail_points`` (15) below design; WATCH between (including a central
    value past the fail line whose band still reaches it: not decided).
    Margins are common practice, no published source.
    """
    x = v.in_range("effectiveness", effectiveness, 0.0, 1.0, label="effectiveness")
    u = v.in_range("uncertainty", uncertainty, 0.0, 1.0, label="uncertainty")
    design = v.in_range(
        "design_effectiveness_pct",
        design_effectiveness_pct,
        0.0,
        100.0,
        unit="%",
        label="design effectiveness",
        low_open=True,
    )
    watch = v.non_negative("watch_points", watch_points, unit="points")
    fail = v.non_negative("fail_points", fail_points, unit="points")
    if fail < watch:
        raise EngineeringInputError(
            field="fail_points", value=fail, allowed=f"at least watch_points={v.fmt(watch)}", low=watch
        )
    pct, u_pct = x * 100.0, u * 100.0
    below = design - pct
    limits = {
        "design_pct": design,
        "effectiveness_pct": pct,
        "uncertainty_pct": u_pct,
        "below_design_points": below,
        "watch_points": watch,
        "fail_points": fail,
    }
    text = (
        f"effectiveness {pct:.0f} % ± {u_pct:.0f} points against design {design:.0f} % "
        f"(watch beyond {watch:g} points below, fail beyond {fail:g})"
    )
    if round(below, 9) <= watch:
        return Check(Verdict.OK, x, limits, text)
    if round(design - (pct + u_pct), 9) <= fail:
        decided = round(below, 9) <= fail
        prefix = "" if decided else "cannot decide between watch and fail: "
        return Check(Verdict.WATCH, x, limits, f"{prefix}{text}; {below:.0f} points below design", decided=decided)
    return Check(Verdict.FAIL, x, limits, f"{text}; {below:.0f} points below design")
