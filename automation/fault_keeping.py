"""Keeping what the rules found (``automation.judging`` step 4 and 5): a fault opens or updates the unit's one open
``Fault`` of its rule, with its evidence windows, share and consequence, its one finding
(``automation.fault_findings``) and its proposed corrective work; a fault absent for the set time closes; completed
corrective work closes the faults it answers; freeze events reach freeze readiness (``freeze_blockers``).
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from django.conf import settings
from django.db.models import Q
from django.utils import timezone

from engineering.faults import G36_DEFAULTS, FaultResult, FreezeEvent
from engineering.faults.consequences import consequence_text
from inventory.models import AHU

from .fault_findings import fault_finding_close, fault_finding_keep
from .fault_models import Fault
from .freeze_words import freeze_text

# The section number is from memory (no printed copy at hand); readers see the citation without that note.
FREEZE_SECTION = "ASHRAE Guideline 36-2018, section 5.16.12, freeze protection stages"
FREEZE_TITLE = "Supply air near freezing"
WINDOWS_KEPT = 100
# What each rule's corrective work answers: (scheduling condition, the part it names, severity). A condition
# puts that condition's library tasks on the work (damper_position: the damper and actuator check).
FAULT_WORK: dict[str, tuple[str, str | None, str]] = {
    "FC1": ("", None, "medium"),  # static pressure not reached at full speed: belts, filters, duct leaks
    "FC2": ("sensor_drift", None, "low"),
    "FC3": ("sensor_drift", None, "low"),
    "FC4": ("", None, "low"),  # hunting: control tuning
    "FC5": ("supply_temp_off", None, "medium"),
    "FC6": ("damper_position", "outdoor_damper", "medium"),
    "FC7": ("supply_temp_off", None, "medium"),
    "FC8": ("valve_leak", None, "low"),  # the leak-by test of each coil; the title names the sensors too
    "FC9": ("sensor_drift", None, "low"),
    "FC10": ("damper_position", "outdoor_damper", "medium"),
    "FC11": ("sensor_drift", None, "low"),
    "FC12": ("supply_temp_off", None, "medium"),
    "FC13": ("supply_temp_off", None, "medium"),
    "FC14": ("valve_leak", "cooling_coil", "medium"),  # leaking cooling valve: its leak-by test
    "FC15": ("valve_leak", "heating_coil", "medium"),  # leaking heating valve: its leak-by test
    Fault.FREEZE: ("freeze_protection_failed", None, "critical"),
}
# The work's title where the condition's own title would mislead (FC8 is no set-point problem: supply and mixed
# air should differ by the fan heat alone in free cooling, so a leaking valve or a faulty sensor is to be found).
WORK_TITLES: dict[str, str] = {
    "FC8": "Supply and mixed air differ in free cooling: leaking coil valve or faulty sensor",
}


def close_after() -> dt.timedelta:
    """How long a fault must be absent from judged trends before it closes (``PLENUM_FAULT_CLOSE_AFTER_DAYS``)."""
    return dt.timedelta(days=settings.PLENUM_FAULT_CLOSE_AFTER_DAYS)


def _when(x) -> dt.datetime:
    if isinstance(x, dt.datetime):
        return x.astimezone(dt.UTC)
    return dt.datetime.fromtimestamp(float(x), tz=dt.UTC)


def _window_json(day: dt.date, w, **extra) -> dict:
    return {
        "day": day.isoformat(),
        "start": _when(w.start).isoformat(),
        "end": _when(w.end).isoformat(),
        "alarm_at": _when(getattr(w, "alarm_at", None) or w.reached_at).isoformat(),
        "duration_s": float(w.duration_s),
        **extra,
    }


@dataclass(frozen=True)
class Seen:
    """One rule's finding on one day, ready to keep."""

    code: str
    title: str
    section: str
    formula: str
    windows: list[dict]
    fault_s: float
    share: float | None
    consequence: dict
    reason: str


def _in_day(day: dt.date, w, start: dt.datetime, end: dt.datetime) -> dict | None:
    """A window clipped to the day [start, end); None when what lies in the day is shorter than the alarm delay
    (a run that ended in the hour before the day, held a few minutes into it, is the day before's evidence)."""
    w_start, w_end = max(_when(w.start), start), min(_when(w.end), end)
    if (w_end - w_start).total_seconds() < G36_DEFAULTS.alarm_delay_s:
        return None
    clipped = _window_json(day, w)
    clipped.update(start=w_start.isoformat(), end=w_end.isoformat(), duration_s=(w_end - w_start).total_seconds())
    return clipped


def seen_fault(r: FaultResult, day: dt.date, start: dt.datetime, end: dt.datetime) -> Seen | None:
    windows = [c for w in r.windows if (c := _in_day(day, w, start, end)) is not None]
    if not windows:
        return None
    fault_s = sum(w["duration_s"] for w in windows)
    consequence = (
        {"kind": r.consequence.kind, "summary": r.consequence.summary, "values": dict(r.consequence.values)}
        if r.consequence is not None
        else {}
    )
    share = f", {r.share * 100:.0f} % of the time it could be judged" if r.share is not None else ""
    reason = (
        f"{r.title} ({r.formula}): {len(windows)} window{'s' if len(windows) != 1 else ''} on {day:%-d %b %Y}, "
        f"{fault_s / 60:.0f} min in all{share}"
        + (f"; {consequence['summary']}" if consequence else "")
        + " — found in the building-automation trends"
    )
    return Seen(r.code, r.title, r.section, r.formula, windows, fault_s, r.share, consequence, reason)


def freeze_reason(windows: list[dict], system: str = "si", *, zone: str) -> str:
    """What a freeze fault says for its latest day, in ``system``'s units and on the site's clock (``zone``):
    ``freeze_words.freeze_text`` (what the air did and when, the stage and what it means, what the unit did),
    with where it was found. Kept SI in ``Fault.reason``; pages render it again for their reader."""
    return freeze_text(windows, system, zone=zone) + " — found in the building-automation trends"


def fault_reason(fault: Fault, system: str) -> str:
    """A fault's text for a reader, in their units: a freeze fault's from its windows (``freeze_reason``); a
    rule's kept text with its consequence said again from the kept values
    (``engineering.faults.consequences.consequence_text``)."""
    if fault.code == Fault.FREEZE and fault.windows:
        return freeze_reason(fault.windows, system, zone=fault.ahu.building.site.time_zone)
    summary = str((fault.consequence or {}).get("summary") or "")
    if summary and summary in fault.reason:
        return fault.reason.replace(summary, consequence_text(fault.code, fault.consequence, system))
    return fault.reason


def seen_freeze(
    events: tuple[FreezeEvent, ...], day: dt.date, *, zone: str, moments: list[dict] | None = None
) -> Seen | None:
    """The day's freeze events as one rule's finding; ``moments``: each event's ``freeze_moments.freeze_moment``
    (the air it was judged on, when it was lowest and what the unit did then), kept on its window."""
    if not events:
        return None
    windows = [
        _window_json(day, e, stage=e.stage, below_c=e.below_c, for_s=e.for_s, lowest_c=e.lowest_c, **moment)
        for e, moment in zip(events, moments or [{} for _ in events], strict=True)
    ]
    return Seen(
        Fault.FREEZE,
        FREEZE_TITLE,
        FREEZE_SECTION,
        "supply air below a stage's temperature for its time",
        windows,
        float(sum(e.duration_s for e in events)),
        None,
        {},
        freeze_reason(windows, zone=zone),
    )


def _part(ahu: AHU, which: str | None):
    if which is None:
        return None
    kind, spec, value = {
        "outdoor_damper": ("damper", "role", "outdoor"),
        "cooling_coil": ("coil", "duty", "cooling"),
        "heating_coil": ("coil", "duty", "heating"),
    }[which]
    for c in ahu.components.filter(kind=kind, retired_on__isnull=True).order_by("position", "pk"):
        if str((c.specs or {}).get(spec, "")) == value:
            return c
    return None


def fault_keep(*, ahu: AHU, day: dt.date, seen: Seen, open_faults: list[Fault], by) -> tuple[Fault, bool]:
    """Open the unit's fault of this rule, or add the day to the open one (replacing that day's windows);
    ``open_faults``: the unit's open faults, read locked."""
    condition, which, severity = FAULT_WORK.get(seen.code, ("", None, "medium"))
    first = min(dt.datetime.fromisoformat(w["start"]) for w in seen.windows)
    last = max(dt.datetime.fromisoformat(w["end"]) for w in seen.windows)
    fault = next((f for f in open_faults if f.code == seen.code), None)
    new = fault is None
    if new:
        fault = Fault(
            ahu=ahu,
            component=_part(ahu, which),
            code=seen.code,
            severity=severity,
            condition_code=condition,
            first_seen_at=first,
            last_seen_at=last,
        )
    iso = day.isoformat()
    kept = [w for w in fault.windows if w.get("day") != iso]
    before = sum(w["duration_s"] for w in fault.windows if w.get("day") == iso)
    fault.windows = (kept + seen.windows)[-WINDOWS_KEPT:]
    fault.fault_s = max(fault.fault_s - before, 0.0) + seen.fault_s
    fault.days_seen = sorted(set(fault.days_seen) | {iso})
    fault.first_seen_at = min(fault.first_seen_at, first)
    fault.last_seen_at = max(fault.last_seen_at, last)
    fault.title, fault.section, fault.formula = seen.title, seen.section, seen.formula[:300]
    fault.share, fault.consequence, fault.reason = seen.share, seen.consequence, seen.reason
    fault.save()
    if new:
        _audit(by, fault, "fault_open", {"code": fault.code, "day": iso})
    fault_finding_keep(fault=fault, by=by)
    _propose(fault=fault, day=day, by=by)
    return fault, new


def _is_open_work(wo) -> bool:
    from scheduling.models import WorkOrder

    return (
        wo is not None
        and wo.state in WorkOrder.OPEN_STATES
        and wo.approval != WorkOrder.Approval.REJECTED
        and wo.kind == WorkOrder.Kind.CORRECTIVE
    )


def _propose(*, fault: Fault, day: dt.date, by) -> None:
    """The fault's corrective work: the open one it or its finding holds (a supervisor may have made one for the
    finding), else one proposed (found again for its condition); its finding holds the same work."""
    from inspections.services.findings import CONDITION_TITLES, PRIORITY

    finding = fault.finding
    if (
        not _is_open_work(fault.corrective_work_order)
        and finding is not None
        and _is_open_work(finding.corrective_work_order)
    ):
        fault.corrective_work_order = finding.corrective_work_order
        fault.save(update_fields=["corrective_work_order"])
    if _is_open_work(fault.corrective_work_order):
        _finding_holds(fault=fault, by=by)
        return
    from scheduling.services import corrective_work_order_propose

    urgent = fault.code == Fault.FREEZE
    title = WORK_TITLES.get(fault.code) or (
        CONDITION_TITLES.get(fault.condition_code, fault.title) if fault.condition_code else fault.title
    )
    if fault.component is not None:
        title += f" — {fault.component.name}"
    # What to check, where the trends gave no consequence to say (the rule's risk in words).
    risk = "" if (fault.consequence or {}).get("summary") else consequence_text(fault.code, None)
    wo = corrective_work_order_propose(
        ahu=fault.ahu,
        title=title,
        reason=f"{fault.reason} ({fault.section})" + (f"; {risk}" if risk else ""),
        condition_code=fault.condition_code,
        priority="urgent" if urgent else PRIORITY.get(fault.severity, "normal"),
        component=fault.component,
        source_ref=f"trend:fault:{fault.pk}",
        by=by,
        approved=urgent,  # as a failed freeze-protection test in its season: approved at once
        observed_on=day,
    )
    fault.corrective_work_order = wo
    fault.save(update_fields=["corrective_work_order"])
    _finding_holds(fault=fault, by=by)


def _finding_holds(*, fault: Fault, by) -> None:
    """The fault's finding holds the fault's open corrective work (the findings' own attach: audited, and refused
    for open work of another repair, which the finding then keeps)."""
    from inspections.services.findings import finding_work_order_attach

    finding, wo = fault.finding, fault.corrective_work_order
    if finding is None or wo is None or finding.corrective_work_order_id == wo.pk:
        return
    if _is_open_work(finding.corrective_work_order):
        return
    finding_work_order_attach(finding=finding, work_order=wo, by=by)


def faults_close_absent(
    *, day: dt.date, end: dt.datetime, judged: set[str], present: set[str], open_faults: list[Fault], by
) -> list:
    """Close the unit's open faults (``open_faults``, read locked) of rules judged today, not found, and last seen
    ``close_after()`` ago."""
    closed = []
    cutoff = end - close_after()
    absent = judged - present
    for fault in [f for f in open_faults if f.code in absent and f.last_seen_at <= cutoff]:
        fault.state, fault.closed_at, fault.close_cause = Fault.State.CLOSED, end, Fault.CloseCause.ABSENT
        fault.save(update_fields=["state", "closed_at", "close_cause"])
        _audit(by, fault, "fault_close", {"cause": "absent", "day": day.isoformat()})
        fault_finding_close(fault=fault, at=end, cause=Fault.CloseCause.ABSENT, by=by)
        _withdraw(fault=fault, by=by)
        closed.append(fault)
    return closed


WITHDRAWN = "withdrawn: the fault has not been found in the building-automation trends for the set time"


def _withdraw(*, fault: Fault, by) -> None:
    """Corrective work still awaiting approval whose faults are all closed is withdrawn (approved work stays)."""
    from scheduling.models import WorkOrder
    from scheduling.services import work_order_cancel

    wo = fault.corrective_work_order
    if wo is None or wo.approval != WorkOrder.Approval.PENDING or wo.state not in WorkOrder.OPEN_STATES:
        return
    if Fault.objects.filter(corrective_work_order=wo, state=Fault.State.OPEN).exists():
        return
    if wo.source_findings.filter(state="open").exists():
        return
    work_order_cancel(work_order=wo, by=by, reason=WITHDRAWN)


def _audit(by, fault: Fault, action: str, changes: dict) -> None:
    from accounts.services import audit_record

    audit_record(actor=by, obj=fault, action=action, changes=changes, organisation=fault.ahu.building.site.organisation)


# ---------------------------------------------------------------------------
# Followers: completed corrective work closes its faults; freeze events reach freeze readiness
# ---------------------------------------------------------------------------


def work_order_moved(sender, *, work_order, before: str, by, **kwargs) -> None:
    """``scheduling.signals.work_order_moved`` receiver: completed corrective work closes the faults it answers,
    held by the fault or by its finding, and their findings (found again the next night, a fault opens anew) —
    unless the work's own visit found the problem it was raised for (``closing.repair_awaited`` decides it, for the
    fault's finding too): then the fault stays open and holds the repair work of that visit's finding, and closes
    when the repair is completed."""
    from inspections.services.findings.closing import freeze_unproven, repair_awaited
    from scheduling.models import WorkOrder

    if work_order.state != WorkOrder.State.COMPLETED:
        return
    at = work_order.completed_at or timezone.now()
    # Most completed work answers no fault: a bare locked id read first (in id order, not sorted by the default
    # ordering: the rows are read in their own order below), the rows only when there are any.
    ids = list(
        Fault.objects.select_for_update(of=("self",))
        .filter(Q(corrective_work_order=work_order) | Q(finding__corrective_work_order=work_order))
        .filter(state=Fault.State.OPEN)
        .order_by("pk")
        .values_list("pk", flat=True)
    )
    awaited = repair_awaited(work_order=work_order)
    unproven = bool(ids) and freeze_unproven(work_order=work_order)
    for fault in Fault.objects.filter(pk__in=ids).select_related("finding") if ids else []:
        if unproven and fault.code == Fault.FREEZE:
            continue  # the work's own freeze test left a step unproven (an implausible reading): not corrected
        held = awaited(fault.component_id)
        if held is not None:
            # The work's own test found the fault's problem (a valve leak-by test that failed): nothing was put
            # right, so the fault stays open and waits for the repair its visit's finding holds.
            fault.corrective_work_order = held.corrective_work_order
            fault.save(update_fields=["corrective_work_order"])
            _audit(by, fault, "fault_confirmed", {"work_order": str(work_order.public_id), "finding": held.pk})
            continue
        fault.state, fault.closed_at, fault.close_cause = Fault.State.CLOSED, at, Fault.CloseCause.CORRECTED
        fault.save(update_fields=["state", "closed_at", "close_cause"])
        _audit(by, fault, "fault_close", {"cause": "corrected", "work_order": str(work_order.public_id)})
        fault_finding_close(fault=fault, at=at, cause=Fault.CloseCause.CORRECTED, by=by)


FREEZE_LOOKBACK = dt.timedelta(days=400)


def freeze_blockers(*, unit_ids: list[int], as_of: dt.datetime) -> dict[int, list[tuple[dt.datetime, str, str]]]:
    """{unit id: [(freeze event time, title, corrective work state)]} for ``inspections.freeze``: every freeze
    event of the last 400 days up to ``as_of``, open or closed; readiness keeps those no passing test followed."""
    from scheduling.models import work_order_state_words

    out: dict[int, list[tuple[dt.datetime, str, str]]] = {}
    rows = Fault.objects.filter(
        ahu_id__in=unit_ids,
        code=Fault.FREEZE,
        first_seen_at__lte=as_of,
        last_seen_at__gte=as_of - FREEZE_LOOKBACK,
    ).values_list(
        "ahu_id", "last_seen_at", "windows", "title", "corrective_work_order__state", "corrective_work_order__approval"
    )
    for ahu_id, last_seen_at, windows, title, wo_state, approval in rows:
        ends = [dt.datetime.fromisoformat(w["end"]) for w in windows or [] if "end" in w]
        ends = [e for e in ends if e <= as_of] or [min(last_seen_at, as_of)]
        words = work_order_state_words(wo_state, approval) if wo_state else ""
        out.setdefault(ahu_id, []).append((max(ends), title, words))
    return out
