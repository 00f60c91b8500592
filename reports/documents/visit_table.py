"""A visit's readings as one table by part (the inspection report's body): each reading once with its value,
the band it was judged against (the "Limit" column), its verdict and only what its judgement adds; the methods
as numbered notes; the verdicts counted."""

from __future__ import annotations

import html
import re

from django.utils.safestring import SafeString, mark_safe

from engineering.controls import Verdict
from inspections import reasons
from inspections.display import place_heading
from inspections.evaluation import own_judgement
from inspections.models import Inspection
from inspections.selectors import reason_for

from .visit_words import MeterSaid, reading_value, reading_verdict, reading_verdict_code, says_nothing_more

# The band a judgement names in its derived values, shown in the "Limit" column: (key, words, quantity).
_LIMIT_KEYS = (
    ("final_dp_pa", "final", "pressure"),
    ("setpoint_c", "set point", "temperature"),
    ("setpoint_pa", "set point", "pressure"),
    ("required_outdoor_airflow_m3s", "space needs", "airflow"),
)

# The bands a judgement states in its reason, in brackets ("… (watch above 5 points, fail above 10 points)",
# "(water side higher; ok within 10 %, watch within 20 %)"): these go to the "Limit" column.
_REASON_BAND = re.compile(r" ?\((?:(?P<lead>[^()]*?); )?(?P<band>(?:ok|watch|fail) [^()]*)\)")


def _band_from_reason(reason: str) -> tuple[str, str]:
    """(the bands the reason states in brackets, the reason without them); ("", reason) when it states none."""
    found = list(_REASON_BAND.finditer(reason))
    if not found:
        return "", reason
    bands = "; ".join(m.group("band") for m in found)
    rest = _REASON_BAND.sub(lambda m: f" ({m.group('lead')})" if m.group("lead") else "", reason)
    return bands, rest


def _number(value) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool)


def _limit(evaluation, quantity: str, system: str, decimals: int | None = None) -> str:
    """The band(s) a reading was judged against, in the reader's units, as its reason names them ("" when its
    judgement names none): the ok band and, where it has one, the watch band ("ok −6.0 to −4.0 °C; watch −7.0 to
    −3.0 °C"); for outdoor air the space's requirement beside the unit's design minimum."""
    if evaluation is None:
        return ""
    derived = evaluation.derived or {}
    low, high = derived.get("ok_min"), derived.get("ok_max")
    if quantity and (low is not None or high is not None):
        ok = reasons.render([reasons.span(low, high, quantity, decimals)], system)
        w_low = derived.get("watch_min") if derived.get("watch_min") is not None else low
        w_high = derived.get("watch_max") if derived.get("watch_max") is not None else high
        if derived.get("watch_open_high"):  # above the ok band is a watch however high (a frost thermostat's trip)
            w_high = None
        if (w_low, w_high) == (low, high):
            return ok
        watch = reasons.render([reasons.span(w_low, w_high, quantity, decimals)], system)
        return f"ok {ok}; watch {watch}"
    fraction = derived.get("design_min_oa_fraction")
    if _number(fraction):
        design = f"design minimum {fraction * 100:.0f} %"
        required, supply = derived.get("required_outdoor_airflow_m3s"), derived.get("supply_airflow_m3s")
        if _number(required) and _number(supply) and supply > required:
            # The same share the judgement compares with (inspections.evaluation: required ÷ supply).
            return f"space needs {required / supply * 100:.0f} %; {design}"
        if _number(required) and _number(supply) and supply > 0:
            # More than all the supply air: said as an airflow, never capped at 100 % (ventilation_checks).
            need = reasons.render([reasons.q(required, "airflow")], system)
            return f"space needs {need}, more than the supply airflow; {design}"
        return f"{design} outdoor air"
    for key, words, qty in _LIMIT_KEYS:
        value = derived.get(key)
        if _number(value):
            return f"{words} {reasons.render([reasons.q(value, qty)], system)}"
    return ""


def _row_limit(evaluation, quantity: str, system: str, reason: str, decimals: int | None = None) -> tuple[str, str]:
    """(the limit column, the reason left to say below the row): the band from the judgement's values, and the
    bands its reason states in brackets (moved to the column, so the row says each band once)."""
    limit = _limit(evaluation, quantity, system, decimals)
    band, rest = _band_from_reason(reason)
    if not band:
        return limit, reason
    return (f"{limit}; {band}" if limit else band), rest


# span", the share of clean as "188 % of its rated clean pressure drop", a missing forecast as "no change
# forecast yet: 2 readings of the filters now fitted, a forecast needs at least 3".
_SAID_BY_REASON = {
    "loading between clean and final": ("of its span",),
    "pressure drop against a clean filter": ("of its clean pressure drop", "of its rated clean pressure drop"),
    "no forecast": ("no change forecast", "no change date"),
}


def _details(rows: list[tuple[str, str]], *, already: str, readings: set[str]) -> list[str]:
    """Derived values worth a line, "label: value", leaving out what the row, its reason or method already say
    (a value with its unit, a word such as "measured") and a value the visit's own readings show."""
    out = []
    for label, value in rows:
        said = value.removeprefix("now: ")
        telling = len(said) > 5 or (" " in said and any(c.isdigit() for c in said))
        if value in readings or (telling and said in already) or f"{label} {value}" in already:
            continue
        if any(cue in already for cue in _SAID_BY_REASON.get(label, ())):
            continue
        out.append(f"{label}: {value}")
    return out


def _formula_html(method: str) -> SafeString:
    """A method as typeset text: "Q_design" with its subscript, "^1.5" as a superscript (escaped otherwise)."""
    text = html.escape(method)
    text = re.sub(r"\b([A-Za-zΔ])_([A-Za-z0-9]+)", r"\1<sub>\2</sub>", text)
    text = re.sub(r"\^([0-9.]+)", r"<sup>\1</sup>", text)
    return mark_safe(text)  # escaped above: only the sub and sup tags are markup


def visit_parts(
    insp: Inspection, evaluations: list[dict], system: str, *, meter: MeterSaid = ("", "")
) -> tuple[list[dict], list[SafeString]]:
    """The visit's readings as one table by part: the unit's own readings first, then each part in its
    position, each reading once with its value, the band it was judged against, its verdict, and below it only
    what its judgement adds (the reason when the columns do not say it, derived values, the note). Judgements
    of no single reading follow in their part. Methods are numbered once each for the notes under the table.
    ``meter``: what the meter rule says of the run-hour value (``visit_words.run_hours_words``)."""
    by_key: dict[tuple[str, int | None], list[dict]] = {}
    for ev in evaluations:
        e = ev["e"]
        # A check of several readings (a coil's heat balance) is a row of its own, never the reading it names.
        key = e.item_key if own_judgement(e.check_name) else f"{e.item_key} {e.check_name}"
        by_key.setdefault((key, e.component_id), []).append(ev)
    methods: list[str] = []
    groups: dict[tuple, dict] = {}
    template_titles = {r.item.template.code: r.item.template.title for r in insp.readings.all()}
    values = {reading_value(r, system) for r in insp.readings.all()}

    def group_for(component, template_title: str, template_code: str) -> dict:
        if component is not None:
            key, heading = (1, component.position, component.pk, ""), place_heading(component)
            title, sub = heading["title"], heading["sub"]
        elif template_code == "visit":
            key, title, sub = (0, 0, 0, template_code), template_title, ""
        else:  # the unit's own readings of a task: their place, then the task's checklist
            key, title, sub = (2, 0, 0, template_code), place_heading(None)["title"], template_title
        return groups.setdefault(key, {"title": title, "sub": sub, "rows": []})

    def method_number(method: str) -> int | None:
        if not method:
            return None
        if method not in methods:
            methods.append(method)
        return methods.index(method) + 1

    for r in insp.readings.all():
        item = r.item
        if item.kind == item.Kind.PHOTO:
            continue  # its photos are captioned below the table
        judged = by_key.pop((item.api_key, r.component_id), [])
        value = reading_value(r, system)
        main = next((ev for ev in judged if ev["e"].verdict == r.verdict), judged[0] if judged else None)
        reason = reasons.text_without_subject(
            reason_for(evaluation=r, unit_system=system), r.component.name if r.component_id else None
        )
        if main is not None:
            reason = main["reason"] or reason
        limit, reason = _row_limit(main["e"] if main else None, item.quantity, system, reason, item.decimals)
        verdict, unjudged = reading_verdict(r, judged=bool(judged), meter=meter, system=system)
        shown_reason = unjudged or ("" if says_nothing_more(reason, item.label, value, r.verdict) else reason)
        already = " ".join([value, limit, reason, *(ev["e"].method for ev in judged)])
        details = [d for ev in judged for d in _details(ev["derived"], already=already, readings=values)]
        group_for(r.component if r.component_id else None, item.template.title, item.template.code)["rows"].append(
            {
                "check": item.label,
                "value": value,
                "limit": limit,
                "verdict": verdict,
                "verdict_code": reading_verdict_code(r, meter=meter),
                "reason": shown_reason,
                "details": details,
                "note": r.note,
                "improbable": r.improbable,
                "methods": [n for ev in judged if (n := method_number(ev["e"].method))],
            }
        )
    # Judgements that answer no single reading (a value the server works out from several).
    for judged in by_key.values():
        for ev in judged:
            e = ev["e"]
            limit, reason = _row_limit(e, "", system, ev["reason"])
            code = e.item_key.partition(".")[0]
            title = template_titles.get(code, ev["check"])
            group_for(e.component if e.component_id else None, title, code)["rows"].append(
                {
                    "check": ev["check"],
                    "value": "—",
                    "limit": limit,
                    "verdict": ev["verdict"],
                    "verdict_code": e.verdict,
                    "reason": reason,
                    "details": _details(ev["derived"], already=f"{ev['reason']} {limit} {e.method}", readings=values),
                    "note": "",
                    "improbable": False,
                    "methods": [n for n in [method_number(e.method)] if n],
                }
            )
    ordered = [groups[k] for k in sorted(groups)]
    return [g for g in ordered if g["rows"]], [_formula_html(m) for m in methods]


# The verdicts the result line counts, in its order.
COUNTED = (Verdict.OK, Verdict.WATCH, Verdict.FAIL)


def verdict_counts(parts: list[dict]) -> dict[str, int]:
    counts: dict[str, int] = dict.fromkeys(COUNTED, 0)
    for group in parts:
        for row in group["rows"]:
            if row["verdict_code"] in counts:
                counts[row["verdict_code"]] += 1
    return counts
