"""One visit of the unit history: its heading (the unit's own readings) and one row per judgement, a failure
naming its finding, readings no judgement used as rows of their own, like answers on several parts merged."""

from __future__ import annotations

import re
import zoneinfo
from collections import defaultdict

from engineering.controls import Verdict
from inspections import reasons
from inspections.checklists import TASK_CODES
from inspections.display import place_words
from inspections.models import Finding, Inspection, Reading
from inspections.selectors import check_label, reason_for
from inspections.services.findings import problem_of

from .history_cells import VALUE_KEYS, judged_cells, keep_units
from .visit_words import VERDICTS, reading_value, reading_verdict

# The unit's own readings of a visit, said in its heading (the items' labels are a question for the phone).
VISIT_WORDS = {
    "run_hours": "run-hours",
    "supply_airflow": "supply airflow",
    "supply_fan_speed": "supply fan speed",
    "general_notes": "notes",
}


# Yes/no answers and choices: the same answer for several parts is one row naming them.
ANSWERS = ("check", "choice")
# The bands a reason ends with, when the limit column already says them.
_BANDS = re.compile(r" \(watch above [^()]*\)$")
# The figures in brackets a reason repeats from the values and limit cells ("(259 Pa at design, clean 95 Pa,
# final 300 Pa)"); the findings table and the visit's own record keep the whole text.
_FIGURES = re.compile(r" \([^()]*\d[^()]*\)")


def _reading_text(r: Reading, system: str) -> str:
    """A reading beside the values judged from it ("return air 22.7 °C"): its label, short."""
    return f"{r.item.label.lower().replace(' temperature', '')} {reading_value(r, system)}"


def history_visit(
    insp: Inspection, *, system: str, labels: dict[str, str], tz: zoneinfo.ZoneInfo, findings: list[Finding]
) -> dict:
    """One visit of the history: its heading and one row per judgement (see the module's docstring). A failure
    that a finding records names the finding, whose full text the findings table gives once."""
    by_problem = {(f.component_id, f.problem): f for f in findings}
    readings = list(insp.readings.all())
    order = {(r.item.template.code, r.item.key, r.component_id): i for i, r in enumerate(readings)}
    owned = {(f"{r.item.template.code}.{r.item.key}", r.component_id): r for r in readings}
    evaluations = list(insp.evaluations.all())
    judged = {(e.item_key, e.component_id) for e in evaluations}
    heading = [
        f"{VISIT_WORDS.get(r.item.key, r.item.label.lower())} {reading_value(r, system)}"
        for r in readings
        if r.item.template.code == "visit" and reading_value(r, system) not in ("—", "")
    ]
    # Readings no judgement owns: inputs of a check on the same part and task (a damper's command, the
    # outdoor and return temperatures of the outdoor-air check) or readings kept as recorded.
    loose: dict[tuple[str, int | None], list[Reading]] = defaultdict(list)
    recorded = []
    for r in readings:
        key = (f"{r.item.template.code}.{r.item.key}", r.component_id)
        if r.item.template.code == "visit" or key in judged:
            continue
        if any(
            e.item_key.partition(".")[0] == r.item.template.code
            and e.component_id == r.component_id
            and e.check_name not in (*ANSWERS, "limits")
            for e in evaluations
        ):
            loose[(r.item.template.code, r.component_id)].append(r)
        else:
            recorded.append(r)
    rows = []
    attached: set[tuple[str, int | None]] = set()
    for e in evaluations:
        d = e.derived or {}
        code = e.item_key.partition(".")[0]
        reading = owned.get((e.item_key, e.component_id))
        part = e.component.name if e.component_id else ""
        place = place_words(e.component if e.component_id else None)
        values, limit = judged_cells(evaluation=e, reading=reading, system=system)
        if e.check_name not in (*ANSWERS, "limits") and (code, e.component_id) not in attached:
            # The readings this judgement was made from that its values do not already say.
            numbers = {round(v, 6) for v in d.values() if isinstance(v, int | float) and not isinstance(v, bool)}
            inputs = [
                r
                for r in loose.get((code, e.component_id), [])
                if r.value_si is None or round(r.value_si, 6) not in numbers
            ]
            if reading is not None and reading.value_si is not None and round(reading.value_si, 6) not in numbers:
                inputs.append(reading)
            inputs.sort(key=lambda r: order[(r.item.template.code, r.item.key, r.component_id)])
            values = [_reading_text(r, system) for r in inputs] + values
            attached.add((code, e.component_id))
        reason = ""
        finding = by_problem.get((e.component_id, problem_of(check=e.check_name, item=e.item_key)))
        if e.verdict == Verdict.FAIL and finding is not None:
            reason = f"finding: {finding.title} (first seen {finding.opened_at.astimezone(tz):%Y-%m-%d})"
        elif e.verdict not in (Verdict.OK, "") or (not limit and e.check_name not in (*ANSWERS, "limits")):
            text = reasons.text_without_subject(reason_for(evaluation=e, unit_system=system), part or None)
            reason = _BANDS.sub("", text) if limit else text
            if e.check_name in ("filter_loading", "filter_after_change") or e.check_name in VALUE_KEYS:
                reason = _FIGURES.sub("", reason)  # the values and limit cells give them
        if reading is not None and reading.note:
            reason = f"{reason}; note: {reading.note}" if reason else f"note: {reading.note}"
        rows.append(
            {
                "check": check_label(check=e.check_name, item=e.item_key, labels=labels),
                "parts": [place],
                "on_part": bool(part),
                "values": keep_units("; ".join(v for v in values if v)),
                "limit": keep_units(limit),
                "verdict": VERDICTS.get(e.verdict, e.verdict),
                "verdict_code": e.verdict,
                "reason": keep_units(reason),
                "answer": e.check_name in ANSWERS,
                "order": _row_order(e.item_key, e.component, reading, order),
            }
        )
    for r in recorded + [
        r for rs in loose.values() for r in rs if (r.item.template.code, r.component_id) not in attached
    ]:
        verdict, unjudged = reading_verdict(r, judged=False, system=system)  # no judgement owns it
        rows.append(
            {
                "check": r.item.label,
                "parts": [place_words(r.component if r.component_id else None)],
                "on_part": bool(r.component_id),
                "values": keep_units(reading_value(r, system)),
                "limit": "",
                "verdict": verdict,
                "verdict_code": r.verdict,
                "reason": "; ".join(part for part in (unjudged, f"note: {r.note}" if r.note else "") if part),
                "answer": False,
                "order": _row_order(f"{r.item.template.code}.{r.item.key}", r.component, r, order),
            }
        )
    rows.sort(key=lambda row: row["order"])
    return {
        "inspection": insp,
        "finished": insp.finished_at.astimezone(tz),
        "technician": insp.technician,
        "work_order": insp.work_order,
        "heading": keep_units("; ".join(heading)),
        "rows": _merge_answers(rows),
    }


def _row_order(item_key: str, component, reading: Reading | None, order: dict) -> tuple:
    """Rows in the checklist's order: task as the phone lists them, then item, then the part's place."""
    code, _, key = item_key.partition(".")
    task = TASK_CODES.index(code) if code in TASK_CODES else len(TASK_CODES)
    at = order.get((code, key, component.pk if component is not None else None), len(order))
    return (task, at if reading is not None else len(order), component.position if component is not None else -1)


def _merge_answers(rows: list[dict]) -> list[dict]:
    """The same yes/no answer or choice on several parts, all ok, as one row naming the parts."""
    out: list[dict] = []
    same: dict[tuple, dict] = {}
    for row in rows:
        if row["answer"] and row["verdict_code"] == Verdict.OK and not row["reason"] and row["on_part"]:
            key = (row["check"], row["values"])
            if key in same:
                same[key]["parts"].append(row["parts"][0])
                continue
            same[key] = row
        out.append(row)
    return out
