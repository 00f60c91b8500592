"""Air-filter pressure drop corrected to design airflow, a bank's loading and the check of new filters
just after a change."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import numpy.typing as npt

from engineering import validate as v
from engineering.controls import Verdict
from engineering.errors import EngineeringInputError

__all__ = [
    "AFTER_CHANGE_HIGH_FAIL",
    "AFTER_CHANGE_TOLERANCE",
    "BELOW_CLEAN_RULE",
    "BYPASS_FAIL_FRACTION",
    "BYPASS_WATCH_FRACTION",
    "DEFAULT_EXPONENT",
    "FALL_WATCH_FRACTION",
    "FilterAfterChange",
    "FilterLoading",
    "corrected_pressure_drop",
    "corrected_pressure_drops",
    "filter_after_change",
    "filter_loading",
    "loading_percent",
]

# Pressure drop across a filter grows as Q^n with n between 1 (viscous flow
# through the media, Darcy's law) and 2 (turbulent losses in frame and
# pleats). 1.5 is a common-practice middle; use a maker's curve fit when
# known.
DEFAULT_EXPONENT = 1.5
# Correcting from far off design amplifies any error in n, so readings taken
# below half or above 1.5 × design airflow are refused (common practice).
AIRFLOW_RATIO = (0.5, 1.5)
FILTER_DP_PA = (0.0, 2_500.0)
# A bank in service never reads much below its rated clean pressure drop at
# design airflow: air that does not pass through media (a missing or torn
# filter, a frame that lets air round it) lowers it. Below half the clean
# value fails as missing, torn or bypassed media; from half to 80 % is
# watched (common practice; maker's clean values carry roughly ±10–15 %).
BYPASS_FAIL_FRACTION = 0.5
BYPASS_WATCH_FRACTION = 0.8
# A filter's pressure drop at design airflow only rises in service (dust held in the media); it falls only with a
# change, torn or bypassed media, or a gauge, sensor or tubing fault. A reading below 80 % of the last value of the
# same filters is watched as such (common practice: a gauge's scatter and the airflow correction stay well
# within 20 %, as AFTER_CHANGE_TOLERANCE allows a new filter against its rated value).
FALL_WATCH_FRACTION = 0.8
# What a reading between 80 % of clean and clean means, in the words of every reason that says it.
BELOW_CLEAN_RULE = (
    f"within the rated value's tolerance; watch below {BYPASS_WATCH_FRACTION * 100:.0f} %, "
    f"fail below {BYPASS_FAIL_FRACTION * 100:.0f} % of clean as missing, torn or bypassed media"
)
# Straight after a change the bank should read its rated clean pressure drop:
# more than 20 % above or below it (at design airflow) is watched (common
# practice: a different class or size fitted, a gauge line off, or media
# not seated); below half of it fails as for a bank in service, and above
# 1.5 × it fails (the band the filter replacement checklist has always used).
AFTER_CHANGE_TOLERANCE = 0.2
AFTER_CHANGE_HIGH_FAIL = 1.5


def exponent_input(value: object) -> float:
    return v.in_range("exponent", value, 1.0, 2.0, label="pressure-drop exponent")


def pressure_drop_input(name: str, value: object, label: str = "filter pressure drop") -> float:
    return v.in_range(name, value, *FILTER_DP_PA, unit="Pa", label=label)


def _ratio(airflow_m3s: float, design_airflow_m3s: float, name: str = "airflow_m3s") -> float:
    lo, hi = AIRFLOW_RATIO
    q = v.in_range(name, airflow_m3s, 0.0, 100.0, unit="m³/s", label="airflow", low_open=True)
    qd = v.in_range(
        "design_airflow_m3s", design_airflow_m3s, 0.0, 100.0, unit="m³/s", label="design airflow", low_open=True
    )
    r = q / qd
    if not lo <= r <= hi:
        raise EngineeringInputError(
            field=name,
            value=q,
            allowed=f"{lo:g}–{hi:g} × design airflow ({lo * qd:.3g}–{hi * qd:.3g} m³/s)",
            message=(
                f"airflow {name}={v.fmt(q)} is outside {lo * qd:.3g}–{hi * qd:.3g} m³/s "
                f"({lo:g}–{hi:g} × design {v.fmt(qd)} m³/s): too far from design to correct "
                "the pressure drop reliably"
            ),
            low=lo * qd,
            high=hi * qd,
            unit="m³/s",
            parts=[
                "airflow ",
                {"value": q, "quantity": "airflow"},
                " is outside ",
                {"low": lo * qd, "high": hi * qd, "quantity": "airflow"},
                f" ({lo:g}–{hi:g} × design ",
                {"value": qd, "quantity": "airflow"},
                "): too far from design to correct the pressure drop reliably",
            ],
        )
    return r


def corrected_pressure_drop(
    *,
    dp_pa: float,
    airflow_m3s: float,
    design_airflow_m3s: float,
    exponent: float = DEFAULT_EXPONENT,
) -> float:
    """Pressure drop corrected to design airflow, Pa.

    Δp_design = Δp × (Q_design / Q)^n, n = 1.5 by default (between Darcy
    flow, n = 1, and the square law, n = 2; common practice). Readings taken
    outside 0.5–1.5 × design airflow are refused.
    """
    dp = pressure_drop_input("dp_pa", dp_pa)
    n = exponent_input(exponent)
    r = _ratio(airflow_m3s, design_airflow_m3s)
    return float(dp * r ** (-n))


def corrected_pressure_drops(
    *,
    dp_pa: npt.ArrayLike,
    airflow_m3s: npt.ArrayLike,
    design_airflow_m3s: float,
    exponent: float = DEFAULT_EXPONENT,
) -> npt.NDArray[np.float64]:
    """``corrected_pressure_drop`` of many readings at once (a trend's samples): NaN for each reading it would
    refuse (not a finite number, a pressure drop outside its range, an airflow not above 0 or outside 0.5–1.5 ×
    design). A design airflow or an exponent it would refuse is refused here, as for every reading."""
    n = exponent_input(exponent)
    qd = v.in_range(
        "design_airflow_m3s", design_airflow_m3s, 0.0, 100.0, unit="m³/s", label="design airflow", low_open=True
    )
    dp = np.asarray(dp_pa, dtype=np.float64)
    q = np.asarray(airflow_m3s, dtype=np.float64)
    lo, hi = AIRFLOW_RATIO
    with np.errstate(all="ignore"):
        r = q / qd
        ok = (
            np.isfinite(dp)
            & np.isfinite(q)
            & (dp >= FILTER_DP_PA[0])
            & (dp <= FILTER_DP_PA[1])
            & (q > 0.0)
            & (q <= 100.0)
            & (r >= lo)
            & (r <= hi)
        )
    # Python's power, value by value, as the one-reading function computes it (numpy's may differ in the last bit).
    corrected = np.full(dp.shape, np.nan)
    corrected[ok] = [float(d * x ** (-n)) for d, x in zip(dp[ok].tolist(), r[ok].tolist(), strict=True)]
    return corrected


@dataclass(frozen=True)
class FilterLoading:
    corrected_dp_pa: float
    fraction_of_span: float  # 0 = clean, 1 = final pressure drop
    verdict: Verdict
    reason: str
    # Corrected pressure drop as a share of the rated clean value (1.0 = clean).
    fraction_of_clean: float = 1.0
    # True when the reading is so far below clean that air is likely passing round or through the media.
    media_bypass_suspected: bool = False
    # The reason as plain text and SI quantities (see EngineeringInputError.parts), for readers in other units.
    parts: tuple[Any, ...] = ()


def filter_loading(
    *,
    dp_pa: float,
    airflow_m3s: float,
    design_airflow_m3s: float,
    clean_dp_pa: float,
    final_dp_pa: float,
    exponent: float = DEFAULT_EXPONENT,
    watch_fraction: float = 0.75,
    fail_fraction: float = 0.95,
) -> FilterLoading:
    """How far a filter has loaded between its clean and final pressure drop.

    fraction = (Δp_corrected − Δp_clean) / (Δp_final − Δp_clean). WATCH at
    ≥ 0.75 and FAIL at ≥ 0.95 of that span by default (common practice: plan
    the change at three quarters, change before the final value), judged on
    the whole percent the reason shows ("75 %" is watched when the rule says
    "watch from 75 %"). A reading below clean is said as such, never as a
    negative share of the span.

    A corrected pressure drop below ``BYPASS_FAIL_FRACTION`` (50 %) of the
    clean value FAILS as missing, torn or bypassed media, and one below
    ``BYPASS_WATCH_FRACTION`` (80 %) is WATCHED (common practice): a bank
    cannot read much less than clean unless air goes round the media.
    """
    corrected = corrected_pressure_drop(
        dp_pa=dp_pa,
        airflow_m3s=airflow_m3s,
        design_airflow_m3s=design_airflow_m3s,
        exponent=exponent,
    )
    clean = pressure_drop_input("clean_dp_pa", clean_dp_pa, "clean filter pressure drop")
    final = pressure_drop_input("final_dp_pa", final_dp_pa, "final filter pressure drop")
    if final <= clean:
        raise EngineeringInputError(
            field="final_dp_pa",
            value=final,
            allowed=f"above clean_dp_pa={v.fmt(clean)} Pa",
            message=(
                f"final filter pressure drop final_dp_pa={v.fmt(final)} is outside above clean_dp_pa={v.fmt(clean)} Pa"
            ),
            low=clean,
            unit="Pa",
        )
    wf = v.in_range("watch_fraction", watch_fraction, 0.0, 1.0)
    ff = v.in_range("fail_fraction", fail_fraction, wf, 1.5)
    frac = (corrected - clean) / (final - clean)
    f = round(frac, 9)
    of_clean = corrected / clean if clean > 0 else 1.0
    low = _below_clean(of_clean=of_clean, corrected=corrected, clean=clean)
    if low is not None:
        verdict, reason, parts = low
        return FilterLoading(
            corrected_dp_pa=corrected,
            fraction_of_span=frac,
            verdict=verdict,
            reason=reason,
            fraction_of_clean=of_clean,
            media_bypass_suspected=True,
            parts=parts,
        )
    # Judged on the whole percent the words show against the thresholds as they are written: "75 %" is watched
    # when the rule reads "watch from 75 %" (74.88 % is shown as 75 % and so judged), never "75 %" and OK.
    shown, watch_at, fail_at = (float(f"{x:.0f}") for x in (loading_percent(frac), wf * 100, ff * 100))
    verdict = Verdict.FAIL if shown >= fail_at else Verdict.WATCH if shown >= watch_at else Verdict.OK
    rule = f"(watch from {watch_at:.0f} %, fail from {fail_at:.0f} %)"
    if f < 0:
        # Below clean (not so far as to suspect bypassed media): no loading to say, never a negative share.
        reason = (
            f"filter {corrected:.0f} Pa at design airflow, below its clean pressure drop {clean:.0f} Pa "
            f"({of_clean * 100:.0f} % of clean; {BELOW_CLEAN_RULE})"
        )
        parts = (
            "filter ",
            _pa(corrected),
            " at design airflow, below its clean pressure drop ",
            _pa(clean),
            f" ({of_clean * 100:.0f} % of clean; {BELOW_CLEAN_RULE})",
        )
    else:
        reason = (
            f"filter {corrected:.0f} Pa at design airflow, {shown:.0f} % of the way from clean "
            f"{clean:.0f} Pa to final {final:.0f} Pa {rule}"
        )
        parts = (
            "filter ",
            _pa(corrected),
            f" at design airflow, {shown:.0f} % of the way from clean ",
            _pa(clean),
            " to final ",
            _pa(final),
            f" {rule}",
        )
    return FilterLoading(
        corrected_dp_pa=corrected,
        fraction_of_span=frac,
        verdict=verdict,
        reason=reason,
        fraction_of_clean=of_clean,
        parts=parts,
    )


def loading_percent(fraction_of_span: float) -> float:
    """The loading as kept and shown everywhere: percent of the clean-to-final span, kept to six decimals. Texts
    and tables say it whole from this same figure (``f"{loading_percent(f):.0f} %"``), so a reason and a table
    never differ by one — and, kept this fine, it is never rounded twice (97.48 % kept as 97.5 would read 98 %)."""
    return round(fraction_of_span * 100, 6)


def _pa(value: float) -> dict[str, Any]:
    """A pressure as a reason part (SI), shown in the reader's unit."""
    return {"value": value, "quantity": "pressure"}


def _below_clean(*, of_clean: float, corrected: float, clean: float) -> tuple[Verdict, str, tuple[Any, ...]] | None:
    """FAIL below half the clean pressure drop, WATCH below 80 % of it, else None (verdict, reason, its parts)."""
    r = round(of_clean, 9)
    if r >= BYPASS_WATCH_FRACTION:
        return None
    verdict = Verdict.FAIL if r < BYPASS_FAIL_FRACTION else Verdict.WATCH
    word = "missing, torn or bypassed media" if verdict is Verdict.FAIL else "possibly torn or bypassed media"
    reason = (
        f"filter {corrected:.0f} Pa at design airflow is {of_clean * 100:.0f} % of its clean pressure drop "
        f"{clean:.0f} Pa: {word} (fail below {BYPASS_FAIL_FRACTION * 100:.0f} %, watch below "
        f"{BYPASS_WATCH_FRACTION * 100:.0f} % of clean)"
    )
    parts = (
        "filter ",
        _pa(corrected),
        f" at design airflow is {of_clean * 100:.0f} % of its clean pressure drop ",
        _pa(clean),
        f": {word} (fail below {BYPASS_FAIL_FRACTION * 100:.0f} %, watch below "
        f"{BYPASS_WATCH_FRACTION * 100:.0f} % of clean)",
    )
    return verdict, reason, parts


@dataclass(frozen=True)
class FilterAfterChange:
    corrected_dp_pa: float
    fraction_of_clean: float  # corrected / rated clean (1.0 = as rated)
    verdict: Verdict
    reason: str
    media_bypass_suspected: bool


def filter_after_change(
    *,
    dp_pa: float,
    airflow_m3s: float,
    design_airflow_m3s: float,
    clean_dp_pa: float,
    exponent: float = DEFAULT_EXPONENT,
    tolerance: float = AFTER_CHANGE_TOLERANCE,
) -> FilterAfterChange:
    """Pressure drop read just after a filter change, against the rated clean value.

    Corrected to design airflow (``corrected_pressure_drop``). OK within
    ±``tolerance`` (20 %) of the clean value; FAIL below
    ``BYPASS_FAIL_FRACTION`` (50 %) of it as missing, torn or bypassed media
    and above ``AFTER_CHANGE_HIGH_FAIL`` (1.5 ×); WATCH in between, saying
    whether it reads high (other class or size, gauge) or low (media not
    seated) (common practice).
    """
    corrected = corrected_pressure_drop(
        dp_pa=dp_pa, airflow_m3s=airflow_m3s, design_airflow_m3s=design_airflow_m3s, exponent=exponent
    )
    clean = v.in_range(
        "clean_dp_pa", clean_dp_pa, *FILTER_DP_PA, unit="Pa", label="clean filter pressure drop", low_open=True
    )
    tol = v.in_range("tolerance", tolerance, 0.0, 1.0)
    of_clean = corrected / clean
    r = round(of_clean, 9)
    head = f"new filter {corrected:.0f} Pa at design airflow, {of_clean * 100:.0f} % of its rated clean {clean:.0f} Pa"
    band = (
        f"(ok within ±{tol * 100:.0f} %, fail below {BYPASS_FAIL_FRACTION * 100:.0f} % or above "
        f"{AFTER_CHANGE_HIGH_FAIL * 100:.0f} %)"
    )
    high = "higher than a new filter should read: check the class and size fitted and the gauge lines"
    if r < BYPASS_FAIL_FRACTION:
        verdict, what = Verdict.FAIL, "missing, torn or bypassed media"
    elif r < 1.0 - tol:
        verdict, what = Verdict.WATCH, "lower than a new filter should read: check the media is seated and sealed"
    elif r > AFTER_CHANGE_HIGH_FAIL:
        verdict, what = Verdict.FAIL, high
    elif r > 1.0 + tol:
        verdict, what = Verdict.WATCH, high
    else:
        verdict, what = Verdict.OK, "as rated"
    return FilterAfterChange(
        corrected_dp_pa=corrected,
        fraction_of_clean=of_clean,
        verdict=verdict,
        reason=f"{head}: {what} {band}",
        media_bypass_suspected=r < BYPASS_FAIL_FRACTION,
    )
