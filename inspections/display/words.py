"""Verdicts, engineering messages and a synced form's status in plain words; derived values as labelled rows in the
reader's units (``derived_rows``).
"""

from __future__ import annotations

import datetime as dt
import math
import re
from collections.abc import Mapping
from typing import Any

from django.utils.text import capfirst

from engineering import formatting as fmt
from engineering.controls import Verdict
from engineering.units import UnitSystem
from engineering.ventilation import VENTILATION_SYSTEMS
from inventory.models import ComponentKind

from .. import reasons as rs

# A reading no check judges: its badge, and what that means in words a technician reads beside it ("Recorded —
# no limit applies to this reading"). Pages and PDFs read them here; the phone from its checklist's evaluation
# context (``reading_words``, inspections.phone.checklist_context), never a copy of its own.
RECORDED_WORDS = "Recorded"
UNJUDGED_WORDS = "no limit applies to this reading"
# A reading set aside as implausible that no check judged: a limit may apply, but nothing judged it ("Not judged —
# 75.0 °C is outside the plausible 0.0–60.0 °C; re-check the reading", inspections.evaluation.set_aside_parts).
NOT_JUDGED_WORDS = "Not judged"

# Verdicts as people read them: the labels of ``engineering.controls.Verdict``, and "Recorded" for a reading
# no check judged (the phone's twin: checklist.js VERDICT_WORDS).
VERDICT_WORDS = {**{v.value: v.label for v in Verdict}, "": RECORDED_WORDS}


def verdict_words(code: str | None) -> str:
    """A verdict code in words ("OK", "Watch", "Fail"; "na" reads "Not applicable", no verdict "Recorded")."""
    return VERDICT_WORDS.get(code or "", RECORDED_WORDS)


def reading_words() -> dict[str, str]:
    """The words of a reading no check judges, as the phone shows them beside the field."""
    return {"recorded": RECORDED_WORDS, "unjudged": UNJUDGED_WORDS, "not_judged": NOT_JUDGED_WORDS}


# Where a reading or task belongs when it has no part of its own (the frost thermostat's trip, a unit-level task).
WHOLE_UNIT_WORDS = "whole unit"


def place_words(component: object | None) -> str:
    """Where a reading (or a task) belongs, as every record names it: its part's name, or "whole unit" when it
    has none. The inspection report (its task table and readings table), the unit history and the record page all
    read it here, so one reading never stands on a coil in one and on the unit in another."""
    return str(getattr(component, "name", "")) if component is not None else WHOLE_UNIT_WORDS


def place_heading(component: object | None) -> dict[str, str]:
    """A place's sub-heading where a list asks or records several places' items (the leak-by test of each coil):
    its title, ``place_words`` capitalised ("Heating coil", "Whole unit"), and for a part what it is and its label
    ("Coil · label C8EM9HA"), as the phone's form, the record page and the inspection report head each part.
    ``component``: a part, the checklist document's part ({"name", "kind", "label_code"}) or None."""
    if component is None:
        return {"title": capfirst(WHOLE_UNIT_WORDS), "sub": ""}
    if isinstance(component, Mapping):
        name, kind, code = (str(component.get(k) or "") for k in ("name", "kind", "label_code"))
    else:
        name, kind, code = (str(getattr(component, k, "") or "") for k in ("name", "kind", "label_code"))
    what = str(ComponentKind(kind).label) if kind in ComponentKind.values else kind.replace("_", " ").capitalize()
    return {"title": capfirst(name), "sub": " · ".join(w for w in (what, f"label {code}" if code else "") if w)}


def reading_verdict_words(code: str | None, *, judged: bool, checked: str = "", set_aside: str = "") -> tuple[str, str]:
    """A reading's verdict as pages and PDFs show it beside the reading: (its words, what they mean).

    A reading no check judged reads ("Recorded", "no limit applies to this reading"), the words the phone shows
    beside the field (``reading_words``), or ("Recorded", ``checked``) where a rule checked it without judging it
    (a run-hour value against the meter's last reading: "plausible: 615 h since …",
    ``scheduling.services.meter_plausible_words``, as the phone said it), or ("Not judged", ``set_aside``) where it
    was set aside as implausible ("75.0 °C is outside the plausible 0.0–60.0 °C; re-check the reading",
    ``inspections.evaluation.set_aside_parts``: the check that would judge it cannot run without it); a judged
    reading its verdict's words and nothing more ("" for none).
    """
    if code:
        return verdict_words(code), ""
    if judged:
        return "", ""
    return (NOT_JUDGED_WORDS, set_aside) if set_aside else (RECORDED_WORDS, checked or UNJUDGED_WORDS)


# A keyword argument's name followed by "=" in an engineering message ("airflow_m3s=0.4",
# "points[2].run_hours=…"). The phone's twin strips the same (evaluate.js plainMessage).
_ARGUMENT = re.compile(r"[A-Za-z_][A-Za-z0-9_]*(?:\[\d+\])?(?:\.[A-Za-z_][A-Za-z0-9_]*)*=")


def plain_message(message: object) -> str:
    """An engineering refusal without its argument names: "airflow airflow_m3s=0.4 is outside …" reads
    "airflow 0.4 is outside …" (the label before the name already says what it is)."""
    return _ARGUMENT.sub("", str(message))


def refusal_parts(exc: object) -> list:
    """An engineering refusal as reason parts (inspections/reasons.py): its numbers as SI quantities
    when it carries them (EngineeringInputError.parts), else its plain message."""
    parts = getattr(exc, "parts", None)
    return list(parts) if parts else [plain_message(exc)]


# key: (label, how the value reads). A quantity of engineering.units, or one of:
# "fraction" (0–1 shown as %), "points" (0–1 shown as ± percentage points), "pct", "number",
# "count", "date", "words" (text already in plain words), or a {code: words} map.
_FLUIDS = {
    "water": "water",
    "ethylene_glycol": "ethylene glycol",
    "propylene_glycol": "propylene glycol",
}
_AIRFLOW_AT = {"leaving": "the air leaving the coil", "entering": "the air entering the coil"}
_SYSTEMS = {code: words.split(":")[0] for code, words in VENTILATION_SYSTEMS.items()}

DERIVED: dict[str, tuple[str, Any]] = {
    # filters
    "dp_pa": ("measured pressure drop", "pressure"),
    "corrected_dp_pa": ("pressure drop at design airflow", "pressure"),
    "last_corrected_dp_pa": ("last value of these filters at design airflow", "pressure"),
    "clean_dp_pa": ("clean pressure drop", "pressure"),
    "final_dp_pa": ("final pressure drop", "pressure"),
    "loading_pct": ("loading between clean and final", "loading"),
    "fraction_of_clean_pct": ("pressure drop against a clean filter", "pct"),
    "airflow_m3s": ("airflow", "airflow"),
    "design_airflow_m3s": ("design airflow", "airflow"),
    "airflow_source": ("airflow from", "words"),
    "forecast_change_date": ("change forecast", "date"),
    "forecast_earliest_date": ("earliest", "date"),
    "forecast_latest_date": ("latest", "date"),
    "forecast_run_hours": ("forecast at run-hours", "run_hours"),
    "rate_pa_per_hour": ("pressure drop rising by", "rate"),
    "points_used": ("readings in the trend", "count"),
    "forecast_note": ("no forecast", "message"),
    # outdoor air and ventilation requirement
    "oa_fraction": ("outdoor-air fraction", "fraction"),
    "uncertainty": ("uncertainty", "points"),
    "outdoor_airflow_m3s": ("outdoor airflow", "airflow"),
    "supply_airflow_m3s": ("supply airflow", "airflow"),
    "design_supply_airflow_m3s": ("design supply airflow", "airflow"),
    "airflow_uncertainty_m3s": ("airflow measurement uncertainty (±)", "airflow"),
    "design_min_oa_fraction": ("design minimum outdoor air", "fraction"),
    "design_min_outdoor_airflow_m3s": ("design minimum outdoor airflow", "airflow"),
    "required_outdoor_airflow_m3s": ("outdoor airflow the space needs", "airflow"),
    "breathing_zone_outdoor_airflow_m3s": ("breathing-zone outdoor airflow", "airflow"),
    "zone_air_distribution_effectiveness": ("air distribution effectiveness", "number"),
    "zone_outdoor_airflow_m3s": ("zone outdoor airflow", "airflow"),
    "ventilation_system": ("system", _SYSTEMS),
    "occupant_diversity": ("occupant diversity", "number"),
    "uncorrected_outdoor_airflow_m3s": ("uncorrected outdoor-air intake", "airflow"),
    "system_ventilation_efficiency": ("system ventilation efficiency", "number"),
    # coils
    # Magnitudes, as the reason gives them ("air side 38,147 Btu/h … 0.8 % apart (water side higher)"):
    # a cooling coil's heat is stored negative, and the sign of the difference is the reason's words.
    "air_side_w": ("air-side heat", "heat_magnitude"),
    "water_side_w": ("water-side heat", "heat_magnitude"),
    "difference_pct": ("air and water side apart", "pct_magnitude"),
    "airflow_at": ("air density taken at", _AIRFLOW_AT),
    "air_density_kg_m3": ("air density", "density"),
    "pressure_pa": ("atmospheric pressure", "absolute_pressure"),
    "fluid": ("fluid", _FLUIDS),
    "glycol_pct": ("glycol concentration", "pct"),
    # controls
    "supply_air_c": ("supply air", "temperature"),
    "setpoint_c": ("set point", "temperature"),
    "deviation_k": ("deviation", "temperature_difference"),
    "entering_c": ("entering air", "temperature"),
    "leaving_c": ("leaving air", "temperature"),
    "change_k": ("change across the shut coil", "temperature_difference"),
    "limit_k": ("leak limit", "temperature_difference"),
    "static_pa": ("duct static pressure", "pressure"),
    "setpoint_pa": ("set point", "pressure"),
    "deviation_pct": ("deviation", "pct"),
    "commanded_pct": ("commanded position", "pct"),
    "measured_pct": ("measured position", "pct"),
    "error_pct": ("position error", "pct_points"),
    # heat recovery
    "outdoor_c": ("outdoor air", "temperature"),
    "supply_after_recovery_c": ("supply air after recovery", "temperature"),
    "extract_c": ("extract air", "temperature"),
    "effectiveness_pct": ("effectiveness", "pct"),
    "uncertainty_pct": ("uncertainty", "pct_points"),
    "design_effectiveness_pct": ("design effectiveness", "pct"),
    "below_design_points": ("below design", "pct_points"),
    # sensor drift: the quantity follows the sensor (see _drift_quantities)
    "sensor": ("sensor reads", "drift_value"),
    "reference": ("reference meter reads", "drift_value"),
    "error": ("difference", "drift_difference"),
    "allowed_error": ("allowed difference", "drift_difference"),
}
# Yes/no values: the words shown when true; false is not shown.
DERIVED_FLAGS = {
    "media_bypass_suspected": ("filter media", "missing, torn or bypassed suspected"),
    "design_shortfall": ("design", "the space needs more outdoor air than the unit's design minimum"),
    "forecast_at_final_now": ("change forecast", "now: at or over its final pressure drop"),
}
# The reading against its band: the reason already states the value and the band.
DERIVED_HIDDEN = {
    "value",
    "ok_min",
    "ok_max",
    "watch_min",
    "watch_max",
    "watch_open_high",
    "plausible_min",
    "plausible_max",
    "physical_min",
    "physical_max",
    "replaced_on_visit",  # the filter reason already says the reading is the one before the change
}

# Sensor drift by the sensor the item names: (quantity of the readings, quantity of their difference).
# inspections.evaluation judges and words the drift with these; here they label its derived values.
DRIFT_QUANTITIES = {
    "co2": ("co2", "co2"),
    "temp": ("temperature", "temperature_difference"),
    "rh": ("relative_humidity", "relative_humidity"),
    "pressure": ("pressure", "pressure"),
}
_FORECAST_DATES = {"forecast_change_date", "forecast_earliest_date", "forecast_latest_date"}


def date_words(value: str) -> str:
    try:
        d = dt.date.fromisoformat(str(value)[:10])
    except ValueError:
        return ""
    return f"{d.day} {d:%B %Y}"


def _quantity(value: float, quantity: str, system: str, decimals: int | None = None) -> str:
    return rs.render([rs.q(value, quantity, decimals)], system)


def _in_units(value: float, quantity: str, system: str, decimals: int) -> str:
    """A value in the reader's unit at a set precision (for the few values reasons do not carry)."""
    return fmt.quantity_text(value, quantity=quantity, system=system, decimals=decimals)


def _minus(text: str) -> str:
    """A negative number with the minus sign the reasons use (−), not a hyphen."""
    return text.replace("-", "−")


def shown_words(value: Any, how: Any, system: str, item: str) -> str:
    if isinstance(how, dict):
        return how.get(value, "") if isinstance(value, str) else ""
    if how in ("words", "message"):
        return plain_message(value) if isinstance(value, str) else ""
    if how == "date":
        return date_words(value)
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        return ""  # a number stored before the input policy may be NaN or infinite: nothing to read
    if how == "fraction":
        return f"{value * 100:.0f} %"
    if how == "points":
        return f"± {value * 100:.0f} points"
    if how == "loading":
        return loading_words(value, decimals=1)
    if how == "pct":
        return _minus(f"{value:.1f} %")
    if how == "pct_magnitude":
        return f"{abs(value):.1f} %"
    if how == "heat_magnitude":
        return _quantity(abs(value), "heat_rate", system)
    if how == "pct_points":
        return _minus(f"{value:.1f} points")
    if how in ("number", "count"):
        return fmt.significant_text(value, figures=6)  # never an exponent ("2.5e−07")
    if how == "rate":
        return _in_units(value, "pressure", system, 4 if system == UnitSystem.US else 3) + " per run-hour"
    if how in ("drift_value", "drift_difference"):
        prefix = item.rpartition(".")[2].split("_")[0]
        quantities = DRIFT_QUANTITIES.get(prefix)
        if quantities is None:
            return ""
        return _quantity(value, quantities[0 if how == "drift_value" else 1], system)
    if how == "density":
        return _in_units(value, "density", system, 3)
    return _quantity(value, how, system)


def loading_words(loading_pct: object, *, decimals: int = 0) -> str:
    """A filter's loading (percent of its clean-to-final span) as the tables, pages and records say it: "43 %";
    a reading below its clean pressure drop has no loading to say, never a negative share ("below clean");
    "—" with none."""
    if isinstance(loading_pct, bool) or not isinstance(loading_pct, int | float) or not math.isfinite(loading_pct):
        return "—"
    if round(loading_pct, 6) < 0:
        return "below clean"
    return f"{loading_pct:.{decimals}f} %"


def derived_rows(derived: dict, system: str, *, item: str = "") -> list[tuple[str, str]]:
    """(label, value in the reader's units) for each derived value a person should read, in a stable order.

    ``item`` is the judged reading's key (it says which sensor a drift check compared). Keys with no
    label, empty values and false yes/no values are left out; a filter due now shows no forecast date.
    """
    out = []
    due_now = derived.get("forecast_at_final_now") is True
    for key in sorted(derived):
        value = derived[key]
        if value is None or key in DERIVED_HIDDEN:
            continue
        if key in DERIVED_FLAGS:
            if value is True:
                out.append(DERIVED_FLAGS[key])
            continue
        if due_now and key in _FORECAST_DATES:
            continue  # the filter is due now: no date (it would be the last reading's)
        if key not in DERIVED:
            continue
        label, how = DERIVED[key]
        text = shown_words(value, how, system, item)
        if text:
            out.append((label, text))
    return out


# What became of a synced form, in words (the sync answer's status, inspections.services.sync).
STATUS_WORDS = {
    "stored": "stored",
    "flagged": "flagged for the supervisor",
    "verified": "verified",
    "duplicate": "already received",
    "refused": "refused: nothing was stored",
    "error": "not stored: the server failed, try again",
}


def status_words(status: str | None) -> str:
    """A synced form's status in words."""
    return STATUS_WORDS.get(status or "", "unknown")
