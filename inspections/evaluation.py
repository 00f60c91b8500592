"""Judging a submitted inspection: every formula through ``engineering``.

``evaluate`` takes the readings of one form (SI values) and the unit, and
returns one ``Result`` per judgement: a reading against its bands, or a
check over several readings (filter loading and forecast, outdoor-air
fraction, coil heat balance, set-point and position deviations, sensor
drift, fan proving, freeze protection). Each result carries its verdict, a
plain reason, the method and the derived values (SI, units in the key names).
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from engineering import controls, filters, heat_recovery, outdoor_air, ventilation
from engineering import formatting as fmt
from engineering import units as eng_units
from engineering.airside import coil_balance, dry_air_density_kg_m3, sensible_heat_w, water_side_heat_w
from engineering.controls import Verdict
from engineering.errors import EngineeringInputError
from engineering.fans import expected_flow_at_speed
from engineering.filters import FilterPoint
from engineering.psychro import pressure_from_altitude
from inspections import reasons as rs
from inspections.display import DRIFT_QUANTITIES, plain_message, refusal_parts
from inspections.reasons import q as qty
from inspections.reasons import span
from inspections.selectors import filter_design_airflow_m3s

# Every check name a Result can carry. The phone's twin (frontend/static/frontend/js/evaluate.js)
# must judge each of them the same way; tests/inspections/test_phone_agreement.py holds it to that.
CHECKS = (
    "check",  # a yes/no answer
    "choice",  # a choice answer
    "limits",  # a number against its band
    "filter_loading",
    "filter_after_change",
    "oa_fraction_temperature",
    "oa_fraction_co2",
    "full_oa_airflow",  # a 100 % outdoor-air unit's delivered outdoor air
    "coil_balance",
    "supply_temperature",
    "duct_static",
    "damper_position",
    "sensor_drift",
    "heat_recovery",
)

# Severity of a failed check by what it puts at risk (common practice):
# frozen coils and unproven fans stop the building; the rest degrades it.
SEVERITY = {
    "freeze_protection_failed": "high",  # critical when inside or just before the freeze season
    "fan_not_proven": "high",
    "ventilation_low": "high",
    "supply_temp_off": "medium",
    "filter_loaded": "medium",
    "damper_position": "medium",
    "sensor_drift": "low",
    "coil_balance": "low",
    "heat_recovery_low": "medium",
}
# Checklist answers whose failure names a scheduling condition.
ITEM_CONDITIONS = {
    "fan_proving.proving_test": "fan_not_proven",
    "fan_proving.running_status": "fan_not_proven",
    "preheater_freeze.freeze_trip_test": "freeze_protection_failed",
    "preheater_freeze.freeze_trip_temp": "freeze_protection_failed",
    # A preheater that does not switch on in time, or misses a stage, lets the first coil freeze.
    "preheater_freeze.stage_on_temp": "freeze_protection_failed",
    "preheater_freeze.stages": "freeze_protection_failed",
    # A heater live without airflow, or without its automatic or manual-reset limit, is not safe to
    # leave on for the season (NFPA 70 424.63, 424.64): it fails the freeze-protection test too.
    "preheater_freeze.airflow_interlock": "freeze_protection_failed",
    "preheater_freeze.primary_limit": "freeze_protection_failed",
    "preheater_freeze.high_limit": "freeze_protection_failed",
    "damper_actuator.stroke_time": "damper_position",
    "damper_actuator.linkage": "damper_position",
}
# Sensor accuracy when the registry gives none (common practice, from memory):
# NDIR CO2 ±(50 ppm + 3 % of reading); duct temperature ±0.5 K; RH ±3 points;
# differential pressure ±(5 Pa + 2 % of reading).
COIL_TOLERANCE_PCT = 10.0  # air vs water side, field instruments: common practice
DRIFT_DEFAULTS = {
    "co2": (50.0, 3.0, "ppm"),
    "temp": (0.5, 0.0, "°C"),
    "rh": (3.0, 0.0, "%"),
    "pressure": (5.0, 2.0, "Pa"),
}


@dataclass
class Value:
    number: float | None = None
    text: str = ""

    @property
    def na(self) -> bool:
        return self.text == "na"


@dataclass
class Result:
    check: str
    item: str
    component: Any = None  # inventory Component or None
    verdict: str = Verdict.OK
    reason: str = ""
    method: str = ""
    derived: dict[str, Any] = field(default_factory=dict)
    condition_code: str = ""
    # The reason as text and quantities (inspections.reasons), for readers in other units.
    parts: list = field(default_factory=list)

    def say(self, *pieces) -> None:
        """Set the reason from text and quantity parts; ``reason`` is their SI rendering."""
        self.parts = rs.flatten(*pieces)
        self.reason = rs.render(self.parts, "si")

    @property
    def reason_parts(self) -> list:
        # A reason set as plain text (no quantities) is its own single part.
        if self.parts and rs.render(self.parts, "si") == self.reason:
            return self.parts
        return [self.reason] if self.reason else []

    @property
    def severity(self) -> str:
        return SEVERITY.get(self.condition_code or self.check, "medium")


@dataclass
class Form:
    """What the evaluation needs of one submitted form."""

    ahu: Any
    components: list[Any]
    values: dict[tuple[str, int | None], Value]
    slots: list[Any]  # inspections.selectors.Slot
    finished_at: dt.datetime
    # Earlier (run_hours, dp_pa, airflow_m3s, when) points of a filter bank since its last change.
    filter_points: Callable[[Any], list[FilterPoint]] = lambda component: []

    def num(self, key: str, component=None) -> float | None:
        v = self.values.get((key, component.pk if component is not None else None))
        return v.number if v is not None and not v.na else None

    def text(self, key: str, component=None) -> str:
        v = self.values.get((key, component.pk if component is not None else None))
        return v.text if v is not None else ""


def _fmt_date(d: dt.date | dt.datetime | None) -> str:
    if d is None:
        return "no date (run-hour rate unknown)"
    d = d.date() if isinstance(d, dt.datetime) else d
    return f"{d.day} {d:%B %Y}"


def _fan(form: Form):
    fans = [c for c in form.components if c.kind == "fan" and c.specs.get("role") == "supply"]
    return fans[0] if fans else None


def supply_airflow(form: Form) -> tuple[float, str]:
    """Airflow at the time of the visit, m³/s, and how it was found."""
    measured = form.num("visit.supply_airflow")
    if measured:
        return measured, "measured"
    speed = form.num("visit.supply_fan_speed")
    fan = _fan(form)
    if speed and fan is not None and fan.specs.get("design_speed_rpm") and fan.specs.get("design_flow_m3s"):
        rpm = eng_units.to_display(value=speed, quantity="rotational_speed", system="si")
        q = expected_flow_at_speed(
            design_flow_m3s=fan.specs["design_flow_m3s"], design_speed=fan.specs["design_speed_rpm"], measured_speed=rpm
        )
        return q, f"from fan speed {rpm:.0f} rpm by the first fan law"
    return form.ahu.design_supply_airflow_m3s, "design airflow assumed (not measured)"


# ---------------------------------------------------------------------------
# Single readings against their bands
# ---------------------------------------------------------------------------


def _reading_result(slot, value: Value) -> Result | None:
    it = slot.item
    key = it.api_key
    res = Result(check=it.kind, item=key, component=slot.component, condition_code=ITEM_CONDITIONS.get(key, ""))
    if value.na:
        return None
    if it.kind == "check":
        res.verdict = Verdict.OK if value.text == "ok" else Verdict.FAIL
        # The verdict shows beside the reason: the reason says what was confirmed, not "ok" again.
        res.reason = f"{'confirmed' if res.verdict == Verdict.OK else 'not confirmed'}: {it.label}"
        return res
    if it.kind == "choice":
        choice = next((c for c in it.choices if c["value"] == value.text), None)
        if choice is None:
            return None
        res.verdict = Verdict.OK if choice.get("ok", True) else Verdict.FAIL
        res.reason = f"{it.label}: {choice['label']}"
        return res
    if it.kind == "number" and value.number is not None:
        lim = slot.limits
        if all(lim.get(k) is None for k in ("ok_min", "ok_max")):
            return None
        check = controls.band_check(
            value=value.number,
            ok_low=lim.get("ok_min"),
            ok_high=lim.get("ok_max"),
            watch_low=lim.get("watch_min"),
            watch_high=lim.get("watch_max"),
            label=it.label.lower(),
            unit=fmt.storage_text(quantity=it.quantity),
        )
        res.check = "limits"
        res.verdict = check.verdict.value
        res.say(_band_parts(it, value.number, lim, check.verdict.value))
        res.method = "reading against its band; " + (it.limits_source or "common practice")
        res.derived = {"value": value.number, **{k: v for k, v in lim.items() if v is not None and "_m" in k}}
        return res
    return None


def _band_parts(it, x: float, lim: dict, verdict: str) -> list:
    """The words of engineering.controls.band_check, with the numbers as quantities."""
    d = it.decimals
    ok_lo, ok_hi = lim.get("ok_min"), lim.get("ok_max")
    w_lo = lim.get("watch_min") if lim.get("watch_min") is not None else ok_lo
    w_hi = lim.get("watch_max") if lim.get("watch_max") is not None else ok_hi
    head = [f"{it.label.lower()} ", qty(x, it.quantity, d)]

    def inside(lo, hi) -> list:  # "within 2.0–6.0 °C"; a one-sided band: "at most 6.7 A"
        return [" within " if lo is not None and hi is not None else " ", span(lo, hi, it.quantity, d)]

    def outside(lo, hi) -> list:  # "outside 2.0–6.0 °C"; a one-sided band: "above 6.7 A" / "below 2.0 °C"
        if lo is not None and hi is not None:
            return [" outside ", span(lo, hi, it.quantity, d)]
        return [" above ", qty(hi, it.quantity, d)] if hi is not None else [" below ", qty(lo, it.quantity, d)]

    if verdict == Verdict.OK:
        return [*head, " is", *inside(ok_lo, ok_hi)]
    if verdict == Verdict.WATCH:
        return [*head, " is", *outside(ok_lo, ok_hi), " but", *inside(w_lo, w_hi)]
    return [*head, " is", *outside(w_lo, w_hi)]


# ---------------------------------------------------------------------------
# Checks over several readings
# ---------------------------------------------------------------------------


def _filter_derived(*, dp: float, q: float, q_how: str, design_q: float, clean: float, judged: Any) -> dict[str, Any]:
    """The derived values both filter checks keep: the reading, its airflow, and its correction to design
    airflow against the clean pressure drop (``judged``: a FilterLoading or a FilterAfterChange)."""
    return {
        "dp_pa": dp,
        "airflow_m3s": q,
        "airflow_source": q_how,
        "design_airflow_m3s": design_q,
        "corrected_dp_pa": round(judged.corrected_dp_pa, 1),
        "clean_dp_pa": clean,
        "fraction_of_clean_pct": round(judged.fraction_of_clean * 100, 1),
        "media_bypass_suspected": judged.media_bypass_suspected,
    }


def _no_forecast_words(exc: EngineeringInputError) -> str:
    """Why a filter bank has no change date, in plain words (the refusal of ``filters.filter_forecast``)."""
    if exc.allowed == "a rising pressure drop":
        return "; the trend gives no change date (pressure drop not rising)"
    if exc.allowed == "at least 3 usable readings":
        n = exc.value
        return (
            f"; no change forecast yet: {n} reading{'' if n == 1 else 's'} of the filters now fitted, "
            "a forecast needs at least 3"
        )
    return "; no change forecast yet"


def _filter_checks(form: Form, consumed: set) -> list[Result]:
    out = []
    q, q_how = supply_airflow(form)
    for bank in (c for c in form.components if c.kind == "filter_bank"):
        dp = form.num("filter_check.dp", bank)
        if dp is None:
            continue
        consumed.add(("filter_check.dp", bank.pk))
        specs = bank.specs
        design_q = filter_design_airflow_m3s(component=bank, ahu=form.ahu)
        res = Result(check="filter_loading", item="filter_check.dp", component=bank, condition_code="filter_loaded")
        missing = next((w for k, w in (("clean_dp_pa", "clean"), ("final_dp_pa", "final")) if k not in specs), None)
        if missing is not None:
            # Said in plain words: a reader never sees a registry field name.
            res.verdict = Verdict.WATCH
            res.reason = (
                f"cannot judge the filter loading: the filter bank has no {missing} pressure drop in the registry"
            )
            out.append(res)
            continue
        try:
            loading = filters.filter_loading(
                dp_pa=dp,
                airflow_m3s=q,
                design_airflow_m3s=design_q,
                clean_dp_pa=specs["clean_dp_pa"],
                final_dp_pa=specs["final_dp_pa"],
            )
        except EngineeringInputError as exc:
            res.verdict = Verdict.WATCH
            res.say("cannot judge the filter loading: ", refusal_parts(exc))
            out.append(res)
            continue
        pct = loading.fraction_of_span * 100
        res.verdict = loading.verdict.value
        res.derived = {
            **_filter_derived(dp=dp, q=q, q_how=q_how, design_q=design_q, clean=specs["clean_dp_pa"], judged=loading),
            "loading_pct": round(pct, 1),
            "final_dp_pa": specs["final_dp_pa"],
        }
        res.method = (
            f"Δp × (Q_design/Q)^{filters.DEFAULT_EXPONENT:g} against the clean-to-final span; below "
            f"{filters.BYPASS_FAIL_FRACTION * 100:.0f} % of clean fails, below "
            f"{filters.BYPASS_WATCH_FRACTION * 100:.0f} % watch (missing, torn or bypassed media; common practice); "
            f"airflow: {q_how}"
        )
        if loading.media_bypass_suspected:
            # A reading below clean says nothing about loading: no forecast from it.
            res.say(
                f"{bank.name}: filter reads ",
                qty(loading.corrected_dp_pa, "pressure"),
                f" at design airflow, {loading.fraction_of_clean * 100:.0f} % of its clean pressure drop ",
                qty(specs["clean_dp_pa"], "pressure"),
                ": "
                + (
                    "missing, torn or bypassed media"
                    if res.verdict == Verdict.FAIL
                    else "lower than a filter in service should read, check for torn or bypassed media"
                )
                + f" (fail below {filters.BYPASS_FAIL_FRACTION * 100:.0f} %, watch below "
                f"{filters.BYPASS_WATCH_FRACTION * 100:.0f} % of clean)",
            )
            out.append(res)
            continue
        forecast_text = ""
        hours = form.num("visit.run_hours")
        if form.text("filter_replace.replaced", bank) == "ok":
            # Read before the change: the removed filters' state, the evidence for the change. They are gone,
            # so no forecast for them; the new filters' forecast starts from the reading after the change.
            forecast_text = "; the reading before the change: these filters were replaced on this visit"
            res.derived["replaced_on_visit"] = True
        elif hours is not None:
            points = [
                *form.filter_points(bank),
                FilterPoint(run_hours=hours, dp_pa=dp, airflow_m3s=q, when=form.finished_at.date()),
            ]
            try:
                fc = filters.filter_forecast(
                    points=points, design_airflow_m3s=design_q, final_dp_pa=specs["final_dp_pa"]
                )
            except EngineeringInputError as exc:
                forecast_text = _no_forecast_words(exc)
                res.derived["forecast_note"] = str(exc)
            else:
                res.derived.update(
                    {
                        "forecast_run_hours": round(fc.run_hours_at_final),
                        "forecast_change_date": fc.date_at_final.isoformat() if fc.date_at_final else None,
                        "forecast_earliest_date": fc.date_low.isoformat() if fc.date_low else None,
                        "forecast_latest_date": fc.date_high.isoformat() if fc.date_high else None,
                        "rate_pa_per_hour": round(fc.rate_pa_per_hour, 4),
                        "points_used": fc.points_used,
                        "forecast_at_final_now": fc.at_final_now,
                    }
                )
                res.method += "; forecast: " + fc.method
                forecast_text = (
                    "; at its final pressure drop by the trend: change now"
                    if fc.at_final_now
                    else f"; change forecast {_fmt_date(fc.date_at_final)}"
                )
        if round(loading.fraction_of_span, 9) >= 1.0 and not res.derived.get("replaced_on_visit"):
            # At or over the final value: change now, never a date ahead or "no date".
            forecast_text = "; at or over its final pressure drop: change now"
            res.derived["forecast_at_final_now"] = True
        res.say(
            f"{bank.name}: filter at {pct:.0f} % of its span after correcting to design airflow (",
            qty(loading.corrected_dp_pa, "pressure"),
            " at design, clean ",
            qty(specs["clean_dp_pa"], "pressure"),
            ", final ",
            qty(specs["final_dp_pa"], "pressure"),
            f"){forecast_text}",
        )
        out.append(res)
    return out


def _filter_change_checks(form: Form, consumed: set) -> list[Result]:
    """The pressure drop read just after a filter change, against the bank's rated clean value."""
    out = []
    q, q_how = supply_airflow(form)
    for bank in (c for c in form.components if c.kind == "filter_bank"):
        dp = form.num("filter_replace.dp_after", bank)
        clean = bank.specs.get("clean_dp_pa")
        if dp is None or clean is None:
            continue
        consumed.add(("filter_replace.dp_after", bank.pk))
        design_q = filter_design_airflow_m3s(component=bank, ahu=form.ahu)
        res = Result(
            check="filter_after_change", item="filter_replace.dp_after", component=bank, condition_code="filter_loaded"
        )
        try:
            chk = filters.filter_after_change(dp_pa=dp, airflow_m3s=q, design_airflow_m3s=design_q, clean_dp_pa=clean)
        except EngineeringInputError as exc:
            res.verdict = Verdict.WATCH
            res.say(f"{bank.name}: cannot judge the pressure drop after the change: ", refusal_parts(exc))
            out.append(res)
            continue
        tol = filters.AFTER_CHANGE_TOLERANCE
        res.verdict = chk.verdict.value
        res.derived = _filter_derived(dp=dp, q=q, q_how=q_how, design_q=design_q, clean=clean, judged=chk)
        res.method = (
            f"Δp × (Q_design/Q)^{filters.DEFAULT_EXPONENT:g} against the rated clean pressure drop: ok within "
            f"±{tol * 100:.0f} %, fail below {filters.BYPASS_FAIL_FRACTION * 100:.0f} % or above "
            f"{filters.AFTER_CHANGE_HIGH_FAIL * 100:.0f} % (common practice); airflow: {q_how}"
        )
        r = round(chk.fraction_of_clean, 9)
        if chk.media_bypass_suspected:
            what = "missing, torn or bypassed media"
        elif r < 1.0 - tol:
            what = "lower than a new filter should read, check the media is seated and sealed"
        elif r > 1.0 + tol:
            what = "higher than a new filter should read, check the class and size fitted and the gauge lines"
        else:
            what = "as rated"
        res.say(
            f"{bank.name}: after the change the filter reads ",
            qty(chk.corrected_dp_pa, "pressure"),
            f" at design airflow, {chk.fraction_of_clean * 100:.0f} % of its rated clean pressure drop ",
            qty(clean, "pressure"),
            f": {what} (ok within ±{tol * 100:.0f} %, fail below {filters.BYPASS_FAIL_FRACTION * 100:.0f} % "
            f"or above {filters.AFTER_CHANGE_HIGH_FAIL * 100:.0f} %)",
            _after_change_forecast(form, res, bank=bank, dp=dp, q=q, design_q=design_q),
        )
        out.append(res)
    return out


def _after_change_forecast(form: Form, res: Result, *, bank, dp: float, q: float, design_q: float) -> str:
    """The new filters' forecast on the visit that fitted them: their only reading is the one after the
    change, so the words say how many readings there are (never a date from the removed filters')."""
    final = bank.specs.get("final_dp_pa")
    hours = form.num("visit.run_hours")
    if final is None or hours is None:
        return ""
    point = FilterPoint(run_hours=hours, dp_pa=dp, airflow_m3s=q, when=form.finished_at.date())
    try:
        filters.filter_forecast(points=[point], design_airflow_m3s=design_q, final_dp_pa=final)
    except EngineeringInputError as exc:
        res.derived["forecast_note"] = str(exc)
        return _no_forecast_words(exc)
    return ""


def ventilation_requirement(ahu) -> ventilation.OutdoorAirIntake | None:
    """The outdoor-air intake the unit's space needs by the ASHRAE 62.1 ventilation rate procedure, from the
    registry: space kind, floor area, design occupants, the system (one zone, several zones, 100 % outdoor
    air), the air distribution (Ez) and, for several zones, the occupant diversity or the design's Ev.
    None when the registry lacks what it needs."""
    if ahu.space_kind not in ventilation.SPACE_KINDS or not ahu.floor_area_m2:
        return None
    multi = ahu.ventilation_system == "multi_zone"
    try:
        return ventilation.outdoor_air_intake(
            space_kind=ahu.space_kind,
            floor_area_m2=ahu.floor_area_m2,
            occupants=ahu.design_occupants,
            air_distribution=ahu.air_distribution or "ceiling_supply_cool",
            system=ahu.ventilation_system,
            occupant_diversity=ahu.occupant_diversity if multi else None,
            ev=ahu.system_ventilation_efficiency if multi else None,
        )
    except EngineeringInputError:
        return None


def required_outdoor_airflow_m3s(ahu) -> float | None:
    """Outdoor airflow the unit must take in for its space (Vot of ``ventilation_requirement``), m³/s; None
    when unknown.

    The phone receives this number with the checklist (inspections.phone) and judges against it offline.
    """
    need = ventilation_requirement(ahu)
    return None if need is None else need.vot_m3s


# The start of an outdoor-air refusal that names the measurement itself (engineering.outdoor_air).
CANNOT_COMPUTE_FRACTION = "cannot compute an outdoor-air fraction"
# How the outdoor-air fraction stands against the ventilation requirement, in words (never the verdict's code).
REQUIREMENT_WORDS: dict[str, str] = {
    Verdict.OK: "met",
    Verdict.WATCH: "cannot decide (the band spans it)",
    Verdict.FAIL: "not met",
}


def space_label(ahu) -> str:
    """The kind of space a unit serves in plain words (lower case), as the ventilation requirement names it."""
    kind = ventilation.SPACE_KINDS.get(ahu.space_kind)
    return kind.label.lower() if kind is not None else "the space served"


def _requirement_words(need: ventilation.OutdoorAirIntake) -> str:
    """How the requirement was found, in plain words with its numbers (Ez, D, Ev)."""
    if need.system == "multi_zone":
        ev = f"system ventilation efficiency {need.ev:.2f}" + (
            " from the design" if need.ev_given else f" for occupant diversity {need.occupant_diversity:g}"
        )
        return f"several zones with recirculated air, {ev}"
    where = "100 % outdoor air" if need.system == "full_outdoor_air" else "one zone"
    return f"{where}, air distribution effectiveness {need.ez:g}"


def _oa_checks(form: Form, consumed: set) -> list[Result]:
    out = []
    ahu = form.ahu
    q, q_how = supply_airflow(form)
    pairs = [
        (
            "temperature",
            "ventilation_check.mixed_air",
            lambda: outdoor_air.oa_fraction_from_temperatures(
                t_outdoor_c=form.num("ventilation_check.outdoor_air"),
                t_return_c=form.num("ventilation_check.return_air"),
                t_mixed_c=form.num("ventilation_check.mixed_air"),
            ),
            ("ventilation_check.outdoor_air", "ventilation_check.return_air", "ventilation_check.mixed_air"),
        ),
        (
            "co2",
            "ventilation_check.supply_co2",
            lambda: outdoor_air.oa_fraction_from_co2(
                co2_outdoor_ppm=form.num("ventilation_check.outdoor_co2"),
                co2_return_ppm=form.num("ventilation_check.return_co2"),
                co2_supply_or_mixed_ppm=form.num("ventilation_check.supply_co2"),
            ),
            ("ventilation_check.outdoor_co2", "ventilation_check.return_co2", "ventilation_check.supply_co2"),
        ),
    ]
    need_vr = ventilation_requirement(ahu)
    required_q = None if need_vr is None else need_vr.vot_m3s
    design_min_q = ahu.design_min_oa_fraction * ahu.design_supply_airflow_m3s
    for method, item, compute, keys in pairs:
        if any(form.num(k) is None for k in keys):
            continue
        res = Result(check=f"oa_fraction_{method}", item=item, condition_code="ventilation_low")
        try:
            frac = compute()
        except EngineeringInputError as exc:
            by = "CO2" if method == "co2" else "temperatures"
            res.verdict = Verdict.WATCH
            lead = f"outdoor-air fraction by {by}: "
            # A refusal that already says "cannot compute an outdoor-air fraction by …" is not led by it again.
            res.say("" if str(exc).startswith(CANNOT_COMPUTE_FRACTION) else lead, refusal_parts(exc))
            out.append(res)
            continue
        oa_q = outdoor_air.outdoor_airflow_m3s(fraction=frac.fraction, supply_airflow_m3s=q)
        res.derived = {
            "oa_fraction": round(frac.fraction, 3),
            "uncertainty": round(frac.uncertainty, 3),
            "outdoor_airflow_m3s": round(oa_q, 3),
            "supply_airflow_m3s": q,
            "airflow_source": q_how,
            "design_min_oa_fraction": ahu.design_min_oa_fraction,
            "design_min_outdoor_airflow_m3s": round(ahu.design_min_oa_fraction * ahu.design_supply_airflow_m3s, 3),
        }
        if need_vr is not None:
            res.derived.update(
                {
                    "required_outdoor_airflow_m3s": round(need_vr.vot_m3s, 3),
                    "breathing_zone_outdoor_airflow_m3s": round(need_vr.vbz_m3s, 3),
                    "zone_air_distribution_effectiveness": need_vr.ez,
                    "zone_outdoor_airflow_m3s": round(need_vr.voz_m3s, 3),
                    "ventilation_system": need_vr.system,
                    "occupant_diversity": need_vr.occupant_diversity,
                    "uncorrected_outdoor_airflow_m3s": (None if need_vr.vou_m3s is None else round(need_vr.vou_m3s, 3)),
                    "system_ventilation_efficiency": None if need_vr.ev is None else round(need_vr.ev, 3),
                    # The requirement is above what the unit was designed to take in: the design, not the
                    # unit's upkeep, falls short (compared unrounded, in m³/s).
                    "design_shortfall": need_vr.vot_m3s > design_min_q,
                }
            )
        label = "temperatures" if method == "temperature" else "CO2"
        res.method = f"mixing balance from {label}; outdoor airflow = fraction × supply airflow ({q_how})" + (
            "" if need_vr is None else f"; requirement by ASHRAE 62.1: {need_vr.method}"
        )
        if ahu.full_outdoor_air:
            res.verdict = Verdict.OK
            res.reason = f"100 % outdoor-air unit; measured fraction {frac.fraction * 100:.0f} %"
            out.append(res)
            continue
        chk = outdoor_air.fraction_check(
            fraction=frac.fraction, uncertainty=frac.uncertainty, minimum=ahu.design_min_oa_fraction
        )
        verdict = chk.verdict
        parts = [
            f"by {label}: outdoor air {outdoor_air.fraction_words(frac.fraction, frac.uncertainty)} (",
            qty(oa_q, "airflow"),
            f"); the unit's design minimum {ahu.design_min_oa_fraction * 100:.0f} % (",
            qty(design_min_q, "airflow"),
            f"): {REQUIREMENT_WORDS[chk.verdict.value]}",
        ]
        if need_vr is not None and q > 0:
            need = min(required_q / q, 1.0)
            req = outdoor_air.fraction_check(fraction=frac.fraction, uncertainty=frac.uncertainty, minimum=need)
            verdict = controls.worst(verdict, req.verdict)
            parts += [
                "; the space needs ",
                qty(required_q, "airflow"),
                f" = {need * 100:.0f} % of the supply air for {space_label(ahu)} ({_requirement_words(need_vr)}, "
                f"ASHRAE 62.1 ventilation rate procedure): {REQUIREMENT_WORDS[req.verdict.value]}",
            ]
            if res.derived["design_shortfall"]:
                parts += [
                    "; the requirement is above the unit's design minimum outdoor air ",
                    qty(design_min_q, "airflow"),
                    ": the design falls short",
                ]
            if verdict != chk.verdict:
                parts.append("; judged by the requirement")
        res.verdict = verdict.value
        res.say(parts)
        out.append(res)
    return out


# Uncertainty of the supply airflow a 100 % outdoor-air unit delivers, as a fraction of it: a field
# traverse or the unit's flow station about ±10 % (common practice); the first fan law from a speed
# reading, with belt slip and a filter loaded since the design point, about ±15 % (common practice).
AIRFLOW_UNCERTAINTY = {"measured": 0.10, "fan_speed": 0.15}


def _airflow_band_verdict(*, q: float, u: float, minimum: float) -> Verdict:
    """ok at or above the minimum; below it, watch within the uncertainty ``u`` and fail beyond it."""
    if q >= minimum:
        return Verdict.OK
    if q + u >= minimum:
        return Verdict.WATCH
    return Verdict.FAIL


def _full_oa_checks(form: Form, consumed: set) -> list[Result]:
    """A 100 % outdoor-air unit takes in what it supplies: the outdoor airflow it delivers is its supply airflow
    (measured, or from the fan speed), judged against the space's requirement (ASHRAE 62.1 ventilation rate
    procedure; with no recirculation Vot = Voz) and the unit's design airflow, each within the airflow's
    uncertainty. Below the requirement beyond the uncertainty fails, within it is watch; below the design (the
    requirement met) is watch; with no requirement known, the design stands in for it. Runs when the
    ventilation check was done."""
    ahu = form.ahu
    if not ahu.full_outdoor_air or not any(k.startswith("ventilation_check.") for k, _ in form.values):
        return []
    q, q_how = supply_airflow(form)
    design = ahu.design_supply_airflow_m3s
    need = ventilation_requirement(ahu)
    res = Result(check="full_oa_airflow", item="visit.supply_airflow", condition_code="ventilation_low")
    res.method = "100 % outdoor air: outdoor airflow = supply airflow" + (
        "" if need is None else f"; requirement by ASHRAE 62.1: {need.method}"
    )
    if q_how.startswith("design"):
        res.verdict = Verdict.WATCH
        res.say(
            "100 % outdoor-air unit: the outdoor air delivered cannot be judged without the supply airflow; "
            "measure the supply airflow (or read the supply fan speed) at the visit"
        )
        return [res]
    u_rel = AIRFLOW_UNCERTAINTY["measured" if q_how == "measured" else "fan_speed"]
    u = q * u_rel
    res.derived = {
        "outdoor_airflow_m3s": round(q, 3),
        "airflow_uncertainty_m3s": round(u, 3),
        "airflow_source": q_how,
        "design_supply_airflow_m3s": design,
    }
    design_verdict = _airflow_band_verdict(q=q, u=u, minimum=design)
    parts = [
        "100 % outdoor-air unit: outdoor air delivered ",
        qty(q, "airflow"),
        f" ± {u_rel * 100:.0f} % ({q_how}); the unit's design airflow ",
        qty(design, "airflow"),
        f": {REQUIREMENT_WORDS[design_verdict]}",
    ]
    if need is None:
        verdict = design_verdict
    else:
        res.derived.update(
            {
                "required_outdoor_airflow_m3s": round(need.vot_m3s, 3),
                "zone_outdoor_airflow_m3s": round(need.voz_m3s, 3),
                "ventilation_system": need.system,
                "design_shortfall": need.vot_m3s > design,
            }
        )
        req_verdict = _airflow_band_verdict(q=q, u=u, minimum=need.vot_m3s)
        # Short of the design but the space's requirement met: a unit to look after, not a ventilation failure.
        verdict = controls.worst(req_verdict, Verdict.WATCH if design_verdict != Verdict.OK else Verdict.OK)
        parts += [
            "; the space needs ",
            qty(need.vot_m3s, "airflow"),
            f" for {space_label(ahu)} ({_requirement_words(need)}, ASHRAE 62.1 ventilation rate procedure): "
            f"{REQUIREMENT_WORDS[req_verdict]}",
        ]
        if need.vot_m3s > design:
            parts += ["; the requirement is above the unit's design airflow: the design falls short"]
        if verdict != design_verdict:
            parts.append("; judged by the requirement")
    res.verdict = verdict
    res.say(parts)
    return [res]


def coil_fluid(specs: dict) -> tuple[str | None, float | None, str]:
    """(fluid for engineering.airside.water_side_heat_w, glycol %, plain words) of a coil's registry specs.

    Water, or ethylene/propylene glycol at its concentration; (None, None, words) for steam and refrigerant
    coils, whose heat flow and temperatures do not give. A glycol coil without its kind or concentration in
    the registry cannot be balanced honestly, so it gets None too.
    """
    fluid = specs.get("fluid") or "water"
    if fluid == "water":
        return "water", None, "water"
    if fluid == "glycol":
        kind, pct = specs.get("glycol_kind"), specs.get("glycol_pct")
        if kind in ("ethylene", "propylene") and pct:
            return f"{kind}_glycol", float(pct), f"{float(pct):g} % {kind} glycol"
        return None, None, "glycol of unknown kind or concentration"
    return None, None, fluid


def _coil_checks(form: Form, consumed: set) -> list[Result]:
    out = []
    q, q_how = supply_airflow(form)
    p = pressure_from_altitude(altitude_m=form.ahu.building.site.altitude_m)
    for coil in (c for c in form.components if c.kind == "coil"):
        for template in ("coil_clean", "cooling_season_check"):
            vals = {
                k: form.num(f"{template}.{k}", coil)
                for k in ("air_in", "air_out", "water_in", "water_out", "water_flow")
            }
            if any(v is None for v in vals.values()):
                continue
            fluid, glycol_pct, fluid_words = coil_fluid(coil.specs)
            res = Result(check="coil_balance", item=f"{template}.water_flow", component=coil)
            if fluid is None:
                if coil.specs.get("fluid") == "glycol":
                    res.verdict = Verdict.WATCH
                    res.reason = (
                        f"{coil.name}: cannot balance the coil: the registry does not give the glycol's kind "
                        "and concentration"
                    )
                    out.append(res)
                break  # steam or refrigerant: flow and temperatures do not give its heat
            # The supply airflow (measured, from fan speed, or the unit's design) is at the supply fan,
            # downstream of the coils: its density is the leaving air's. A coil's own design airflow is
            # rated at its entering air (common practice).
            airflow, airflow_at = q, "leaving"
            if q_how.startswith("design") and coil.specs.get("design_airflow_m3s"):
                airflow, airflow_at = coil.specs["design_airflow_m3s"], "entering"
            try:
                air = sensible_heat_w(
                    airflow_m3s=airflow,
                    t_in_c=vals["air_in"],
                    t_out_c=vals["air_out"],
                    pressure_pa=p,
                    airflow_at=airflow_at,
                )
                rho_air = dry_air_density_kg_m3(
                    t_c=vals["air_out"] if airflow_at == "leaving" else vals["air_in"], pressure_pa=p
                )
                water = water_side_heat_w(
                    t_supply_c=vals["water_in"],
                    t_return_c=vals["water_out"],
                    flow_m3s=vals["water_flow"],
                    fluid=fluid,
                    glycol_pct=glycol_pct,
                )
                bal = coil_balance(air_side_w=air, water_side_w=water, tolerance_pct=COIL_TOLERANCE_PCT)
            except EngineeringInputError as exc:
                res.verdict = Verdict.WATCH
                res.say(f"{coil.name}: cannot balance the coil: ", refusal_parts(exc))
                out.append(res)
                break
            res.derived = {
                "air_side_w": round(air),
                "water_side_w": round(water),
                "difference_pct": round(bal.difference_pct, 1),
                "airflow_m3s": airflow,
                "airflow_source": q_how,
                "airflow_at": airflow_at,
                "air_density_kg_m3": round(rho_air, 4),
                "pressure_pa": round(p),
                "fluid": fluid,
                "glycol_pct": glycol_pct,
            }
            state = (
                "leaving air (airflow at the supply fan, after the coil)"
                if airflow_at == "leaving"
                else "entering air (the coil's design airflow)"
            )
            res.method = (
                f"air side q = ρ·V·cp·Δt, sensible, dry air, ρ = p/(R·T) at the {state}; fluid side "
                f"q = ρ·V·cp·Δt with the properties of {fluid_words} (CoolProp: IAPWS-95, Melinder 2010); "
                "balance within 10 % ok, 20 % watch"
            )
            res.verdict = bal.verdict.value
            which = "air side higher" if bal.difference_pct > 0 else "water side higher"
            parts = [
                f"{coil.name}: air side ",
                qty(abs(air), "heat_rate"),
                ", water side ",
                qty(abs(water), "heat_rate"),
                f": {abs(bal.difference_pct):.1f} % apart ({which}; ok within {COIL_TOLERANCE_PCT:g} %, "
                f"watch within {2 * COIL_TOLERANCE_PCT:g} %)",
            ]
            if coil.specs.get("duty") == "cooling" and res.verdict == Verdict.FAIL:
                # Latent heat is not measured, so a wet cooling coil reads high on the water side.
                res.verdict = Verdict.WATCH
                parts.append(" (cooling coil: air side is sensible only, latent heat not measured)")
            res.say(parts)
            out.append(res)
            break
    return out


def _setpoint_checks(form: Form, consumed: set) -> list[Result]:
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


def _drift_checks(form: Form, consumed: set) -> list[Result]:
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


def _heat_recovery_checks(form: Form, consumed: set) -> list[Result]:
    out = []
    for hx in (c for c in form.components if c.kind == "heat_recovery"):
        t_o, t_s, t_e = (form.num(f"heat_recovery.{k}", hx) for k in ("outdoor_in", "supply_out", "extract_in"))
        if t_o is None or t_s is None or t_e is None:
            continue
        res = Result(
            check="heat_recovery",
            item="heat_recovery.supply_out",
            component=hx,
            condition_code="heat_recovery_low",
            method=(
                "ε = (supply − outdoor)/(extract − outdoor) temperatures, temperature ratio per EN 308 / "
                "ASHRAE HVAC Systems and Equipment (from memory), ±0.5 K "
                "sensors; against design: watch beyond 5, fail beyond 15 points below (common "
                "practice)"
            ),
        )
        try:
            hr = heat_recovery.heat_recovery_effectiveness(
                t_outdoor_c=t_o, t_supply_after_recovery_c=t_s, t_extract_c=t_e
            )
        except EngineeringInputError as exc:
            res.verdict = Verdict.WATCH
            res.say(f"{hx.name}: {plain_message(exc)}")
            out.append(res)
            continue
        pct, u_pct = hr.effectiveness * 100, hr.uncertainty * 100
        res.derived = {
            "outdoor_c": t_o,
            "supply_after_recovery_c": t_s,
            "extract_c": t_e,
            "effectiveness_pct": round(pct, 1),
            "uncertainty_pct": round(u_pct, 1),
        }
        temps = [
            " (outdoor ",
            qty(t_o, "temperature"),
            ", after recovery ",
            qty(t_s, "temperature"),
            ", extract ",
            qty(t_e, "temperature"),
            ")",
        ]
        design = hx.specs.get("design_effectiveness_pct")
        if design is None:
            res.verdict = Verdict.WATCH
            res.say(
                f"{hx.name}: effectiveness {pct:.0f} % ± {u_pct:.0f} points",
                temps,
                "; no design effectiveness in the registry to judge it against",
            )
            out.append(res)
            continue
        chk = heat_recovery.heat_recovery_check(
            effectiveness=hr.effectiveness, uncertainty=hr.uncertainty, design_effectiveness_pct=design
        )
        res.verdict = chk.verdict.value
        res.derived.update(
            {"design_effectiveness_pct": design, "below_design_points": round(chk.limits["below_design_points"], 1)}
        )
        res.say(f"{hx.name}: {chk.reason}", temps)
        out.append(res)
    return out


def evaluate(form: Form) -> list[Result]:
    """Every judgement of one form, cross-reading checks first, then the remaining single readings."""
    consumed: set[tuple[str, int | None]] = set()
    results: list[Result] = []
    for fn in (
        _filter_checks,
        _filter_change_checks,
        _oa_checks,
        _full_oa_checks,
        _coil_checks,
        _setpoint_checks,
        _drift_checks,
        _heat_recovery_checks,
    ):
        results.extend(fn(form, consumed))
    for slot in form.slots:
        key = (slot.item.api_key, slot.component.pk if slot.component else None)
        if key in consumed or key not in form.values:
            continue
        res = _reading_result(slot, form.values[key])
        if res is not None:
            results.append(res)
    return results
