"""A judgement's cells in the unit history: the values it was made on and the limit it was judged against, in
the reader's units, each number kept on one line with its unit (the property manager's finding pages read the
same cells)."""

from __future__ import annotations

import re

from django.utils.html import escape
from django.utils.safestring import mark_safe

from engineering.controls import damper_position_check, static_pressure_check, supply_temperature_check
from inspections import reasons
from inspections.display import derived_rows
from inspections.models import Evaluation, Reading

from .common import shown
from .visit_words import reading_value

# Per check over several readings: the derived values a row shows as its values, then as its limit
# (labels and units from ``inspections.display.derived_rows``).
VALUE_KEYS = {
    "oa_fraction_temperature": ("oa_fraction", "uncertainty", "outdoor_airflow_m3s"),
    "oa_fraction_co2": ("oa_fraction", "uncertainty", "outdoor_airflow_m3s"),
    "full_oa_airflow": ("outdoor_airflow_m3s", "supply_airflow_m3s", "airflow_uncertainty_m3s"),
    "coil_balance": ("air_side_w", "water_side_w", "difference_pct"),
    "supply_temperature": ("supply_air_c", "setpoint_c", "deviation_k"),
    "duct_static": ("static_pa", "setpoint_pa", "deviation_pct"),
    "damper_position": ("commanded_pct", "measured_pct", "error_pct"),
    "sensor_drift": ("sensor", "reference", "error"),
    "heat_recovery": ("effectiveness_pct", "uncertainty_pct"),
    "coil_valve_leak": ("entering_c", "leaving_c", "change_k"),
}
LIMIT_KEYS = {
    "oa_fraction_temperature": ("design_min_oa_fraction", "required_outdoor_airflow_m3s"),
    "oa_fraction_co2": ("design_min_oa_fraction", "required_outdoor_airflow_m3s"),
    "full_oa_airflow": ("design_min_outdoor_airflow_m3s", "required_outdoor_airflow_m3s"),
    "sensor_drift": ("allowed_error",),
    "heat_recovery": ("design_effectiveness_pct",),
    "coil_valve_leak": ("limit_k",),
}
# A number or a band with its unit, which a line could otherwise break inside ("930 L/" then "s"; "0.39 in."
# then "w.c."; "2.0–" then "7.0 °C").
_QUANTITY = re.compile(
    r"[−\-±]?\d[\d,.]*(?:(?:–| to )[−\-]?\d[\d,.]*)?\s"
    r"(?:in\. w\.c\.|L/s|Btu/h|m³/s|kg/m³|Δ°F|°C|°F|K|Pa|ppm|cfm|%|points)(?!\w)"
)


def keep_units(text: str) -> str:
    """``text`` escaped for HTML, each number or band with its unit kept on one line."""
    return mark_safe(_QUANTITY.sub(lambda m: f'<span class="nobr">{m.group(0)}</span>', escape(text)))


# Derived values said after the value before them, without their label ("41 % ± 3 points").
_AFTER = {"uncertainty", "uncertainty_pct", "airflow_uncertainty_m3s"}


# Shorter labels where the row's check already says what is compared (values and units still from
# ``inspections.display.derived_rows``).
SHORT_LABELS = {
    "commanded_pct": "commanded",
    "measured_pct": "measured",
    "error_pct": "error",
    "supply_air_c": "supply air",
    "deviation_k": "deviation",
    "deviation_pct": "deviation",
    "static_pa": "static pressure",
    "sensor": "sensor",
    "reference": "reference",
    "error": "difference",
    "allowed_error": "allowed ±",
    "design_min_oa_fraction": "design minimum",
    "design_min_outdoor_airflow_m3s": "design minimum",
    "required_outdoor_airflow_m3s": "the space needs",
    "loading_pct": "loading",
    "design_effectiveness_pct": "design",
}


# Said after the value: "319 Pa at design airflow", "102.0 % of rated clean".
_SUFFIX = {"corrected_dp_pa": "at design airflow", "fraction_of_clean_pct": "of rated clean"}


def _derived_text(derived: dict, keys, system: str, item: str) -> list[str]:
    out: list[str] = []
    for key in keys:
        for label, value in derived_rows({key: derived[key]}, system, item=item) if key in derived else []:
            if key in _AFTER and out:
                out[-1] += f" ± {value.lstrip('± ')}"
            elif key == "allowed_error":
                out.append(f"allowed ±{value}")
            elif key in _SUFFIX:
                out.append(f"{value} {_SUFFIX[key]}")
            else:
                out.append(f"{SHORT_LABELS.get(key, label)} {value}")
    return out


def _control_limits(check: str, system: str) -> str:
    """The watch and fail bands of a set-point or position check, as ``engineering.controls`` judges it."""
    if check == "supply_temperature":
        lim = supply_temperature_check(measured_c=0.0, setpoint_c=0.0).limits
        w, f = (shown(lim[k], "temperature_difference", system) for k in ("watch_k", "fail_k"))
        return f"watch over {w}, fail over {f}"
    if check == "damper_position":
        lim = damper_position_check(commanded_pct=0.0, measured_pct=0.0).limits
        return f"watch over {lim['watch_pct']:g}, fail over {lim['fail_pct']:g} points"
    if check == "duct_static":
        lim = static_pressure_check(measured_pa=1.0, setpoint_pa=1.0).limits
        return f"watch over {lim['watch_pct']:g} %, fail over {lim['fail_pct']:g} % of set point"
    return ""


def _filter_cells(check: str, d: dict, system: str) -> tuple[list[str], str]:
    """A filter judgement: the reading with the airflow it was read at, its value at design airflow and how
    loaded that is; the limit it was judged against (the final value, or the clean value after a change)."""
    values = []
    if "dp_pa" in d:
        read = shown(d["dp_pa"], "pressure", system)
        if isinstance(d.get("airflow_m3s"), int | float):
            read += f" read at {shown(d['airflow_m3s'], 'airflow', system)}"
            source = d.get("airflow_source")
            if isinstance(source, str) and source:
                read += f" ({source.replace(' (not measured)', '')})"
        values.append(read)
    more = (
        ("corrected_dp_pa", "loading_pct")
        if check == "filter_loading"
        else ("corrected_dp_pa", "fraction_of_clean_pct")
    )
    values += _derived_text(d, more, system, "")
    values += [
        f"{label}: {value}"
        for label, value in derived_rows({k: d[k] for k in ("media_bypass_suspected",) if k in d}, system)
    ]
    limit_keys = ("clean_dp_pa", "final_dp_pa") if check == "filter_loading" else ("clean_dp_pa",)
    words = {"final_dp_pa": "final", "clean_dp_pa": "clean" if check == "filter_loading" else "rated clean"}
    limit = ", ".join(f"{words[k]} {shown(d[k], 'pressure', system)}" for k in limit_keys if d.get(k) is not None)
    return values, limit


def _band_limit(d: dict, reading: Reading | None, system: str) -> str:
    """A single reading's band: ok within …, watch within … (the stored limits, in the reader's units)."""
    if reading is None or not reading.item.quantity:
        return ""
    qty, decimals = reading.item.quantity, reading.item.decimals
    ok = reasons.render_part(reasons.span(d.get("ok_min"), d.get("ok_max"), qty, decimals), system)
    text = f"ok {ok}"
    if d.get("watch_min") is not None or d.get("watch_max") is not None:
        lo = d.get("watch_min", d.get("ok_min"))
        hi = None if d.get("watch_open_high") else d.get("watch_max", d.get("ok_max"))
        text += f"; watch {reasons.render_part(reasons.span(lo, hi, qty, decimals), system)}"
    return text


def _judged_cells(e: Evaluation, reading: Reading | None, system: str) -> tuple[list[str], str]:
    """The values a judgement was made on and the limit it was judged against, in the reader's units."""
    d = e.derived or {}
    if e.check_name in ("filter_loading", "filter_after_change"):
        return _filter_cells(e.check_name, d, system)
    if e.check_name in VALUE_KEYS:
        values = _derived_text(d, VALUE_KEYS[e.check_name], system, e.item_key)
        limit = "; ".join(_derived_text(d, LIMIT_KEYS.get(e.check_name, ()), system, e.item_key))
        return values, limit or _control_limits(e.check_name, system)
    values = [reading_value(reading, system)] if reading is not None else []
    return values, _band_limit(d, reading, system) if e.check_name == "limits" else ""


def judged_cells(*, evaluation: Evaluation, reading: Reading | None, system: str) -> tuple[list[str], str]:
    """The values a judgement was made on and its limit, in the reader's units, as the unit history prints them
    (the property manager's finding pages read the same)."""
    return _judged_cells(evaluation, reading, system)
