"""Derived values as whole sentences (a technician's result, a record): never "label: value; label: value"."""

from __future__ import annotations

import math
import re

from .words import DERIVED, DERIVED_HIDDEN, date_words, derived_rows, loading_words, plain_message, shown_words

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
        return shown_words(d[key], DERIVED[key][1], system, "")

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
        said = loading_words(loading)
        text = "Below its clean pressure drop: no loading" if said == "below clean" else f"Loaded {said} of the way"
        out.append(text + " from clean to final" + (f" ({final})." if final else "."))
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
    date = date_words(d["forecast_change_date"]) if d.get("forecast_change_date") else ""
    early = date_words(d["forecast_earliest_date"]) if d.get("forecast_earliest_date") else ""
    late = date_words(d["forecast_latest_date"]) if d.get("forecast_latest_date") else ""
    hours = d.get("forecast_run_hours")
    at = ""
    if isinstance(hours, int | float) and not isinstance(hours, bool) and math.isfinite(hours):
        at = shown_words(hours, "run_hours", system, "")
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
