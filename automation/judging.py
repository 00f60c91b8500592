"""Judging a unit's trends day by day: the feeds, the fault rules, freeze events, and what they raise.

For each site-local day and each unit with mapped points (``trends_judge``):

1. Run-hours and filter loading feed the schedule (``automation.feeds``).
2. The unit's points are put on one regular grid (``engineering.faults.resample``) and judged by ASHRAE
   Guideline 36's AHU fault conditions (``engineering.faults.evaluate_ahu``). The minimum outdoor-air fraction
   is the unit's design minimum (``AHU.design_min_oa_fraction``); the damper's minimum position, which the
   operating states need and no mapped Brick class carries, is the lowest position the damper was commanded
   to while the fan ran over the day (a controller rests the damper at its minimum; common practice).
3. The supply air (and the air after a preheater, where mapped) is judged against the guideline's
   freeze-protection stages (``engineering.faults.freeze_events``).
4. Each fault found opens or updates the unit's one open ``Fault`` of that rule and proposes its corrective
   work through ``scheduling.services.corrective_work_order_propose`` (the path findings use: one open
   corrective work order per unit, part and scheduling condition). A fault the rules judged but did not find
   for ``PLENUM_FAULT_CLOSE_AFTER_DAYS`` days (7 by default) closes. A freeze event keeps the unit "not ready"
   in ``inspections.freeze.freeze_readiness`` until a freeze-protection test passes after it.
5. Each open fault is one finding of its unit through the findings' own path (``automation.fault_findings``):
   source building-automation trends with the rule, its evidence window and share; it holds the fault's
   corrective work and closes with the fault (absent for the set time, or its work completed).

Re-running a day replaces that day's evidence and adds nothing twice.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

import numpy as np
from django.conf import settings
from django.core.exceptions import ValidationError
from django.db import transaction
from django.db.models import Q
from django.utils import timezone

from accounts.changes import changes_deferred
from engineering import formatting as fmt
from engineering.errors import EngineeringInputError
from engineering.faults import (
    G36_DEFAULTS,
    G36_FREEZE_STAGES,
    ROLES,
    AhuFaults,
    FaultResult,
    FreezeEvent,
    FreezeStage,
    evaluate_ahu,
    evaluate_ahus,
    freeze_events,
    freeze_events_batch,
    resample,
)
from engineering.faults.consequences import consequence_text
from engineering.faults.freeze import stage_words
from inventory.models import AHU, Site
from inventory.today import today_for

from .fault_findings import fault_finding_close, fault_finding_keep
from .fault_models import Fault
from .feeds import fan_of, filter_days_forecast, filter_feed, run_hours_feed
from .models import Point
from .series import EXTRA_ROLES, Samples, UnitTrends, samples_for, site_day_window, unit_trends

# Averages and the mode delay look back: the hour before the day is read with it (its evidence is not kept).
LEAD = dt.timedelta(hours=1)
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
    "FC8": ("supply_temp_off", None, "low"),
    "FC9": ("sensor_drift", None, "low"),
    "FC10": ("damper_position", "outdoor_damper", "medium"),
    "FC11": ("sensor_drift", None, "low"),
    "FC12": ("supply_temp_off", None, "medium"),
    "FC13": ("supply_temp_off", None, "medium"),
    "FC14": ("", "cooling_coil", "medium"),  # leaking cooling valve
    "FC15": ("", "heating_coil", "medium"),  # leaking heating valve
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


@dataclass
class UnitDay:
    """What one unit's day of trends gave."""

    ahu: AHU
    day: dt.date
    run_hours: object = None
    filters: list = field(default_factory=list)
    faults: AhuFaults | None = None
    freeze: tuple[FreezeEvent, ...] = ()
    opened: list[Fault] = field(default_factory=list)
    updated: list[Fault] = field(default_factory=list)
    closed: list[Fault] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)


@dataclass
class JudgeResult:
    days: list[UnitDay] = field(default_factory=list)

    @property
    def opened(self) -> list[Fault]:
        return [f for d in self.days for f in d.opened]

    @property
    def closed(self) -> list[Fault]:
        return [f for d in self.days for f in d.closed]


@dataclass
class SiteDayReads:
    """What judging one site-local day reads for every unit of the site, read once for the site (a fixed number
    of queries, whatever its number of units) inside the site-day's transaction, before any unit's writes; the
    units' rows are locked in it (for their meter readings)."""

    start: dt.datetime
    end: dt.datetime
    samples: dict[int, Samples]  # point id: samples from ``start - LEAD`` to ``end``
    meters: dict[int, tuple]  # fan id: ``feeds.fan_meters``
    open_faults: dict[int, list[Fault]]  # unit id: its open faults, locked, newest first (``Fault.Meta.ordering``)
    filter_findings: dict[int, object]  # bank id: its open "filter loaded" finding from the trends


def site_day_reads(*, units: list[AHU], points_of: dict[int, list[Point]], day: dt.date) -> SiteDayReads:
    """Everything ``unit_day_judge`` reads before it writes, for ``units`` (one site's) on ``day``."""
    from .fault_findings import open_filter_findings
    from .feeds import FILTER_SENSOR, fan_meters

    start, end = site_day_window(ahu=units[0], day=day)
    points = [p for u in units for p in points_of.get(u.pk, [])]
    fans = {p.component.pk: p.component for p in points if p.component is not None and p.component.kind == "fan"}
    banks = [p.component for p in points if p.brick_class == FILTER_SENSOR and p.component is not None]
    # The units' rows locked once for the day's meter readings (the meter service locks one per reading).
    list(AHU.objects.select_for_update().filter(pk__in=[u.pk for u in units]).order_by("pk").values_list("pk"))
    open_faults: dict[int, list[Fault]] = {u.pk: [] for u in units}
    for fault in Fault.objects.select_for_update().filter(ahu__in=units, state=Fault.State.OPEN):
        open_faults[fault.ahu_id].append(fault)
    return SiteDayReads(
        start=start,
        end=end,
        samples=samples_for(points=points, since=start - LEAD, until=end),
        meters=fan_meters(fans=list(fans.values()), end=end) if fans else {},
        open_faults=open_faults,
        filter_findings=open_filter_findings(banks=banks) if banks else {},
    )


# ---------------------------------------------------------------------------
# Judging (no writes)
# ---------------------------------------------------------------------------


def _step_s(trends: UnitTrends) -> float:
    """The grid step: the median logging interval of the unit's points, 1 min to 1 h."""
    steps = [np.diff(s.seconds) for s in trends.samples.values() if s.seconds.size > 1]
    steps = [d[d > 0] for d in steps]
    steps = [d for d in steps if d.size]
    if not steps:
        return 900.0
    return float(min(max(np.median(np.concatenate(steps)), 60.0), 3600.0))


def _series(trends: UnitTrends, start: float) -> dict:
    out: dict = {}
    for role, point in trends.roles.items():
        if role in EXTRA_ROLES:
            continue
        s = trends.samples.get(point.pk)
        if s is None or s.seconds.size == 0:
            continue
        low, high = ROLES[role][1], ROLES[role][2]
        values = np.clip(s.values, 0.0, 1.0) if ROLES[role][3] == "" else s.values
        values = np.where((values >= low) & (values <= high), values, np.nan)  # out of range: a gap, not a value
        out[role] = (s.seconds, values)
    return out


def _fault_series(trends: UnitTrends, step: float) -> tuple[dict | None, str]:
    """What FC#1–#15 read of the unit's day, as ``resample`` takes it (None and why when there is nothing)."""
    series = _series(trends, (trends.start - LEAD).timestamp())
    day_start = trends.start.timestamp()
    if not any((times >= day_start).any() for times, _values in series.values()):
        return None, "no trend samples that day of any point the fault rules read"
    series["min_oa_fraction"] = float(trends.ahu.design_min_oa_fraction)
    damper = trends.of("oa_damper")
    if "oa_damper" in series and damper is not None:
        from .feeds import fan_running

        running = fan_running(trends, damper.seconds)
        seen = damper.values[np.isfinite(damper.values) & (running if running is not None else True)]
        if seen.size:
            series["oa_damper_min"] = float(np.clip(seen.min(), 0.0, 1.0))
    return series, ""


@dataclass(frozen=True)
class RulesDay:
    """What the guideline's rules found in one unit's day (no writes): FC#1–#15 (None and why when they could not
    judge it) and the freeze events of the supply air and of the air after a preheater."""

    faults: AhuFaults | None
    why: str
    freeze: tuple[FreezeEvent, ...]


def _grid_key(grid) -> tuple:
    return (grid.step_s, grid.times[0], len(grid.times), tuple(sorted(grid.points)))


def _stacked(grids: list) -> dict[str, np.ndarray]:
    """Units' grids of one time base and one set of roles as units × samples arrays (a constant as its row)."""
    n = len(grids[0].times)
    return {
        role: np.stack([np.broadcast_to(np.asarray(g.points[role], dtype=np.float64), (n,)) for g in grids])
        for role in grids[0].points
    }


def rules_judge(trends: list[UnitTrends]) -> list[RulesDay]:
    """Each unit's day judged by FC#1–#15 (``engineering.faults.evaluate_ahus``) and for freeze events
    (``freeze_events_batch``), in order. Each unit's points are put on its own grid (``resample``: its step the
    median logging interval of its points); units whose grids share the time base and the points judged are
    judged in one vectorised pass, as each would be alone (a pass refused falls back to one unit at a time, so
    a refusal names the unit's own problem)."""
    steps = [_step_s(t) for t in trends]
    faults: list[AhuFaults | None] = [None] * len(trends)
    why = [""] * len(trends)
    groups: dict[tuple, list[tuple[int, object]]] = {}
    for i, (t, step) in enumerate(zip(trends, steps, strict=True)):
        series, why[i] = _fault_series(t, step)
        if series is None:
            continue
        try:
            grid = resample(
                series=series, step_s=step, start=(t.start - LEAD).timestamp(), end=t.end.timestamp() - step
            )
        except EngineeringInputError as exc:
            why[i] = f"not judged: {exc}"
            continue
        groups.setdefault(_grid_key(grid), []).append((i, grid))
    for members in groups.values():
        grids = [g for _i, g in members]
        try:
            judged = evaluate_ahus(times=grids[0].times, points=_stacked(grids), thresholds=G36_DEFAULTS)
        except EngineeringInputError:
            judged = []
            for i, g in members:
                try:
                    judged.append(evaluate_ahu(times=g.times, points=g.points, thresholds=G36_DEFAULTS))
                except EngineeringInputError as exc:
                    judged.append(None)
                    why[i] = f"not judged: {exc}"
        for (i, _g), result in zip(members, judged, strict=True):
            faults[i] = result
    freeze = _freeze_judge(trends, steps)
    return [RulesDay(faults=f, why=w, freeze=e) for f, w, e in zip(faults, why, freeze, strict=True)]


def _freeze_judge(trends: list[UnitTrends], steps: list[float]) -> list[tuple[FreezeEvent, ...]]:
    """Freeze events of each unit's supply air and air after a preheater, over the day (not its lead); the air of
    units of one time base judged at once."""
    events: list[list[FreezeEvent]] = [[] for _ in trends]
    groups: dict[tuple, list[tuple[int, object]]] = {}
    for i, (t, step) in enumerate(zip(trends, steps, strict=True)):
        for role in ("sat", "preheat_leaving"):
            s = t.of(role)
            if s is None or s.seconds.size == 0:
                continue
            try:
                grid = resample(
                    series={"sat": (s.seconds, s.values)},
                    step_s=step,
                    start=t.start.timestamp(),
                    end=t.end.timestamp() - step,
                )
            except EngineeringInputError:
                continue
            groups.setdefault(_grid_key(grid), []).append((i, grid))
    for members in groups.values():
        grids = [g for _i, g in members]
        try:
            found = freeze_events_batch(times=grids[0].times, temperature_c=_stacked(grids)["sat"])
        except EngineeringInputError:
            found = []
            for _i, g in members:
                try:
                    found.append(freeze_events(times=g.times, temperature_c=g.points["sat"]))
                except EngineeringInputError:
                    found.append(())
        for (i, _g), unit_events in zip(members, found, strict=True):
            events[i] += unit_events
    return [tuple(sorted(e, key=lambda e: (float(e.start), e.below_c))) for e in events]


# ---------------------------------------------------------------------------
# Keeping faults
# ---------------------------------------------------------------------------


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


def _seen_fault(r: FaultResult, day: dt.date, start: dt.datetime, end: dt.datetime) -> Seen | None:
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


def _stage_of(w: dict) -> FreezeStage | None:
    """A freeze window's stage as the rule defines it (windows kept before they carried ``for_s`` name the
    stage and its temperature only)."""
    if w.get("stage") is None or w.get("below_c") is None:
        return None
    if w.get("for_s") is not None:
        return FreezeStage(str(w["stage"]), float(w["below_c"]), float(w["for_s"]))
    return next((st for st in G36_FREEZE_STAGES if st.name == w["stage"] and st.below_c == w["below_c"]), None)


def freeze_reason(windows: list[dict], system: str = "si") -> str:
    """What a freeze fault says for its latest day, in ``system``'s units (``engineering.formatting``): the lowest
    air, the stages reached (``engineering.faults.freeze.stage_words``, the words the chart's lines use) and
    what follows. Kept SI in ``Fault.reason``; pages render it again for their reader."""
    days = [w["day"] for w in windows if w.get("day")]
    latest = [w for w in windows if w.get("day") == max(days)] if days else list(windows)
    lows = [float(w["lowest_c"]) for w in latest if w.get("lowest_c") is not None]
    stages = sorted(
        {st for w in latest if (st := _stage_of(w)) is not None}, key=lambda st: (st.name, -st.below_c, st.for_s)
    )
    said = [stage_words(st, fmt.quantity_text(st.below_c, quantity="temperature", system=system)) for st in stages]
    low = f" the air fell to {fmt.quantity_text(min(lows), quantity='temperature', system=system)}" if lows else ""
    on = f" on {dt.date.fromisoformat(str(max(days))):%-d %b %Y}" if days else ""  # the pages' date style
    return (
        f"{FREEZE_TITLE}:{low}{on}, reaching "
        + "; ".join(said)
        + ". The unit stays not ready for freeze protection until its freeze-protection test passes again"
        " — found in the building-automation trends"
    )


def fault_reason(fault: Fault, system: str) -> str:
    """A fault's text for a reader, in their units: a freeze fault's from its windows (``freeze_reason``); a
    rule's kept text with its consequence said again from the kept values
    (``engineering.faults.consequences.consequence_text``)."""
    if fault.code == Fault.FREEZE and fault.windows:
        return freeze_reason(fault.windows, system)
    summary = str((fault.consequence or {}).get("summary") or "")
    if summary and summary in fault.reason:
        return fault.reason.replace(summary, consequence_text(fault.code, fault.consequence, system))
    return fault.reason


def _seen_freeze(events: tuple[FreezeEvent, ...], day: dt.date) -> Seen | None:
    if not events:
        return None
    windows = [
        _window_json(day, e, stage=e.stage, below_c=e.below_c, for_s=e.for_s, lowest_c=e.lowest_c) for e in events
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
        freeze_reason(windows),
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


def _keep(*, ahu: AHU, day: dt.date, seen: Seen, open_faults: list[Fault], by) -> tuple[Fault, bool]:
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


def _close_absent(
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
# Services
# ---------------------------------------------------------------------------


def unit_points(ahu: AHU, points: list[Point] | None = None) -> list[Point]:
    """The unit's mapped points (read when not given), each part's unit the one already read (its site's zone and
    organisation) for every part's reader."""
    points = list(points if points is not None else Point.objects.filter(ahu=ahu).select_related("component"))
    for p in points:
        if p.component is not None and p.component.ahu_id == ahu.pk:
            p.component.ahu = ahu
    return points


def unit_day_trends(*, ahu: AHU, points: list[Point], reads: SiteDayReads) -> UnitTrends:
    """The unit's day (with its lead) from what ``site_day_reads`` read for its site."""
    return unit_trends(ahu=ahu, start=reads.start, end=reads.end, lead=LEAD, points=points, samples=reads.samples)


@transaction.atomic
def unit_day_judge(
    *,
    ahu: AHU,
    day: dt.date,
    points: list[Point] | None = None,
    reads: SiteDayReads | None = None,
    forecast_later: list | None = None,
    trends: UnitTrends | None = None,
    rules: RulesDay | None = None,
    by=None,
) -> UnitDay:
    """Judge one unit's site-local ``day`` of trends: feeds, faults, freeze events; idempotent. ``reads``: what
    ``site_day_reads`` read for the unit's site that day, in the caller's transaction (read here when None).
    ``forecast_later``: where to leave the filter days whose forecast words the caller adds for the whole site
    (``feeds.filter_feed``); worded here when None. ``trends`` and ``rules``: the unit's day as
    ``unit_day_trends`` gives it and what ``rules_judge`` found in it, when the caller judged many units' days at
    once (both from ``reads``); else made here."""
    from accounts.changes import organisation_changed

    if trends is None:
        points = unit_points(ahu, points)
        if reads is None:
            reads = site_day_reads(units=[ahu], points_of={ahu.pk: points}, day=day)
        trends = unit_day_trends(ahu=ahu, points=points, reads=reads)
    elif reads is None:
        raise ValueError("unit_day_judge(trends=…) needs the reads the trends were made from")
    if rules is None:
        rules = rules_judge([trends])[0]
    start, end = reads.start, reads.end
    out = UnitDay(ahu=ahu, day=day)
    fan_point, _, _ = fan_of(trends)
    meter = reads.meters.get(fan_point.component.pk) if fan_point is not None else None
    out.run_hours = run_hours_feed(trends=trends, by=by, meter=meter, unit_locked=True)
    if out.run_hours is not None and out.run_hours.note and out.run_hours.reading is None:
        out.notes.append(f"run-hours: {out.run_hours.note}")
    hours = out.run_hours.reading.hours if out.run_hours is not None and out.run_hours.reading is not None else None
    out.filters = filter_feed(
        trends=trends,
        day=day,
        meter_hours=hours,
        open_findings=reads.filter_findings,
        forecast_later=forecast_later,
        by=by,
    )
    out.faults, out.freeze = rules.faults, rules.freeze
    if rules.why:
        out.notes.append(rules.why)
    seen: list[Seen] = []
    judged: set[str] = set()
    if out.faults is not None:
        for code, r in out.faults.results.items():
            if r.judged and r.applicable_s > 0:
                judged.add(code)
            found = _seen_fault(r, day, start, end) if r.present else None
            if found is not None:
                seen.append(found)
    supply = trends.of("sat")
    if supply is not None and supply.seconds.size:
        judged.add(Fault.FREEZE)
    freeze = _seen_freeze(out.freeze, day)
    if freeze is not None:
        seen.append(freeze)
    open_faults = reads.open_faults.get(ahu.pk, [])
    for f in open_faults:
        f.ahu = ahu
    for s in seen:
        fault, new = _keep(ahu=ahu, day=day, seen=s, open_faults=open_faults, by=by)
        (out.opened if new else out.updated).append(fault)
    out.closed = _close_absent(
        day=day, end=end, judged=judged, present={s.code for s in seen}, open_faults=open_faults, by=by
    )
    if seen or out.closed:
        organisation_changed(organisation_id=ahu.building.site.organisation_id)
    return out


def trends_judge(*, site: Site, start: dt.date, end: dt.date, by=None) -> JudgeResult:
    """Judge every unit of ``site`` with mapped points over the site-local days ``start``–``end``, day by day in
    order (so run-hour readings follow each other). Each site-day is one transaction and each unit's day a
    savepoint in it: a unit whose day is refused is rolled back alone."""
    if end < start:
        raise ValidationError(
            {"end": [f"End day {end.isoformat()} is before start day {start.isoformat()}; allowed: on or after it"]}
        )
    result = JudgeResult()
    units = list(
        AHU.objects.filter(building__site=site, points__isnull=False)
        .exclude(status=AHU.Status.RETIRED)
        .select_related("building__site__organisation")
        .distinct()
        .order_by("pk")
    )
    points_of: dict[int, list[Point]] = {}
    for p in Point.objects.filter(ahu__in=units).select_related("component"):
        points_of.setdefault(p.ahu_id, []).append(p)
    for ahu in units:
        points_of[ahu.pk] = unit_points(ahu, points_of.get(ahu.pk, []))
    day = start
    while day <= end:
        # One transaction a site-day, each unit's day a savepoint in it; the organisation's answers move once.
        with transaction.atomic(), changes_deferred():
            reads = site_day_reads(units=units, points_of=points_of, day=day) if units else None
            # Every unit's day judged by the rules first (no writes; units alike judged at once), then kept unit by
            # unit.
            day_trends = [unit_day_trends(ahu=ahu, points=points_of.get(ahu.pk, []), reads=reads) for ahu in units]
            found = rules_judge(day_trends)
            to_forecast: list = []  # the stored filter days of units judged, worded for the site at the end
            for ahu, trends, rules in zip(units, day_trends, found, strict=True):
                mine: list = []
                try:
                    judged = unit_day_judge(
                        ahu=ahu,
                        day=day,
                        points=trends.points,
                        reads=reads,
                        forecast_later=mine,
                        trends=trends,
                        rules=rules,
                        by=by,
                    )
                except (ValidationError, EngineeringInputError) as exc:
                    # One unit's refused write (its day rolled back) never stops the site's other units.
                    words = " ".join(exc.messages) if isinstance(exc, ValidationError) else str(exc)
                    result.days.append(UnitDay(ahu=ahu, day=day, notes=[f"not judged: {words}"]))
                    continue
                result.days.append(judged)
                to_forecast += mine
            filter_days_forecast(days=to_forecast, day=day)
        day += dt.timedelta(days=1)
    return result


def trends_judge_yesterday(*, site: Site, now: dt.datetime | None = None) -> JudgeResult:
    """The nightly run: the site's local yesterday."""
    yesterday = today_for(site, now=now) - dt.timedelta(days=1)
    return trends_judge(site=site, start=yesterday, end=yesterday)


def sites_with_points() -> list[int]:
    return list(Site.objects.filter(buildings__ahus__points__isnull=False).distinct().values_list("pk", flat=True))


# ---------------------------------------------------------------------------
# Followers: completed corrective work closes its faults; freeze events reach freeze readiness
# ---------------------------------------------------------------------------


def work_order_moved(sender, *, work_order, before: str, by, **kwargs) -> None:
    """``scheduling.signals.work_order_moved`` receiver: completed corrective work closes the faults it answers,
    held by the fault or by its finding, and their findings (found again the next night, a fault opens anew)."""
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
    for fault in Fault.objects.filter(pk__in=ids).select_related("finding") if ids else []:
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
