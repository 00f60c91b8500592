"""What the phone needs to judge a form offline exactly as ``inspections.evaluation`` does.

``evaluation_context`` turns the inputs of ``evaluation.evaluate`` (the unit, its
components, the checklist slots with their resolved limits, earlier filter
points) into one JSON document. The phone's twin of ``evaluate``
(``frontend/static/frontend/js/evaluate.js``) reads only this document and the
readings; the numbers that need server-side engineering (site pressure from
altitude, the ventilation requirement, fluid properties, display-unit factors)
are worked out here by the same functions the server uses, so the phone carries
results, never second copies of formulas it cannot run.

tests/inspections/test_phone_agreement.py runs both sides on the same cases.
"""

from __future__ import annotations

import datetime as dt
import functools
from collections.abc import Callable
from typing import Any

from engineering import controls, filters
from engineering import formatting as fmt
from engineering import units as eng_units
from engineering.airside import fluid_properties
from engineering.errors import EngineeringInputError
from engineering.psychro import pressure_from_altitude
from engineering.units import SYSTEMS
from inspections import flags
from inspections.display import DRIFT_QUANTITIES, reading_words
from inspections.evaluation import control_checks, heat_checks, valve_checks, ventilation_checks
from inspections.evaluation.results import ITEM_CONDITIONS, SPANNING_CHECKS
from inspections.selectors.filter_banks import FILTER_READING

CONTEXT_VERSION = 2  # 2: filter points carry their source and time (evaluate.js onOneMeter)
# Quantities of readings and reasons; plain ones (percent, current, time) have no conversion.
_UNIT_QUANTITIES = (*eng_units.QUANTITIES, *(q for q in fmt.PLAIN_UNITS if q))


def decimals_table() -> dict[str, list[int]]:
    """Display precision per quantity, [SI, US] (engineering.formatting.DECIMALS)."""
    return {q: list(d) for q, d in fmt.DECIMALS.items()}


def _linear(quantity: str, system: str) -> list[float]:
    """[scale, offset] with display = scale × SI + offset (every display conversion is linear)."""
    zero = fmt.display_value(0.0, quantity=quantity, system=system)
    one = fmt.display_value(1.0, quantity=quantity, system=system)
    return [one - zero, zero]


@functools.cache
def unit_table() -> dict[str, dict[str, Any]]:
    """Display conversion and labels per quantity, from engineering.formatting (pint); read-only."""
    return {
        q: {
            "storage": fmt.storage_text(quantity=q),
            **{s: {"factor": _linear(q, s), "label": fmt.unit_text(quantity=q, system=s)} for s in SYSTEMS},
        }
        for q in _UNIT_QUANTITIES
    }


@functools.cache
def property_table(fluid: str, glycol_pct: float | None = None) -> dict[str, Any]:
    """Density and c_p of one coil fluid every 1 K over the range it is known
    (engineering.airside.fluid_properties, glycols at their concentration); read-only."""
    rows: list[list[float]] = []
    t_min = None
    for t in range(-60, 201):
        try:
            rho, cp = fluid_properties(fluid=fluid, temperature_c=float(t), glycol_pct=glycol_pct)
        except EngineeringInputError:
            if t_min is not None:
                break
            continue
        t_min = t if t_min is None else t_min
        rows.append([round(rho, 4), round(cp, 3)])
    label = fluid.replace("_", " ")
    if glycol_pct is not None:
        label = f"{glycol_pct:g} % {label}"
    return {"t_min": t_min, "t_max": None if t_min is None else t_min + len(rows) - 1, "rows": rows, "label": label}


def _coil_fluid(specs: dict) -> dict[str, Any]:
    """A coil's fluid as evaluate() takes it (heat_checks.coil_fluid), with its property table."""
    fluid, glycol_pct, words = heat_checks.coil_fluid(specs)
    return {
        "name": fluid,
        "glycol_pct": glycol_pct,
        "words": words,
        "table": property_table(fluid, glycol_pct) if fluid is not None else None,
    }


def _slot(slot) -> dict[str, Any]:
    it = slot.item
    return {
        "item": it.api_key,
        "component": slot.component.label_code if slot.component is not None else None,
        "kind": it.kind,
        "label": it.label,
        "quantity": it.quantity or "",
        "decimals": it.decimals,
        "choices": it.choices or [],
        "limits_source": it.limits_source or "",
        "limits": dict(slot.limits or {}),
        "condition": ITEM_CONDITIONS.get(it.api_key, ""),
    }


def _requirement(need) -> dict[str, Any] | None:
    """The unit's ventilation requirement (``ventilation_checks.ventilation_requirement``, ASHRAE 62.1, worked on the
    server) as the numbers the phone shows."""
    if need is None:
        return None
    return {
        "vot_m3s": need.vot_m3s,
        "vbz_m3s": need.vbz_m3s,
        "ez": need.ez,
        "voz_m3s": need.voz_m3s,
        "system": need.system,
        "occupant_diversity": need.occupant_diversity,
        "vou_m3s": need.vou_m3s,
        "ev": need.ev,
        "method": need.method,
        "words": ventilation_checks.requirement_words(need),
    }


def _site_pressure(ahu) -> float | None:
    try:
        return pressure_from_altitude(altitude_m=ahu.building.site.altitude_m)
    except EngineeringInputError:
        return None


def constants() -> dict[str, Any]:
    """The thresholds and defaults evaluate() judges with, as the phone (checklist and calculator) needs them."""
    return {
        "coil_tolerance_pct": heat_checks.COIL_TOLERANCE_PCT,
        "requirement_words": dict(ventilation_checks.REQUIREMENT_WORDS),
        "supply_taken": ventilation_checks.SUPPLY_TAKEN,
        "not_met_at_all": ventilation_checks.NOT_MET_AT_ALL,
        "airflow_uncertainty": dict(ventilation_checks.AIRFLOW_UNCERTAINTY),
        "drift_defaults": {k: list(v) for k, v in control_checks.DRIFT_DEFAULTS.items()},
        "drift_quantities": {k: list(v) for k, v in DRIFT_QUANTITIES.items()},
        "filter_exponent": filters.DEFAULT_EXPONENT,
        "filter_airflow_ratio": list(filters.AIRFLOW_RATIO),
        "filter_bypass_fail_fraction": filters.BYPASS_FAIL_FRACTION,
        "filter_bypass_watch_fraction": filters.BYPASS_WATCH_FRACTION,
        "filter_fall_watch_fraction": filters.FALL_WATCH_FRACTION,
        "filter_after_change_tolerance": filters.AFTER_CHANGE_TOLERANCE,
        "filter_after_change_high_fail": filters.AFTER_CHANGE_HIGH_FAIL,
        "valve_leak_limit_k": valve_checks.LEAK_LIMIT_K,
        "valve_leak_method": valve_checks.LEAK_METHOD,
        "valve_leak_wrong_way": dict(controls.WRONG_WAY),
    }


def _filter_point(p: Any) -> dict[str, Any]:
    """A point of a bank's present filters as the phone joins its own reading to them (evaluate.js onOneMeter,
    the twin of ``FilterLife.forecast_points``): a series point (``FilterSeriesPoint``, with its source and time)
    or a plain ``FilterPoint`` (a technician's reading at noon UTC of its day)."""
    at = getattr(p, "at", None) or p.when
    if not isinstance(at, dt.datetime):
        at = dt.datetime.combine(at, dt.time(12), tzinfo=dt.UTC)
    return {
        "run_hours": p.run_hours,
        "dp_pa": p.dp_pa,
        "airflow_m3s": p.airflow_m3s,
        "when": at.date().isoformat(),
        "at": at.astimezone(dt.UTC).isoformat(),
        "source": getattr(p, "source", FILTER_READING),
    }


def evaluation_context(
    *,
    ahu,
    components: list,
    slots: list,
    filter_points: Callable[[Any], list[Any]] = lambda component: [],
) -> dict[str, Any]:
    """The phone's evaluation context: the same inputs ``evaluation.Form`` gives ``evaluate``, as JSON (SI).

    ``filter_points(bank)``: the points of the bank's present filters as read (``FilterLife.points``), every
    source on its own meter; the phone joins its own reading to them by the server's rule (evaluate.js
    onOneMeter, ``FilterLife.forecast_points``), so both forecast from the same points."""
    points: dict[str, list[dict]] = {}
    for c in components:
        if c.kind == "filter_bank":
            points[c.label_code] = [_filter_point(p) for p in filter_points(c)]
    need = ventilation_checks.ventilation_requirement(ahu)
    return {
        "version": CONTEXT_VERSION,
        "unit": {
            "design_supply_airflow_m3s": ahu.design_supply_airflow_m3s,
            "design_min_oa_fraction": ahu.design_min_oa_fraction,
            "full_outdoor_air": bool(ahu.full_outdoor_air),
            "supply_air_setpoint_c": ahu.supply_air_setpoint_c,
            "duct_static_setpoint_pa": ahu.duct_static_setpoint_pa,
            "space_kind": ahu.space_kind or "",
            "space_label": ventilation_checks.space_label(ahu),
            "site_pressure_pa": _site_pressure(ahu),
            "required_outdoor_airflow_m3s": None if need is None else need.vot_m3s,
            "ventilation_requirement": _requirement(need),
        },
        "components": [
            {
                "code": c.label_code,
                "name": c.name,
                "kind": c.kind,
                "specs": c.specs or {},
                **({"fluid": _coil_fluid(c.specs or {})} if c.kind == "coil" else {}),
            }
            for c in components
        ],
        "slots": [_slot(s) for s in slots],
        "filter_points": points,
        "units": unit_table(),
        "decimals": decimals_table(),
        "constants": constants(),
    }


def meter_context(*, ahu, as_of: dt.datetime) -> dict[str, Any]:
    """The unit's latest run-hour reading and the numbers of ``scheduling.services.meter_reading_check``,
    so the phone (meter.js) judges a typed run-hour value by the same rule the server refuses it with."""
    import zoneinfo

    from accounts.inputs import local_text
    from inspections.services.reading_check import RUN_HOURS_IF_REPLACED
    from scheduling.selectors import latest_meter_reading
    from scheduling.services import meters

    last = latest_meter_reading(ahu=ahu, as_of=as_of)
    zone = zoneinfo.ZoneInfo(ahu.building.site.time_zone or "UTC")
    return {
        "last": None
        if last is None
        else {
            "hours": last.hours,
            "taken_at": last.taken_at.astimezone(dt.UTC).isoformat(),
            "taken_text": local_text(last.taken_at, zone),
        },
        "gain_tolerance_fraction": meters.GAIN_TOLERANCE_FRACTION,
        "gain_tolerance_h": meters.GAIN_TOLERANCE_H,
        "if_replaced": RUN_HOURS_IF_REPLACED,
    }


def check_labels() -> dict[str, str]:
    """The plain names of the checks of several readings (``SPANNING_CHECKS``), as the record page names them
    (``selectors.CHECK_LABELS``): the phone shows each on a line of its own (evaluate.js ownLineLabel)."""
    from inspections.selectors import CHECK_LABELS

    return {check: CHECK_LABELS[check] for check in sorted(SPANNING_CHECKS)}


def checklist_context(*, checklist, as_of: dt.datetime) -> dict[str, Any]:
    """The evaluation context of one work order's checklist (``selectors.checklist_build``), as of a moment.

    The earlier filter readings of every bank come from one ``selectors.filter_series_for`` (a fixed number
    of queries however many banks the unit has)."""
    from inspections.selectors import filter_series_for

    ahu = checklist.work_order.ahu
    components = list(ahu.components.all())
    series = filter_series_for(components=components, before=as_of)
    return {
        **evaluation_context(
            ahu=ahu,
            components=components,
            slots=checklist.slots,
            filter_points=lambda bank: series[bank.pk].current.points,
        ),
        "meter": meter_context(ahu=ahu, as_of=as_of),
        # A reading no check judges, in the server's words (inspections.display).
        "words": reading_words(),
        "check_labels": check_labels(),
        **form_flags_context(slots=checklist.slots),
    }


def form_flags_context(*, slots: list) -> dict[str, Any]:
    """What the phone checks on "Finish and sign" with the server's own rules and words (``inspections.flags``):
    each slot's required and photo flags (a note is asked on every fail) and its names as the flags word them."""
    return {
        "form_flags": dict(flags.FORM_FLAGS),
        "form_flags_named": flags.INCOMPLETE_NAMED,
        "form_slots": [
            {
                "item": s.item.api_key,
                "component": s.component.label_code if s.component is not None else None,
                "kind": s.item.kind,
                "required": bool(s.item.required),
                "photo_required_when_not_ok": bool(s.item.photo_required_when_not_ok),
                "label": flags.slot_label(s),
                "place": flags.slot_place(s),
            }
            for s in slots
        ],
    }
