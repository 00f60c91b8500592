"""Outdoor-air fraction of a mixing box from temperatures or CO2.

The mixing balance x_oa = (r − m) / (r − o) holds for any conserved quantity
of an adiabatic mix (ASHRAE Handbook—Fundamentals 2017 ch.1, "adiabatic
mixing of two moist airstreams", eq. 46–47; temperature is conserved only
approximately, CO2 exactly). Sensor uncertainty is propagated by first-order
partial derivatives combined root-sum-square (JCGM 100:2008, "GUM", §5.1.2).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from engineering import validate as v
from engineering.controls import Check, Verdict
from engineering.errors import IndeterminateError

__all__ = [
    "MAX_UNCERTAINTY",
    "MIN_DIFFERENCE_K",
    "MIN_DIFFERENCE_PPM",
    "OaFraction",
    "fraction_check",
    "fraction_words",
    "oa_fraction_from_co2",
    "oa_fraction_from_temperatures",
    "outdoor_airflow_m3s",
    "points_words",
]

# Below these outdoor–return differences the fraction is dominated by sensor
# error and stratification in the mixing box: common practice, no published
# source.
MIN_DIFFERENCE_K = 3.0
MIN_DIFFERENCE_PPM = 100.0
# An uncertainty of ±0.5 or more spans the whole 0–1 range: the result says
# nothing.
MAX_UNCERTAINTY = 0.5


@dataclass(frozen=True)
class OaFraction:
    """Outdoor-air fraction of the mixed (or supply) air, 0–1.

    ``fraction`` is clipped to 0–1; ``raw_fraction`` is the unclipped value.
    ``uncertainty`` is the propagated ± half-width in the same sense as the
    sensor accuracies given (e.g. a maker's ± accuracy).
    """

    fraction: float
    uncertainty: float
    method: str  # "temperature" or "co2"
    low: float
    high: float
    raw_fraction: float
    outdoor_return_difference: float


# A fraction and its uncertainty are kept in a record to three decimals (0.311 ± 0.035).
KEPT_DECIMALS = 3


def kept(x: float) -> float:
    """A fraction or its uncertainty as a record keeps it (``KEPT_DECIMALS``); every text says this value, so
    the words said at the visit and those said later from the record (findings, PDF) are the same."""
    return round(x, KEPT_DECIMALS)


def points_words(uncertainty: float) -> str:
    """An uncertainty of a fraction as every text states it: "± 3 points" (percentage points, whole, of the
    value as kept: 0.0348 is kept 0.035 and reads "± 4 points" at the visit and from the record alike)."""
    return f"± {kept(uncertainty) * 100:.0f} points"


def fraction_words(fraction: float, uncertainty: float) -> str:
    """A fraction and its uncertainty as every text states them: "41 % ± 3 points", of the values as kept (the
    phone's evaluate.js has the same words, fractionWords)."""
    return f"{kept(fraction) * 100:.0f} % {points_words(uncertainty)}"


# The measurement a fraction was found by, in words for messages.
_BY = {"temperature": "temperatures", "co2": "CO2"}


def _fraction(
    *,
    method: str,
    unit: str,
    diff_unit: str,
    outdoor: float,
    ret: float,
    mixed: float,
    acc_o: float,
    acc_r: float,
    acc_m: float,
    min_difference: float,
    max_uncertainty: float,
    names: tuple[str, str, str],
) -> OaFraction:
    diff = ret - outdoor
    vq, dq = v.quantity_of(unit), v.quantity_of(diff_unit)  # reason-part quantities (errors.py)
    if abs(diff) < min_difference:
        raise IndeterminateError(
            field=names[0],
            value=outdoor,
            allowed=f"outdoor and return must differ by at least {v.fmt(min_difference)} {diff_unit}",
            message=(
                f"cannot compute an outdoor-air fraction by {_BY[method]}: outdoor "
                f"{v.fmt(outdoor)} {unit} and return {v.fmt(ret)} {unit} differ by "
                f"{v.fmt(round(abs(diff), 3))} {diff_unit}; they must differ by at least "
                f"{v.fmt(min_difference)} {diff_unit}"
            ),
            low=min_difference,
            unit=diff_unit,
            parts=[
                f"cannot compute an outdoor-air fraction by {_BY[method]}: outdoor ",
                {"value": outdoor, "quantity": vq},
                " and return ",
                {"value": ret, "quantity": vq},
                " differ by ",
                {"value": abs(diff), "quantity": dq},
                "; they must differ by at least ",
                {"value": min_difference, "quantity": dq},
            ],
        )
    x = (ret - mixed) / diff
    # ∂x/∂m = −1/(r−o); ∂x/∂o = (r−m)/(r−o)²; ∂x/∂r = (m−o)/(r−o)².
    u = math.sqrt(
        (acc_m / diff) ** 2 + (acc_o * (ret - mixed) / diff**2) ** 2 + (acc_r * (mixed - outdoor) / diff**2) ** 2
    )
    if u >= max_uncertainty:
        said = (
            f"cannot compute an outdoor-air fraction by {_BY[method]}: with the sensor accuracies given the "
            f"result would be {fraction_words(x, u)}, and an uncertainty of {points_words(max_uncertainty)} "
            "or more says nothing; outdoor and return differ by only "
        )
        raise IndeterminateError(
            field=names[2],
            value=mixed,
            allowed=f"an uncertainty below {points_words(max_uncertainty)}",
            message=f"{said}{v.fmt(round(abs(diff), 3))} {diff_unit}",
            high=max_uncertainty,
            parts=[said, {"value": abs(diff), "quantity": dq}],
        )
    if x < -u or x > 1.0 + u:
        raise IndeterminateError(
            field=names[2],
            value=mixed,
            allowed=f"between outdoor {v.fmt(outdoor)} and return {v.fmt(ret)} {unit}",
            message=(
                f"mixed {v.fmt(mixed)} {unit} is not between outdoor {v.fmt(outdoor)} {unit} "
                f"and return {v.fmt(ret)} {unit} (even allowing {points_words(u)} for sensor accuracy): "
                "check sensor placement, stratification or a heat source upstream"
            ),
            unit=unit,
            parts=[
                "mixed ",
                {"value": mixed, "quantity": vq},
                " is not between outdoor ",
                {"value": outdoor, "quantity": vq},
                " and return ",
                {"value": ret, "quantity": vq},
                f" (even allowing {points_words(u)} for sensor accuracy): "
                "check sensor placement, stratification or a heat source upstream",
            ],
        )
    clipped = min(max(x, 0.0), 1.0)
    return OaFraction(
        fraction=clipped,
        uncertainty=u,
        method=method,
        low=max(clipped - u, 0.0),
        high=min(clipped + u, 1.0),
        raw_fraction=x,
        outdoor_return_difference=diff,
    )


def oa_fraction_from_temperatures(
    *,
    t_outdoor_c: float,
    t_return_c: float,
    t_mixed_c: float,
    sensor_accuracy_k: float = 0.5,
    min_difference_k: float = MIN_DIFFERENCE_K,
    max_uncertainty: float = MAX_UNCERTAINTY,
) -> OaFraction:
    """Outdoor-air fraction x = (t_r − t_m)/(t_r − t_o), with propagated uncertainty.

    Mixing balance: ASHRAE Handbook—Fundamentals 2017 ch.1 eq. 46–47 (sensible
    form, neglecting the small change of c_p with humidity). Uncertainty: GUM
    §5.1.2. The same accuracy is assumed for all three sensors; the 0.5 K
    default is typical of a calibrated handheld or duct sensor (common
    practice). Refuses (IndeterminateError) when |t_r − t_o| < min_difference_k
    (3 K), when the uncertainty reaches max_uncertainty (±0.5), or when the
    mixed temperature lies outside the outdoor–return range by more than the
    uncertainty.
    """
    o = v.air_temperature("t_outdoor_c", t_outdoor_c, label="outdoor air temperature")
    r = v.air_temperature("t_return_c", t_return_c, label="return air temperature")
    m = v.air_temperature("t_mixed_c", t_mixed_c, label="mixed air temperature")
    acc = v.in_range("sensor_accuracy_k", sensor_accuracy_k, 0.0, 5.0, unit="K", label="sensor accuracy")
    mind = v.positive("min_difference_k", min_difference_k, unit="K")
    maxu = v.in_range("max_uncertainty", max_uncertainty, 0.0, 1.0, low_open=True)
    return _fraction(
        method="temperature",
        unit="°C",
        diff_unit="K",
        outdoor=o,
        ret=r,
        mixed=m,
        acc_o=acc,
        acc_r=acc,
        acc_m=acc,
        min_difference=mind,
        max_uncertainty=maxu,
        names=("t_outdoor_c", "t_return_c", "t_mixed_c"),
    )


def oa_fraction_from_co2(
    *,
    co2_outdoor_ppm: float,
    co2_return_ppm: float,
    co2_supply_or_mixed_ppm: float,
    sensor_accuracy_ppm: float = 50.0,
    sensor_accuracy_pct_of_reading: float = 3.0,
    min_difference_ppm: float = MIN_DIFFERENCE_PPM,
    max_uncertainty: float = MAX_UNCERTAINTY,
) -> OaFraction:
    """Outdoor-air fraction x = (C_r − C_m)/(C_r − C_o) from CO2 concentrations.

    CO2 is conserved through a mixing box and coils, so the supply reading
    serves as well as the mixed one. Accuracy per reading is
    sensor_accuracy_ppm + sensor_accuracy_pct_of_reading % of the reading
    (±(50 ppm + 3 %) is a typical NDIR specification: common practice, from
    memory). If one instrument takes all three readings in quick succession,
    its offset largely cancels; pass a smaller accuracy then. Uncertainty by
    GUM §5.1.2. Refuses when |C_r − C_o| < min_difference_ppm (100 ppm), when
    the uncertainty reaches ±0.5, or when the mix lies outside the range.
    """
    o = v.co2("co2_outdoor_ppm", co2_outdoor_ppm)
    r = v.co2("co2_return_ppm", co2_return_ppm)
    m = v.co2("co2_supply_or_mixed_ppm", co2_supply_or_mixed_ppm)
    acc = v.in_range("sensor_accuracy_ppm", sensor_accuracy_ppm, 0.0, 1000.0, unit="ppm", label="sensor accuracy")
    pct = v.in_range(
        "sensor_accuracy_pct_of_reading", sensor_accuracy_pct_of_reading, 0.0, 50.0, unit="%", label="sensor accuracy"
    )
    mind = v.positive("min_difference_ppm", min_difference_ppm, unit="ppm")
    maxu = v.in_range("max_uncertainty", max_uncertainty, 0.0, 1.0, low_open=True)

    def a(c: float) -> float:
        return acc + pct / 100.0 * c

    return _fraction(
        method="co2",
        unit="ppm",
        diff_unit="ppm",
        outdoor=o,
        ret=r,
        mixed=m,
        acc_o=a(o),
        acc_r=a(r),
        acc_m=a(m),
        min_difference=mind,
        max_uncertainty=maxu,
        names=("co2_outdoor_ppm", "co2_return_ppm", "co2_supply_or_mixed_ppm"),
    )


def outdoor_airflow_m3s(*, fraction: float, supply_airflow_m3s: float) -> float:
    """Outdoor airflow V_oa = x_oa × V_supply, m³/s (definition of the fraction,
    assuming no leakage between the mixing box and the supply measurement)."""
    x = v.in_range("fraction", fraction, 0.0, 1.0, label="outdoor-air fraction")
    q = v.in_range("supply_airflow_m3s", supply_airflow_m3s, 0.0, 100.0, unit="m³/s", label="supply airflow")
    return x * q


def fraction_check(*, fraction: float, uncertainty: float, minimum: float) -> Check:
    """Is the outdoor-air fraction at least ``minimum``?

    OK when the whole band fraction ± uncertainty is at or above the minimum,
    FAIL when the whole band is below it; when the band straddles the minimum
    no verdict is honest: WATCH with ``decided=False`` and a "cannot decide"
    reason (ask for a measurement with a larger outdoor–return difference).
    """
    x = v.in_range("fraction", fraction, 0.0, 1.0, label="outdoor-air fraction")
    u = v.in_range("uncertainty", uncertainty, 0.0, 1.0, label="uncertainty")
    mn = v.in_range("minimum", minimum, 0.0, 1.0, label="minimum outdoor-air fraction")
    lo, hi = x - u, x + u
    limits = {"minimum": mn, "low": max(lo, 0.0), "high": min(hi, 1.0), "uncertainty": u}
    text = f"outdoor-air fraction {fraction_words(x, u)}"
    if lo >= mn:
        return Check(Verdict.OK, x, limits, f"{text} is at or above the minimum {mn * 100:.0f} %")
    if hi < mn:
        return Check(Verdict.FAIL, x, limits, f"{text} is below the minimum {mn * 100:.0f} %")
    return Check(
        Verdict.WATCH,
        x,
        limits,
        f"cannot decide: {text} spans the minimum {mn * 100:.0f} %; measure again when outdoor and return differ more",
        decided=False,
    )
