"""What a person reads of a judgement: verdicts in words and derived values with plain labels.

One place for both, used by the record page, the result of a synced form, the inspection report
PDF and the unit history. Derived values are stored in SI with the unit in the key
(``inspections.evaluation``); here each known key gets a label in plain words and its value in
the reader's units (through ``inspections.reasons``, i.e. ``engineering.formatting``). A key without a
label is not shown: a reader never sees a stored key. Yes/no values read as words, or not at all.
"""

from __future__ import annotations

import datetime as dt
import math
import re
from typing import Any

from engineering import formatting as fmt
from engineering.controls import Verdict
from engineering.units import UnitSystem
from engineering.ventilation import VENTILATION_SYSTEMS

from . import reasons as rs

# A reading no check judges: its badge, and what that means in words a technician reads beside it ("Recorded —
# no limit applies to this reading"). Pages and PDFs read them here; the phone from its checklist's evaluation
# context (``reading_words``, inspections.phone.checklist_context), never a copy of its own.
RECORDED_WORDS = "Recorded"
UNJUDGED_WORDS = "no limit applies to this reading"

# Verdicts as people read them: the labels of ``engineering.controls.Verdict``, and "Recorded" for a reading
# no check judged (the phone's twin: checklist.js VERDICT_WORDS).
VERDICT_WORDS = {**{v.value: v.label for v in Verdict}, "": RECORDED_WORDS}


def verdict_words(code: str | None) -> str:
    """A verdict code in words ("OK", "Watch", "Fail"; "na" reads "Not applicable", no verdict "Recorded")."""
    return VERDICT_WORDS.get(code or "", RECORDED_WORDS)


def reading_words() -> dict[str, str]:
    """The words of a reading no check judges, as the phone shows them beside the field."""
    return {"recorded": RECORDED_WORDS, "unjudged": UNJUDGED_WORDS}


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
    "clean_dp_pa": ("clean pressure drop", "pressure"),
    "final_dp_pa": ("final pressure drop", "pressure"),
    "loading_pct": ("loading between clean and final", "pct"),
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


def _date(value: str) -> str:
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


def _shown(value: Any, how: Any, system: str, item: str) -> str:
    if isinstance(how, dict):
        return how.get(value, "") if isinstance(value, str) else ""
    if how in ("words", "message"):
        return plain_message(value) if isinstance(value, str) else ""
    if how == "date":
        return _date(value)
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        return ""  # a number stored before the input policy may be NaN or infinite: nothing to read
    if how == "fraction":
        return f"{value * 100:.0f} %"
    if how == "points":
        return f"± {value * 100:.0f} points"
    if how == "pct":
        return _minus(f"{value:.1f} %")
    if how == "pct_magnitude":
        return f"{abs(value):.1f} %"
    if how == "heat_magnitude":
        return _quantity(abs(value), "heat_rate", system)
    if how == "pct_points":
        return _minus(f"{value:.1f} points")
    if how in ("number", "count"):
        return _minus(f"{value:g}")
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
        text = _shown(value, how, system, item)
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


# ---------------------------------------------------------------------------------------------------------------
# Derived values as sentences (a technician's result, a record): never "label: value; label: value".

# Yes/no values as whole sentences (shown when true).
FLAG_SENTENCES = {
    "media_bypass_suspected": "Filter media missing, torn or bypassed suspected.",
    "design_shortfall": "The space needs more outdoor air than the unit's design minimum.",
    "forecast_at_final_now": "Change the filters now: they are at or over their final pressure drop.",
}
_FILTER_KEYS = {
    "dp_pa",
    "airflow_m3s",
    "airflow_source",
    "clean_dp_pa",
    "fraction_of_clean_pct",
    "corrected_dp_pa",
    "design_airflow_m3s",
    "final_dp_pa",
    "loading_pct",
}
_FORECAST_KEYS = {"forecast_change_date", "forecast_earliest_date", "forecast_latest_date", "forecast_run_hours"}
# "a filter forecast needs at least 3 usable readings (…); got 1", "a rate needs at least 2 points; got 1"
_TOO_FEW = re.compile(r"needs at least (\d+)\b[^;]*; got (\d+)")


def _end(text: str) -> str:
    """``text`` ending in one full stop ("… 0.28 in. w.c." takes none more)."""
    return text if text.endswith(".") else text + "."


def _sentence(text: str) -> str:
    text = text.strip()
    return _end(text[:1].upper() + text[1:]) if text else ""


def forecast_note_words(note: object) -> str:
    """Why there is no forecast, as a sentence: "Not enough readings for a forecast yet (1; 3 needed).",
    else the engineering refusal without argument names."""
    text = plain_message(note) if isinstance(note, str) else ""
    m = _TOO_FEW.search(text)
    if m:
        return f"Not enough readings for a forecast yet ({m.group(2)}; {m.group(1)} needed)."
    return _sentence(f"no forecast: {text}") if text else ""


def _filter_sentences(d: dict, system: str) -> list[str]:
    def shown(key: str) -> str:
        if key not in d or d[key] is None:
            return ""
        return _shown(d[key], DERIVED[key][1], system, "")

    out = []
    dp, airflow, source = shown("dp_pa"), shown("airflow_m3s"), shown("airflow_source")
    clean, fraction = shown("clean_dp_pa"), d.get("fraction_of_clean_pct")
    if dp:
        text = f"Pressure drop {dp}"
        if airflow:
            text += f" at {airflow}" + _source_words(source)
        if isinstance(fraction, int | float) and not isinstance(fraction, bool) and math.isfinite(fraction):
            text += f", {fraction:.0f} % of the clean value" + (f" ({clean})" if clean else "")
        elif clean:
            text += f"; clean value {clean}"
        out.append(_end(text))
    elif clean:
        out.append(_end(f"Clean pressure drop {clean}"))
    corrected, design = shown("corrected_dp_pa"), shown("design_airflow_m3s")
    if corrected:
        out.append(_end(f"At the design airflow{f' ({design})' if design else ''} it would be {corrected}"))
    loading, final = d.get("loading_pct"), shown("final_dp_pa")
    if isinstance(loading, int | float) and not isinstance(loading, bool) and math.isfinite(loading):
        text = _minus(f"Loaded {loading:.0f} % of the way from clean to final")
        out.append(text + (f" ({final})." if final else "."))
    elif final:
        out.append(_end(f"Final pressure drop {final}"))
    return out


def _source_words(source: str) -> str:
    """How the airflow was found, after its value: " measured", " from fan speed 931 rpm by the first fan law",
    " (design airflow assumed, not measured)"."""
    if not source:
        return ""
    if source == "measured" or source.startswith("from "):
        return f" {source}"
    return " (" + source.replace(" (", ", ").rstrip(")") + ")"


def _forecast_sentence(d: dict, system: str) -> str:
    date = _date(d["forecast_change_date"]) if d.get("forecast_change_date") else ""
    early = _date(d["forecast_earliest_date"]) if d.get("forecast_earliest_date") else ""
    late = _date(d["forecast_latest_date"]) if d.get("forecast_latest_date") else ""
    hours = d.get("forecast_run_hours")
    at = ""
    if isinstance(hours, int | float) and not isinstance(hours, bool) and math.isfinite(hours):
        at = _shown(hours, "run_hours", system, "")
    if not (date or at):
        return ""
    text = "Filter change forecast " + (date or f"at {at} on the run-hour meter")
    between = " and ".join(x for x in (early, late) if x)
    if early and late:
        text += f" (between {early} and {late})"
    elif between:
        text += f" ({'not before' if early else 'by'} {between})"
    if date and at:
        text += f", at about {at} on the run-hour meter"
    return text + "."


def derived_sentences(derived: dict, system: str, *, item: str = "") -> list[str]:
    """The derived values a person should read, as plain sentences in the reader's units: a filter's reading
    as "Pressure drop 0.25 in. w.c. at 4,068 cfm measured, 139 % of the clean value (0.18 in. w.c.).", a
    missing forecast as "Not enough readings for a forecast yet (1; 3 needed).", any other value as
    "Label value." (the labels of ``DERIVED``). Never a stored key, never "label: value; label: value"."""
    d = {k: v for k, v in (derived or {}).items() if v is not None and k not in DERIVED_HIDDEN}
    out: list[str] = []
    if "dp_pa" in d or "clean_dp_pa" in d:
        out += _filter_sentences(d, system)
        d = {k: v for k, v in d.items() if k not in _FILTER_KEYS}
    due_now = d.get("forecast_at_final_now") is True
    if not due_now and any(k in d for k in _FORECAST_KEYS):
        text = _forecast_sentence(d, system)
        if text:
            out.append(text)
    d = {k: v for k, v in d.items() if k not in _FORECAST_KEYS}
    for key, sentence in FLAG_SENTENCES.items():
        if d.pop(key, None) is True:
            out.append(sentence)
    if "forecast_note" in d:
        text = forecast_note_words(d.pop("forecast_note"))
        if text:
            out.append(text)
    if isinstance(d.get("points_used"), int) and not isinstance(d["points_used"], bool):
        n = d.pop("points_used")
        out.append(f"{n} reading{'' if n == 1 else 's'} in the trend.")
    source = d.pop("airflow_source", None)
    if isinstance(source, str) and source:
        shown = plain_message(source)
        out.append(_sentence(f"airflow {shown}" if shown.startswith("from ") or shown == "measured" else shown))
    for label, value in derived_rows(d, system, item=item):
        out.append(_sentence(f"{label} {value}"))
    return out


def derived_text(derived: dict, system: str, *, item: str = "") -> str:
    """``derived_sentences`` as one paragraph."""
    return " ".join(derived_sentences(derived, system, item=item))
