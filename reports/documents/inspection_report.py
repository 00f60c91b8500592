"""Inspection report for one work order: the record of a visit, for the client's file.

Readings are shown in the reader's units (the requester's unit system, stored
with the report so the text never changes), on the reader's paper (A4, or US Letter
for US units). A header names the site, building, unit (label code, its address and
QR code), work order, technician, and the arrival and signature on the site's clock;
a one-line result counts the verdicts and findings and, where the visit tested freeze
protection, gives the unit's readiness. Each reading appears once, in one table by
part, with the band it was judged against and only what its judgement adds; methods
are numbered notes. Then findings and their corrective work, photos, the signature,
verification and amendments, each once; the safety cautions the technician acknowledged come once, right after
the first result, so they never stand alone on a last page.
"""

from __future__ import annotations

import datetime as dt
import html
import re
from collections.abc import Callable

from django.core.exceptions import ValidationError
from django.db.models import Prefetch
from django.http import Http404
from django.utils.safestring import SafeString, mark_safe

from accounts.clock import time_zone
from accounts.models import AuditEvent
from engineering.controls import Verdict
from engineering.formatting import quantity_text
from engineering.units import UnitSystem
from inspections import display, reasons
from inspections.display import VERDICT_WORDS
from inspections.freeze import TEMPLATE as FREEZE_TEMPLATE
from inspections.freeze import freeze_readiness
from inspections.models import Amendment, Evaluation, Inspection, Photo, Reading
from inspections.selectors import (
    check_label,
    findings_seen_on,
    item_labels,
    reason_for,
    work_order_cautions,
)
from inventory.services import label_absolute_url, label_qr_svg
from reports.rendering import html_render, paper_for, stored_file_data_uri, svg_data_uri
from scheduling.models import WorkOrder, WorkOrderTask
from scheduling.selectors import work_order_for

from . import Built, Prepared
from .common import unit_system

CHECK_VALUES = {"ok": "OK", "not_ok": "Not OK", "na": "N/A"}
# Verdicts in words, as the phone and the record page say them (inspections.display).
VERDICTS = {code: words for code, words in VERDICT_WORDS.items() if code}


def prepare(*, user, parameters: dict, requested_at) -> Prepared:
    raw = parameters.get("work_order")
    if raw in (None, ""):
        raise ValidationError({"work_order": "work_order: the work order's public id is required"})
    try:
        wo = work_order_for(user=user, public_id=str(raw))
    except Http404:
        raise Http404(f"work_order: no work order {raw} among those you may see") from None
    return Prepared(
        parameters={"work_order": str(wo.public_id), "unit_system": unit_system(parameters, user)},
        site_ids=[wo.ahu.building.site_id],
        organisation_id=wo.organisation_id,
    )


def reading_value(reading: Reading, system: str) -> str:
    item = reading.item
    if reading.value_text == "na":
        return "N/A"
    if item.kind == item.Kind.NUMBER:
        if reading.value_si is None:
            return "—"
        return _number_shown(reading.value_si, item.quantity, system)
    if item.kind == item.Kind.CHECK:
        return CHECK_VALUES.get(reading.value_text, reading.value_text)
    if item.kind == item.Kind.CHOICE:
        labels = {c.get("value"): c.get("label") for c in item.choices or []}
        return labels.get(reading.value_text, reading.value_text)
    return reading.value_text or "—"


def _number_shown(value_si: float, quantity: str, system: str) -> str:
    """A number of the record in the reader's unit at its quantity's usual precision, grouped as the reasons
    group it ("16,500 h", "1200 cfm"): a reading, and each side of an amended one."""
    return quantity_text(value_si, quantity=quantity, system=system)


def _inspections(wo: WorkOrder) -> list[Inspection]:
    return list(
        Inspection.objects.filter(work_order=wo)
        .select_related("technician", "verified_by", "flag_resolved_by")
        .prefetch_related(
            Prefetch(
                "readings",
                queryset=Reading.objects.select_related("item__template", "component").order_by(
                    "item__template__code", "item__position", "component__position", "pk"
                ),
            ),
            Prefetch("evaluations", queryset=Evaluation.objects.select_related("component").order_by("pk")),
            Prefetch("photos", queryset=Photo.objects.select_related("component").order_by("uploaded_at", "pk")),
            Prefetch(
                "amendments", queryset=Amendment.objects.select_related("created_by").order_by("created_at", "pk")
            ),
        )
        .order_by("finished_at", "pk")
    )


def visit_records(
    *, work_order: WorkOrder, system: str, photo_src: Callable, signature_src: Callable
) -> tuple[list[dict], dict[int, object], list[str]]:
    """Each stored form of the work order as its record, in the reader's units ("si" or "us").

    One visit per inspection, oldest first: readings grouped by template with their values,
    verdicts and reasons, evaluations with derived values, findings, photos, the signature
    and amendments. ``photo_src(photo)`` and ``signature_src(inspection)`` say how an image is
    shown (a data URI in the PDF, the checked photo view on the page). Also the components
    read and the template cautions met. The PDF and the work order's page both show this,
    so they tell the same record.

    Each visit also carries its readings as one table by part (``parts``: each reading once with
    the band it was judged against and only what its judgement adds), the methods those judgements
    name (``methods``, numbered once each) and its verdict counts (``counts``), for the PDF.
    """
    visits = []
    components: dict[int, object] = {}
    template_cautions: list[str] = []
    inspections = _inspections(work_order)
    zone = time_zone(work_order.ahu.building.site.time_zone)
    # Each visit lists the findings its failures observed (a finding gathers every visit that saw it).
    seen = findings_seen_on(inspections=inspections)
    labels = item_labels(
        api_keys={e.item_key for i in inspections for e in i.evaluations.all()}
        | {ph.item_key for i in inspections for ph in i.photos.all() if ph.item_key}
    )
    work_order_verification = _work_order_verification(work_order)
    for insp in inspections:
        visit_day = insp.finished_at.astimezone(zone).date() if insp.finished_at else None
        groups: dict[str, list] = {}
        for r in insp.readings.all():
            if r.component_id:
                components[r.component_id] = r.component
            groups.setdefault(r.item.template.title, []).append(
                {
                    "label": r.item.label,
                    "component": r.component,
                    "value": reading_value(r, system),
                    "verdict": VERDICTS.get(r.verdict, ""),
                    "verdict_code": r.verdict,
                    # The row names the part: its reason does not begin with it again.
                    # …and a reason that only repeats the row ("confirmed: <item>", "<item>: Clean") is not shown.
                    "reason": _row_reason(r, system, visit_day),
                    "note": r.note,
                    "improbable": r.improbable,
                }
            )
        for r in insp.readings.all():
            for c in r.item.template.cautions or []:
                if c not in template_cautions:
                    template_cautions.append(c)
        evaluations = [
            {
                "e": e,
                "verdict": VERDICTS.get(e.verdict, e.verdict),
                "check": check_label(check=e.check_name, item=e.item_key, labels=labels),
                "reason": reasons.text_without_label_end(
                    _reason(e, system, visit_day), check_label(check=e.check_name, item=e.item_key, labels=labels)
                ),
                "derived": derived_for_visit(e.derived or {}, system, item=e.item_key, visit_day=visit_day),
                # The record page reads them as sentences (display.derived_text), never "label: value; …".
                "derived_text": derived_text_for_visit(e.derived or {}, system, item=e.item_key, visit_day=visit_day),
            }
            for e in insp.evaluations.all()
        ]
        parts, methods = _parts(insp, evaluations, system)
        visits.append(
            {
                "inspection": insp,
                "groups": list(groups.items()),
                "evaluations": evaluations,
                "parts": parts,
                "methods": methods,
                "counts": _counts(parts),
                "findings": _with_reasons(seen.get(insp.pk, []), system),
                "photos": [
                    {"p": ph, "src": photo_src(ph), "label": labels.get(ph.item_key, "")} for ph in insp.photos.all()
                ],
                "signature": signature_src(insp),
                "verification": _verification(insp, work_order_verification),
                "amendments": [{"a": a, "changes": _changes(a, system)} for a in insp.amendments.all()],
            }
        )
    return visits, components, template_cautions


def _work_order_verification(work_order: WorkOrder) -> dict | None:
    """Who verified the work order and when: its own time, and the person from its audit trail (the work order
    keeps no person of its own)."""
    if work_order.verified_at is None:
        return None
    event = (
        AuditEvent.objects.filter(
            object_type=WorkOrder._meta.label_lower,
            object_id=str(work_order.pk),
            action="transition",
            changes__to=WorkOrder.State.VERIFIED,
        )
        .select_related("actor")
        .order_by("-at", "-pk")
        .first()
    )
    by = event.actor if event is not None and event.actor is not None else None
    return {"by": str(by) if by is not None else "", "at": work_order.verified_at}


def _verification(insp: Inspection, work_order_verification: dict | None) -> dict | None:
    """One verification per record: the inspection's own when a supervisor verified the form, otherwise the work
    order's (verified from the board or the API) for the form that completed it, so the header's state and the
    sign-off never disagree."""
    if insp.verified_at is not None:
        return {"by": str(insp.verified_by) if insp.verified_by_id else "", "at": insp.verified_at}
    # A form sent after the work was done (kept and flagged) is not the record the work order's verification covers.
    return work_order_verification if insp.work_order_completed else None


# ---------------------------------------------------------------------------
# Forecasts seen from the visit
# ---------------------------------------------------------------------------

_FORECAST_KEYS = ("forecast_change_date", "forecast_earliest_date", "forecast_latest_date")


def _past_forecast(derived: dict, visit_day: dt.date | None) -> dt.date | None:
    """The filter trend's change date when it lies before the visit (the line had already reached its final
    pressure drop): a date the record must not call a forecast."""
    raw = derived.get("forecast_change_date")
    if not raw or visit_day is None:
        return None
    try:
        day = dt.date.fromisoformat(str(raw)[:10])
    except ValueError:
        return None
    return day if day < visit_day else None


def _long_day(day: dt.date) -> str:
    return f"{day.day} {day:%B %Y}"


def derived_for_visit(derived: dict, system: str, *, item: str, visit_day: dt.date | None) -> list[tuple[str, str]]:
    """``display.derived_rows`` as of the visit: a change date the trend reached before the visit reads as
    past ("trend reached the final pressure drop: 2 March 2025, before this visit"), without its range."""
    past = _past_forecast(derived, visit_day)
    if past is None:
        return display.derived_rows(derived, system, item=item)
    rows = display.derived_rows({k: v for k, v in derived.items() if k not in _FORECAST_KEYS}, system, item=item)
    return [*rows, ("trend reached the final pressure drop", f"{_long_day(past)}, before this visit")]


def derived_text_for_visit(derived: dict, system: str, *, item: str, visit_day: dt.date | None) -> str:
    """``display.derived_text`` as of the visit (a change date already past reads as past, as
    ``derived_for_visit``)."""
    past = _past_forecast(derived, visit_day)
    if past is None:
        return display.derived_text(derived, system, item=item)
    text = display.derived_text({k: v for k, v in derived.items() if k not in _FORECAST_KEYS}, system, item=item)
    return f"{text} The trend reached the final pressure drop on {_long_day(past)}, before this visit.".strip()


def _reason(judged, system: str, visit_day: dt.date | None) -> str:
    """A reading's or judgement's reason in the reader's units, without the part its row names, and with a change
    date already past at the visit said as past."""
    text = reasons.text_without_subject(
        reason_for(evaluation=judged, unit_system=system), judged.component.name if judged.component_id else None
    )
    derived = getattr(judged, "derived", None) or {}
    past = _past_forecast(derived, visit_day)
    if past is not None:
        text = text.replace(
            f"change forecast {_long_day(past)}", f"trend reached the final pressure drop on {_long_day(past)}"
        )
    return text


# ---------------------------------------------------------------------------
# One table of readings by part
# ---------------------------------------------------------------------------

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
        if (w_low, w_high) == (low, high):
            return ok
        watch = reasons.render([reasons.span(w_low, w_high, quantity, decimals)], system)
        return f"ok {ok}; watch {watch}"
    fraction = derived.get("design_min_oa_fraction")
    if _number(fraction):
        design = f"design minimum {fraction * 100:.0f} %"
        required, supply = derived.get("required_outdoor_airflow_m3s"), derived.get("supply_airflow_m3s")
        if _number(required) and _number(supply) and supply > 0:
            # The same share the judgement compares with (inspections.evaluation: required ÷ supply, at most all).
            return f"space needs {min(required / supply, 1.0) * 100:.0f} %; {design}"
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


def _row_reason(reading, system: str, visit_day: dt.date | None) -> str:
    """A reading's reason for its record row, left out when it says nothing the row does not."""
    reason = _reason(reading, system, visit_day)
    return "" if _says_nothing_more(reason, reading.item.label, reading_value(reading, system), "") else reason


def _says_nothing_more(reason: str, label: str, value: str, verdict_code: str) -> bool:
    """A reason that only repeats the row: "confirmed: <item>", "<item>: <choice>", or a reading inside its band."""
    if not reason:
        return True
    rest = reason
    for lead in ("confirmed: ", "not confirmed: "):
        if rest.startswith(lead):
            rest = rest[len(lead) :]
    rest = rest.replace(label, "").replace(label[:1].lower() + label[1:], "").strip(" :;,.")
    if not rest or rest == value:
        return True
    return verdict_code == Verdict.OK and " is within " in reason


# A derived value is left out where the reason says it in a technician's words: the loading as "120 % of its
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


def _parts(insp: Inspection, evaluations: list[dict], system: str) -> tuple[list[dict], list[SafeString]]:
    """The visit's readings as one table by part: the unit's own readings first, then each part in its
    position, each reading once with its value, the band it was judged against, its verdict, and below it only
    what its judgement adds (the reason when the columns do not say it, derived values, the note). Judgements
    of no single reading follow in their part. Methods are numbered once each for the notes under the table."""
    by_key: dict[tuple[str, int | None], list[dict]] = {}
    for ev in evaluations:
        by_key.setdefault((ev["e"].item_key, ev["e"].component_id), []).append(ev)
    methods: list[str] = []
    groups: dict[tuple, dict] = {}
    template_titles = {r.item.template.code: r.item.template.title for r in insp.readings.all()}
    values = {reading_value(r, system) for r in insp.readings.all()}

    def group_for(component, template_title: str, template_code: str) -> dict:
        if component is not None:
            key = (1, component.position, component.pk, "")
            title, sub = component.name, f"{component.get_kind_display()} · label {component.label_code}"
        else:
            key = (0 if template_code == "visit" else 2, 0, 0, template_code)
            title, sub = template_title, ""
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
        shown_reason = "" if _says_nothing_more(reason, item.label, value, r.verdict) else reason
        already = " ".join([value, limit, reason, *(ev["e"].method for ev in judged)])
        details = [d for ev in judged for d in _details(ev["derived"], already=already, readings=values)]
        group_for(r.component if r.component_id else None, item.template.title, item.template.code)["rows"].append(
            {
                "check": item.label,
                "value": value,
                "limit": limit,
                "verdict": VERDICTS.get(r.verdict, ""),
                "verdict_code": r.verdict,
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
_COUNTED = (Verdict.OK, Verdict.WATCH, Verdict.FAIL)


def _counts(parts: list[dict]) -> dict[str, int]:
    counts: dict[str, int] = dict.fromkeys(_COUNTED, 0)
    for group in parts:
        for row in group["rows"]:
            if row["verdict_code"] in counts:
                counts[row["verdict_code"]] += 1
    return counts


def build(*, report) -> Built:
    p = report.parameters
    system = p["unit_system"]
    wo = WorkOrder.objects.select_related("organisation", "ahu__building__site", "assignee").get(
        public_id=p["work_order"]
    )
    tasks = list(
        WorkOrderTask.objects.filter(work_order=wo)
        .select_related("task", "component")
        .order_by("task__category", "task__code", "pk")
    )
    visits, _components, _template_cautions = visit_records(
        work_order=wo,
        system=system,
        photo_src=lambda ph: stored_file_data_uri(ph.thumbnail or ph.image, max_px=360),
        signature_src=lambda insp: stored_file_data_uri(insp.signature_image, max_px=400),
    )
    for visit in visits:
        visit["result"] = _result_line(visit, wo)
    # The safety box is the checklist's, each caution once, as the phone and the page show it.
    cautions = work_order_cautions(work_order=wo)
    ahu = wo.ahu
    title = f"Inspection report — {ahu.tag}, {ahu.building.site.name}, {wo.title}"
    html_text = html_render(
        template="reports/inspection.html",
        context={
            "wo": wo,
            "ahu": ahu,
            "site": ahu.building.site,
            "organisation": wo.organisation,
            "tasks": tasks,
            "visits": visits,
            "cautions": cautions,
            # The unit's label: its address and QR code, from the registry's own label functions (vector SVG).
            "label_url": label_absolute_url(code=ahu.label_code),
            "label_qr": svg_data_uri(label_qr_svg(code=ahu.label_code)),
            "system_label": "US customary (in. w.c., °F, cfm)" if system == UnitSystem.US else "SI (Pa, °C, L/s)",
        },
        title=title,
        paper=paper_for(system),
        generated_at=report.created_at,
        zone=ahu.building.site.time_zone,
        subject=f"Record of work order {wo.public_id}",
    )
    return Built(html=html_text, title=title)


def _plural(n: int, one: str, many: str) -> str:
    return f"{n or 'no'} {one if n == 1 else many}"


def _result_line(visit: dict, wo: WorkOrder) -> dict:
    """The visit's outcome in one line: verdict counts, findings opened (and seen again), and where the visit
    tested freeze protection, the unit's readiness at its signature (inspections.freeze, the one judgement)."""
    insp = visit["inspection"]
    counts = visit["counts"]
    opened = sum(1 for f in visit["findings"] if f.inspection_id == insp.pk)
    again = len(visit["findings"]) - opened
    findings = _plural(opened, "finding opened", "findings opened")
    if again:
        findings += f", {again} seen again"
    freeze = None
    if any(r.item.template.code == FREEZE_TEMPLATE for r in insp.readings.all()) and insp.finished_at:
        readiness = freeze_readiness(units=[wo.ahu], as_of=insp.finished_at)
        if readiness:
            freeze = {"label": readiness[0].label, "why": readiness[0].why, "ready": readiness[0].ready}
    return {
        "checks": " · ".join(f"{counts[v]} {v}" for v in _COUNTED),  # "3 ok · 1 watch · 0 fail"
        "findings": findings,
        "freeze": freeze,
    }


def _with_reasons(findings: list, system: str) -> list:
    """Findings with their reason rendered in the reader's units (``reason_display``)."""
    for finding in findings:
        finding.reason_display = reason_for(evaluation=finding, unit_system=system)
    return findings


def _changes(amendment: Amendment, system: str) -> list[str]:
    """Each change of an amendment as one line: item, before → after (numbers in the reader's units)."""
    from inspections.models import ChecklistItem

    lines = []
    for change in amendment.changes or []:
        if not isinstance(change, dict):
            lines.append(str(change))
            continue
        key = str(change.get("item", ""))
        quantity, name = "", key
        if "." in key:
            code, item_key = key.split(".", 1)
            item = (
                ChecklistItem.objects.filter(template__code=code, key=item_key).order_by("-template__version").first()
            )
            quantity = item.quantity if item else ""
            name = item.label if item else key

        before = _change_value(change.get("before"), quantity, system)
        after = _change_value(change.get("after"), quantity, system)
        line = f"{name}: {before} → {after}"
        if change.get("note"):
            line += f" ({change['note']})"
        lines.append(line)
    return lines


def _change_value(value, quantity: str, system: str) -> str:
    if isinstance(value, dict):
        number = value.get("value_si")
        value = number if number is not None else value.get("value_text", value.get("value"))
        value = CHECK_VALUES.get(value, value) if isinstance(value, str) else value
    if isinstance(value, int | float) and not isinstance(value, bool) and quantity:
        return _number_shown(value, quantity, system)
    return "—" if value in (None, "") else str(value)
