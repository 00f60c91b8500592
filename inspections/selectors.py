"""Reads of inspections. Tenancy always goes through inventory.selectors."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

from django.core.exceptions import PermissionDenied, ValidationError
from django.db.models import Q, QuerySet
from django.http import Http404

from accounts.models import User
from accounts.selectors import FIELD_ROLES
from engineering import formatting as fmt
from engineering.controls import Verdict
from engineering.errors import EngineeringInputError
from engineering.filters import FilterPoint, corrected_pressure_drop
from engineering.units import SYSTEMS, UnitSystem
from inventory.models import AHU, Component
from inventory.selectors import sites_managed_by, sites_visible_to
from scheduling.models import WorkOrder
from scheduling.selectors import work_order_for
from scheduling.selectors import work_orders_visible_to as scheduling_work_orders_visible_to

from . import checklists
from .cautions import COMPONENT_CAUTIONS, GENERAL_CAUTIONS, LOCKOUT, cautions_once
from .limits import dynamic_limits
from .models import ChecklistItem, ChecklistTemplate, Evaluation, Finding, Inspection, Photo, Reading
from .services.library import templates_current

# A corrective work order without tasks gets the checklist that fixes its condition.
CONDITION_TEMPLATES = {
    "filter_loaded": "filter_replace",
    "sensor_drift": "sensor_calibration",
    "supply_temp_off": "controls_check",
    "damper_position": "damper_actuator",
    "fan_not_proven": "fan_proving",
    "freeze_protection_failed": "preheater_freeze",
}
SUBMITTING_ROLES = FIELD_ROLES


def work_orders_visible_to(*, user: User) -> QuerySet[WorkOrder]:
    """The one visibility rule of work orders (``scheduling.selectors.work_orders_visible_to``)."""
    return scheduling_work_orders_visible_to(user=user)


def was_assigned_to(*, user: User, work_order: WorkOrder) -> bool:
    """Whether the work order is, or ever was, assigned to the person: the current assignee, or named as the
    one it was assigned to or taken from in its audit trail (``work_order_assign`` records both)."""
    if work_order.assignee_id == user.pk:
        return True
    from accounts.models import AuditEvent

    events = AuditEvent.objects.filter(
        object_type=WorkOrder._meta.label_lower, object_id=str(work_order.pk), action="assign"
    ).values_list("changes", flat=True)
    return any(isinstance(c, dict) and user.pk in (c.get("from"), c.get("to")) for c in events)


def work_order_for_sync(*, user: User, public_id) -> WorkOrder | None:
    """The work order a form or photo names, if the sender may add to it; else None (an unknown work order).

    The read rule first (``scheduling.selectors.work_order_for``): what the person sees, they may send for.
    One exception, wider on purpose: a work order that was assigned to this person and since reassigned or
    cancelled no longer grants them its site, but their finished form must still be stored (and flagged),
    never dropped. Any other work order of the organisation (another site's, never theirs) is unknown to
    them, with the same answer as one that does not exist. Only people who do the work (not property
    managers) send, see :func:`work_order_for_field_work`.
    """
    orgs = user.memberships.filter(role__in=SUBMITTING_ROLES).values("organisation_id")
    try:
        wo = (
            WorkOrder.objects.filter(public_id=public_id, organisation_id__in=orgs)
            .select_related("ahu__building__site", "assignee")
            .first()
        )
    except (ValueError, TypeError, ValidationError):
        return None  # not a UUID: the same answer as an unknown one
    if wo is None:
        return None
    try:
        work_order_for(user=user, public_id=wo.public_id)
    except Http404:
        if not was_assigned_to(user=user, work_order=wo):
            return None
    return wo


def work_orders_for_sync(*, user: User, public_ids) -> dict:
    """``work_order_for_sync`` for every work order of a batch at once: {public id: work order} of those the
    sender may add to (the same rule, word for word); the others are left out, as unknown ones.

    A fixed number of queries whatever the batch's size: the candidates of the sender's organisations with
    their unit, site, assignee, tasks and the unit's components, then which of them the sender sees. Only a
    work order the sender does not see asks its own question (was it ever theirs)."""
    ids = set(public_ids)
    if not ids:
        return {}
    orgs = user.memberships.filter(role__in=SUBMITTING_ROLES).values("organisation_id")
    rows = list(
        WorkOrder.objects.filter(public_id__in=ids, organisation_id__in=orgs)
        .select_related("ahu__building__site", "assignee")
        .prefetch_related("tasks", "ahu__components")
    )
    if not rows:
        return {}
    seen = set(
        work_orders_visible_to(user=user)
        .prefetch_related(None)
        .filter(pk__in=[wo.pk for wo in rows])
        .values_list("pk", flat=True)
    )
    return {wo.public_id: wo for wo in rows if wo.pk in seen or was_assigned_to(user=user, work_order=wo)}


def does_field_work_anywhere(*, user: User) -> bool:
    """Whether the person sends forms and photos for any organisation (property managers only read)."""
    return getattr(user, "is_authenticated", False) and user.memberships.filter(role__in=FIELD_ROLES).exists()


def submission_allowed(*, user: User, work_order: WorkOrder) -> bool:
    """Whether the person fills forms for the work order's organisation (property managers only read)."""
    return user.memberships.filter(role__in=SUBMITTING_ROLES, organisation_id=work_order.organisation_id).exists()


def amendment_allowed(*, user: User, inspection: Inspection) -> bool:
    """The technician who signed the inspection, or a supervisor of its site, may amend it."""
    if user.pk == inspection.technician_id:
        return True
    return sites_managed_by(user=user).filter(pk=inspection.ahu.building.site_id).exists()


def inspection_status(*, inspection: Inspection) -> str:
    """What a stored form is now: "verified", "flagged" while a flag is unresolved, else "stored".

    The sync answer keeps the status the phone was first given; this is the status today.
    """
    if inspection.verified_at is not None:
        return "verified"
    if inspection.flag_open:
        return "flagged"
    return "stored"


def inspections_visible_to(*, user: User) -> QuerySet[Inspection]:
    """Inspections on the sites the person sees: the rule of their work orders, so a work order, its forms,
    photos and reports are seen together or not at all."""
    return Inspection.objects.filter(ahu__building__site__in=sites_visible_to(user=user)).select_related(
        "ahu__building__site", "work_order", "technician"
    )


def inspection_for(*, user: User, pk, write: bool = False, queryset: QuerySet[Inspection] | None = None) -> Inspection:
    """THE access function of a stored form: ``Http404`` when the person may not see it, and with ``write``
    (verify, resolve a flag) ``PermissionDenied`` unless they supervise its site. Amending has its own rule
    (the signer too): :func:`amendment_allowed`."""
    qs = queryset if queryset is not None else Inspection.objects.all()
    try:
        inspection = qs.filter(pk__in=inspections_visible_to(user=user).values("pk")).filter(pk=pk).first()
    except (ValueError, TypeError, ValidationError):
        inspection = None
    if inspection is None:
        raise Http404("No such inspection that you may see.")
    if write and not sites_managed_by(user=user).filter(pk=inspection.ahu.building.site_id).exists():
        raise PermissionDenied("Only a supervisor or admin of the site's organisation may do this to a signed form.")
    return inspection


def flagged_forms_for(*, user: User) -> QuerySet[Inspection]:
    """Flagged inspections not yet resolved, on the sites the person supervises."""
    return (
        Inspection.objects.filter(ahu__building__site__in=sites_managed_by(user=user), flag_resolved_at__isnull=True)
        .exclude(flags=[])
        .select_related("ahu__building__site", "work_order", "technician")
        .order_by("received_at", "id")
    )


def findings_visible_to(*, user: User) -> QuerySet[Finding]:
    """Findings on the units of the sites the person sees (the same sites as their work orders)."""
    return Finding.objects.filter(ahu__building__site__in=sites_visible_to(user=user)).select_related(
        "ahu__building__site", "component", "corrective_work_order", "inspection"
    )


def finding_for(*, user: User, pk, write: bool = False) -> Finding:
    """THE access function of a finding: ``Http404`` when not visible; with ``write``, ``PermissionDenied``
    unless the person supervises its site."""
    try:
        finding = findings_visible_to(user=user).filter(pk=pk).first()
    except (ValueError, TypeError, ValidationError):
        finding = None
    if finding is None:
        raise Http404("No such finding that you may see.")
    if write and not sites_managed_by(user=user).filter(pk=finding.ahu.building.site_id).exists():
        raise PermissionDenied("Only a supervisor or admin of the site's organisation may change a finding.")
    return finding


def photo_visible_to(*, user: User, client_uuid) -> Photo | None:
    """The photo if the person sees its work order, else None (see :func:`photo_for`)."""
    try:
        return Photo.objects.filter(
            client_uuid=client_uuid, work_order__ahu__building__site__in=sites_visible_to(user=user)
        ).first()
    except (ValueError, ValidationError):
        return None


def photo_for(*, user: User, client_uuid) -> Photo:
    """THE access function of a photo: visible exactly when its work order is; ``Http404`` otherwise."""
    photo = photo_visible_to(user=user, client_uuid=client_uuid)
    if photo is None:
        raise Http404("No such photo that you may see.")
    return photo


def work_order_for_field_work(*, user: User, public_id) -> WorkOrder:
    """The work order a photo or form is sent for (:func:`work_order_for_sync`): ``Http404`` as
    ``scheduling.selectors.work_order_for`` answers an unknown one when the sender may not add to it and
    cannot see it; ``PermissionDenied`` when they see it but only read (a property manager)."""
    wo = work_order_for_sync(user=user, public_id=public_id)
    if wo is not None:
        return wo
    work_order_for(user=user, public_id=public_id)  # Http404 when not visible either
    raise PermissionDenied("Property managers read work orders; only technicians, supervisors and admins add to them.")


# ---------------------------------------------------------------------------
# The checklist of one work order
# ---------------------------------------------------------------------------


@dataclass
class Slot:
    """One item as it is asked on one unit: once, or once per matching component."""

    item: ChecklistItem
    template: ChecklistTemplate
    component: Component | None
    limits: dict[str, float | None] = field(default_factory=dict)  # SI

    @property
    def key(self) -> tuple[str, int | None]:
        return (self.item.api_key, self.component.pk if self.component else None)


@dataclass
class Checklist:
    work_order: WorkOrder
    templates: list[ChecklistTemplate]
    slots: list[Slot]
    _by_key: dict | None = field(default=None, repr=False)

    def by_key(self) -> dict[tuple[str, str | None], Slot]:
        """Slots by (api key, component label code or None), as the phone names them."""
        if self._by_key is None:
            self._by_key = {(s.item.api_key, s.component.label_code if s.component else None): s for s in self.slots}
        return self._by_key


def _allowed(value, wanted) -> bool:
    """A filter value is one allowed value, or a list of them."""
    return value in wanted if isinstance(wanted, list) else value == wanted


def _unit_matches(ahu: AHU, item: ChecklistItem) -> bool:
    """Whether the unit can have the item's inputs (``unit_where`` of inspections.checklist_items.item)."""
    return all(_allowed(getattr(ahu, k, None), v) for k, v in (item.unit_filter or {}).items())


def _matches(component: Component, item: ChecklistItem) -> bool:
    return component.kind == item.component_kind and all(
        _allowed((component.specs or {}).get(k), v) for k, v in (item.component_filter or {}).items()
    )


def _template_codes(work_order: WorkOrder) -> dict[str, set[int] | None]:
    """{template code: component ids the tasks name, or None for every matching component}."""
    codes: dict[str, set[int] | None] = {}
    for task in work_order.tasks.all():
        if task.task_code not in checklists.TASK_CODES:
            continue
        if task.component_id is None:
            codes[task.task_code] = None
        elif codes.get(task.task_code, set()) is not None:
            codes.setdefault(task.task_code, set()).add(task.component_id)
    if not codes and work_order.condition_code in CONDITION_TEMPLATES:
        codes[CONDITION_TEMPLATES[work_order.condition_code]] = (
            {work_order.component_id} if work_order.component_id else None
        )
    return codes


def item_limits(*, item: ChecklistItem, ahu: AHU, component: Component | None) -> dict[str, float | None]:
    limits = {
        name: getattr(item, name)
        for name in (
            "physical_min",
            "physical_max",
            "plausible_min",
            "plausible_max",
            "ok_min",
            "ok_max",
            "watch_min",
            "watch_max",
        )
    }
    if item.limits_from:
        limits.update(dynamic_limits(rule=item.limits_from, ahu=ahu, component=component))
    return limits


def checklist_build(*, work_order: WorkOrder, templates: dict[str, ChecklistTemplate] | None = None) -> Checklist:
    """Templates and items of a work order, items repeated per matching component, limits resolved.

    ``templates``: the current templates as already read (``templates_current()``, e.g. once for a batch of
    forms); read here otherwise. The unit's components are read with ``ahu.components.all()`` (so a prefetch
    of them is used)."""
    codes = _template_codes(work_order)
    if templates is None:
        templates = templates_current(codes=["visit", *codes])
    # A part retired before the work was made is not asked about; one retired later keeps its items, so a
    # visit (and its record) reads as it was when it was done.
    made = work_order.created_at.date()
    components = sorted(
        (c for c in work_order.ahu.components.all() if c.retired_on is None or c.retired_on >= made),
        key=lambda c: (c.position, c.pk),
    )
    ordered = [templates["visit"]] + [templates[c] for c in checklists.TASK_CODES if c in codes and c in templates]
    used, slots = [], []
    for template in ordered:
        wanted = codes.get(template.code)
        t_slots = []
        for item in template.items.all():
            if not _unit_matches(work_order.ahu, item):
                continue
            if not item.component_kind:
                t_slots.append(Slot(item, template, None, item_limits(item=item, ahu=work_order.ahu, component=None)))
                continue
            for comp in components:
                if _matches(comp, item) and (wanted is None or comp.pk in wanted):
                    t_slots.append(
                        Slot(item, template, comp, item_limits(item=item, ahu=work_order.ahu, component=comp))
                    )
        if t_slots:
            used.append(template)
            slots.extend(t_slots)
    return Checklist(work_order=work_order, templates=used, slots=slots)


def checklist_cautions(*, checklist: Checklist) -> list[str]:
    """The safety box of a work order's checklist: each template's cautions and the general ones, each once.

    The phone, the checklist page and the inspection PDF show this list (``inspections.cautions.cautions_once``).
    """
    return cautions_once(lists=[*(t.cautions for t in checklist.templates), GENERAL_CAUTIONS])


def repair_cautions(*, component_kind: str | None, condition_code: str = "") -> list[str]:
    """The safety box where repair work is proposed, approved or looked into (proposed corrective work, a fault,
    a finding), before its checklist is on a phone: the cautions of the part's kind
    (``inspections.cautions.COMPONENT_CAUTIONS``; the whole unit: the general ones), then those of the checklist the
    condition raises, each once, the local-codes-first line last (``cautions_once``)."""
    by_kind = COMPONENT_CAUTIONS.get(component_kind, [LOCKOUT]) if component_kind else GENERAL_CAUTIONS
    code = CONDITION_TEMPLATES.get(condition_code or "")
    raised: list[str] = (
        next((t["cautions"] for t in checklists.all_templates() if t["code"] == code), []) if code else []
    )
    return cautions_once(lists=[by_kind, raised])


def work_order_cautions(*, work_order: WorkOrder) -> list[str]:
    """The cautions of ``work_order``'s checklist (checklist_cautions of checklist_build)."""
    return checklist_cautions(checklist=checklist_build(work_order=work_order))


def _band(limits: dict, name: str, quantity: str, system: str | None) -> dict:
    lo, hi = limits.get(f"{name}_min"), limits.get(f"{name}_max")
    if system is not None:
        lo, hi = (None if x is None else fmt.display_value(x, quantity=quantity, system=system) for x in (lo, hi))
    return {"min": lo, "max": hi}


def _evaluation_context(checklist: Checklist) -> dict:
    from django.utils import timezone

    from .phone import checklist_context

    return checklist_context(checklist=checklist, as_of=timezone.now())


def checklist_for(*, work_order: WorkOrder, user: User) -> dict:
    """The checklist document the phone caches (shape in inspections/SYNC.md)."""
    system = user.unit_system
    checklist = checklist_build(work_order=work_order)
    ahu = work_order.ahu
    by_template: dict[int, list[dict]] = {}
    for slot in checklist.slots:
        it = slot.item
        entry = {
            "key": it.api_key,
            "kind": it.kind,
            "label": it.label,
            "help": it.help,
            "component": (
                {"label_code": slot.component.label_code, "name": slot.component.name, "kind": slot.component.kind}
                if slot.component
                else None
            ),
            "quantity": it.quantity or None,
            "unit": fmt.unit_text(quantity=it.quantity, system=system) if it.kind == "number" else None,
            "unit_si": fmt.storage_text(quantity=it.quantity) if it.kind == "number" else None,
            "decimals": it.decimals,
            "choices": it.choices,
            "required": it.required,
            "photo_required_when_not_ok": it.photo_required_when_not_ok,
            "note_required_when_not_ok": it.note_required_when_not_ok,
            "limits": None,
            "limits_source": it.limits_source,
            "judged_on_server": it.judged_on_server,
        }
        if it.kind == "number":
            entry["limits"] = {
                scale: {
                    name: _band(slot.limits, name, it.quantity, None if scale == "si" else system)
                    for name in ("physical", "plausible", "ok", "watch")
                }
                for scale in ("si", "display")
            }
        by_template.setdefault(slot.template.pk, []).append(entry)
    cautions = checklist_cautions(checklist=checklist)
    assignee = work_order.assignee
    return {
        "work_order": {
            "public_id": str(work_order.public_id),
            "version": work_order.version,
            "title": work_order.title,
            "kind": work_order.kind,
            "state": work_order.state,
            "priority": work_order.priority,
            "due_date": work_order.due_date.isoformat(),
            "assignee": {"id": assignee.pk, "name": str(assignee)} if assignee else None,
            "unit": {
                "tag": ahu.tag,
                "label_code": ahu.label_code,
                "location": ahu.location,
                "area_served": ahu.area_served,
                "building": ahu.building.name,
                "site": {"code": ahu.building.site.code, "name": ahu.building.site.name},
            },
            "tasks": [{"code": t.code, "title": t.title} for t in checklist.templates if t.code != "visit"],
        },
        "unit_system": system,
        # What the phone needs to judge the readings offline as the server will (inspections/phone.py).
        "evaluation": _evaluation_context(checklist),
        "cautions": cautions,
        "templates": [
            {
                "code": t.code,
                "version": t.version,
                "title": t.title,
                "cautions": t.cautions,
                "items": by_template.get(t.pk, []),
            }
            for t in checklist.templates
        ],
    }


# Where a point of a filter series came from; readers label it (a technician's reading, a trend day).
FILTER_READING = "reading"
FILTER_TREND = "bas_trend"
FILTER_SOURCE_LABELS = {FILTER_READING: "technician reading", FILTER_TREND: "building-automation trend"}


@dataclass(frozen=True)
class FilterSeriesPoint:
    """One pressure-drop value of a filter bank, with the same value corrected to design airflow.

    ``source`` says where it came from: ``FILTER_READING`` (a technician's reading on a visit's form) or a
    registered source (``FILTER_POINT_SOURCES``; the building-automation trend's day, ``FILTER_TREND``)."""

    at: dt.datetime  # when the visit's form was finished; for a trend day, the site's day's end
    inspection_id: int | None  # None for a point that no visit read
    dp_pa: float  # as read
    airflow_m3s: float  # airflow at the visit, by inspections.evaluation.form.supply_airflow
    corrected_dp_pa: float  # at the bank's design airflow, by engineering.filters.corrected_pressure_drop
    run_hours: float | None  # the unit's run-hour meter at the visit; for a trend day, the trend-fed meter's
    after_change: bool  # read just after fitting new filters
    source: str = FILTER_READING

    @property
    def source_label(self) -> str:
        return FILTER_SOURCE_LABELS.get(self.source, self.source)


def filter_sources_words(*, points) -> str:
    """Where a chart's points came from, for its caption: '3 technician readings and 28 building-automation
    trend days' ('' without points)."""
    readings = sum(1 for p in points if p.source == FILTER_READING)
    trend = sum(1 for p in points if p.source == FILTER_TREND)
    parts = []
    if readings:
        parts.append(f"{readings} technician reading{'' if readings == 1 else 's'}")
    if trend:
        parts.append(f"{trend} building-automation trend day{'' if trend == 1 else 's'}")
    return " and ".join(parts)


# Sources of filter-series points from apps above this one (the building-automation trends register theirs in
# their AppConfig.ready, as for FREEZE_EVENT_SOURCES): ``source(components=[bank, ...], before=datetime | None)``
# returns {bank id: [FilterSeriesPoint, ...]} in a fixed number of queries, points before ``before`` only.
FILTER_POINT_SOURCES: list = []


def filter_point_source_register(source) -> None:
    if source not in FILTER_POINT_SOURCES:
        FILTER_POINT_SOURCES.append(source)


@dataclass(frozen=True)
class FilterLife:
    """The readings of one set of filters, from the change that fitted it (None: fitted before the records)."""

    changed_at: dt.datetime | None
    points: tuple[FilterSeriesPoint, ...]

    def forecast_points(self) -> list[FilterPoint]:
        """The points with run-hours, as engineering.filters.filter_forecast takes them, on one meter's scale.

        A technician's reading carries the unit's typed meter; a trend day the trend-fed fan meter, which counts
        the same running from another zero. Where both are in this set of filters, the trend days are shifted by
        the two meters' difference at the reading closest in time to a trend day (at most a day apart); with no
        such pair the two cannot be put on one line, and the source with more points is used alone."""
        with_hours = [p for p in self.points if p.run_hours is not None]
        typed = [p for p in with_hours if p.source == FILTER_READING]
        other = [p for p in with_hours if p.source != FILTER_READING]
        if typed and other:
            pairs = [(abs((t.at - r.at).total_seconds()), r, t) for r in typed for t in other]
            gap, r, t = min(pairs, key=lambda x: x[0])
            if gap <= 86400:
                offset = r.run_hours - t.run_hours
                with_hours = sorted(
                    typed + [_shifted(p, offset) for p in other], key=lambda p: (p.at, p.source == FILTER_READING)
                )
            else:
                with_hours = typed if len(typed) >= len(other) else other
        return [
            FilterPoint(run_hours=p.run_hours, dp_pa=p.dp_pa, airflow_m3s=p.airflow_m3s, when=p.at.date())
            for p in with_hours
            if p.run_hours is not None and p.run_hours >= 0
        ]


def _shifted(p: FilterSeriesPoint, offset: float) -> FilterSeriesPoint:
    from dataclasses import replace

    return replace(p, run_hours=None if p.run_hours is None else p.run_hours + offset)


@dataclass(frozen=True)
class FilterSeries:
    """A filter bank's pressure drop at design airflow, restarting at each filter change, oldest first."""

    component: Component
    design_airflow_m3s: float
    lives: tuple[FilterLife, ...]

    @property
    def current(self) -> FilterLife:
        """The filters fitted now (the last life); empty before any reading."""
        return self.lives[-1] if self.lives else FilterLife(changed_at=None, points=())

    @property
    def points(self) -> list[FilterSeriesPoint]:
        return [p for life in self.lives for p in life.points]


def filter_design_airflow_m3s(*, component: Component, ahu: AHU | None = None) -> float:
    """The airflow a bank's pressure drop is corrected to: its own design airflow, else the unit's."""
    return (component.specs or {}).get("design_airflow_m3s") or (ahu or component.ahu).design_supply_airflow_m3s


def _series_point(
    v: dict, dp: float, q: float, design: float, hours: float | None, *, after_change: bool = False
) -> FilterSeriesPoint | None:
    try:
        corrected = corrected_pressure_drop(dp_pa=dp, airflow_m3s=q, design_airflow_m3s=design)
    except EngineeringInputError:
        return None  # too far from design airflow to correct: no point on any chart or forecast
    return FilterSeriesPoint(
        at=v["at"],
        inspection_id=v["inspection_id"],
        dp_pa=dp,
        airflow_m3s=q,
        corrected_dp_pa=corrected,
        run_hours=hours,
        after_change=after_change,
    )


def filter_series_for(*, components: list[Component], before: dt.datetime | None = None) -> dict[int, FilterSeries]:
    """``filter_series`` of several banks at once, {component id: series}, in a fixed number of queries."""
    from .evaluation.form import Form, Value, supply_airflow

    banks = [c for c in components if c.kind == "filter_bank"]
    rows = (
        Reading.objects.filter(component__in=banks)
        .filter(
            Q(item__template__code="filter_check", item__key="dp", value_si__isnull=False)
            | Q(item__template__code="filter_replace", item__key="dp_after", value_si__isnull=False)
            | Q(item__template__code="filter_replace", item__key="replaced", value_text="ok")
        )
        .values_list(
            "component_id", "item__template__code", "item__key", "value_si", "inspection_id", "inspection__finished_at"
        )
        .order_by("inspection__finished_at", "inspection_id")
    )
    if before is not None:
        rows = rows.filter(inspection__finished_at__lt=before)
    # {bank id: {inspection id: {"at", "inspection_id", "<template>.<item>": value}}}, visits in time order.
    by_visit: dict[int, dict[int, dict]] = {}
    for comp_id, code, key, value, insp_id, at in rows:
        v = by_visit.setdefault(comp_id, {}).setdefault(insp_id, {"at": at, "inspection_id": insp_id})
        v[f"{code}.{key}"] = value if value is not None else True
    values = visit_values(inspection_ids=sorted({i for visits in by_visit.values() for i in visits}))
    # Units already loaded with their banks (select_related) cost no query.
    ahus = {c.ahu_id: c.ahu for c in banks if Component.ahu.is_cached(c)}
    if missing := {c.ahu_id for c in banks} - set(ahus):
        ahus |= {a.pk: a for a in AHU.objects.filter(pk__in=missing)}
    # Fans matter only where a visit gave the fan speed and no airflow (the first fan law then gives the airflow).
    fans: dict[int, list[Component]] = {}
    if any("supply_fan_speed" in v and not v.get("supply_airflow") for v in values.values()):
        for fan in Component.objects.filter(ahu_id__in=list(ahus), kind="fan").order_by("position", "pk"):
            fans.setdefault(fan.ahu_id, []).append(fan)
    airflow: dict[int, float] = {}

    def airflow_at(bank: Component, insp_id: int) -> float:
        if insp_id not in airflow:
            form = Form(
                ahu=ahus[bank.ahu_id],
                components=fans.get(bank.ahu_id, []),
                values={(f"visit.{k}", None): Value(number=x) for k, x in values.get(insp_id, {}).items()},
                slots=[],
                finished_at=dt.datetime.min,
            )
            airflow[insp_id] = supply_airflow(form)[0]
        return airflow[insp_id]

    extra: dict[int, list[FilterSeriesPoint]] = {}
    for source in FILTER_POINT_SOURCES:
        for bank_id, found in source(components=banks, before=before).items():
            extra.setdefault(bank_id, []).extend(found)
    out = {}
    for bank in banks:
        design = filter_design_airflow_m3s(component=bank, ahu=ahus[bank.ahu_id])
        lives: list[FilterLife] = []
        changed_at, pts = None, []

        for v in by_visit.get(bank.pk, {}).values():
            q = airflow_at(bank, v["inspection_id"])
            hours = values.get(v["inspection_id"], {}).get("run_hours")
            # The check at a changing visit reads the old filters; the reading after the change starts the new set.
            if "filter_check.dp" in v and (p := _series_point(v, v["filter_check.dp"], q, design, hours)) is not None:
                pts.append(p)
            if v.get("filter_replace.replaced"):
                if pts or changed_at is not None:
                    lives.append(FilterLife(changed_at=changed_at, points=tuple(pts)))
                changed_at, pts = v["at"], []
                after = v.get("filter_replace.dp_after")
                p = None if after is None else _series_point(v, after, q, design, hours, after_change=True)
                if p is not None:
                    pts.append(p)
        if pts or changed_at is not None:
            lives.append(FilterLife(changed_at=changed_at, points=tuple(pts)))
        out[bank.pk] = FilterSeries(
            component=bank, design_airflow_m3s=design, lives=_with_points(lives, extra.get(bank.pk, []))
        )
    return out


def _with_points(lives: list[FilterLife], extra: list[FilterSeriesPoint]) -> tuple[FilterLife, ...]:
    """The registered sources' points put into the set of filters fitted at their time, in time order."""
    if not extra:
        return tuple(lives)
    first = lives[0].changed_at if lives else None
    if not lives or (first is not None and any(p.at < first for p in extra)):
        lives = [FilterLife(changed_at=None, points=()), *lives]  # the filters before the first change recorded
    pts: list[list[FilterSeriesPoint]] = [list(life.points) for life in lives]
    for p in extra:
        # The last set fitted before the point (a change at the same moment fits before it); else the first.
        i = max((j for j, life in enumerate(lives) if life.changed_at is None or life.changed_at <= p.at), default=0)
        pts[i].append(p)
    return tuple(
        FilterLife(changed_at=life.changed_at, points=tuple(sorted(got, key=lambda p: p.at)))
        for life, got in zip(lives, pts, strict=True)
    )


def filter_series(*, component: Component, before: dt.datetime | None = None) -> FilterSeries:
    """A filter bank's pressure drop corrected to design airflow, restarting at each filter change.

    The one series of a bank that the manager's chart, the unit history, the
    evaluation's change forecast and the compliance report all read. Each
    reading (filter check, and the reading just after a change) is corrected
    with ``engineering.filters.corrected_pressure_drop`` to the bank's design
    airflow (its own, else the unit's), from the airflow at that visit as the
    evaluation finds it (measured, else from fan speed, else design). A
    change ("filters replaced" answered ok) starts a new life: the filter
    check of the changing visit belongs to the old filters, the reading
    after the change is the new set's first point. Readings taken too far
    from design airflow to correct are left out. Only forms finished before
    ``before`` count, when given.

    Points from the sources registered in ``FILTER_POINT_SOURCES`` (the
    building-automation trend's filter days) join the set of filters fitted
    at their time; each point says its ``source`` so a reader can label it.
    """
    return filter_series_for(components=[component], before=before)[component.pk]


def visit_values(*, inspection_ids: list[int]) -> dict[int, dict[str, float]]:
    """Run-hours, airflow and fan speed of the given inspections, {inspection id: {key: SI value}}."""
    out: dict[int, dict[str, float]] = {}
    for insp_id, key, value in Reading.objects.filter(
        inspection_id__in=inspection_ids, item__template__code="visit", value_si__isnull=False
    ).values_list("inspection_id", "item__key", "value_si"):
        out.setdefault(insp_id, {})[key] = value
    return out


def reason_for(*, evaluation, unit_system: str) -> str:
    """The reason of an evaluation (or a reading's verdict) in the reader's units ("si" or "us").

    Renders ``reason_parts`` through engineering.formatting (inspections.reasons);
    rows stored before reasons had parts fall back to the stored SI text.
    Accepts an Evaluation, a Reading, or a Finding (its own text, from its latest observation).
    """
    from . import reasons

    if unit_system not in SYSTEMS:
        unit_system = UnitSystem.SI
    if isinstance(evaluation, Finding):
        # The finding's own text (its latest observation); findings stored before it had one: the latest
        # judgement's reason.
        if evaluation.reason_parts:
            return reasons.render(evaluation.reason_parts, unit_system)
        if evaluation.latest_evaluation_id is None and evaluation.evaluation_id is None:
            return evaluation.reason  # a finding of another source with no judgement row: its own text
        evaluation = evaluation.latest_evaluation or evaluation.evaluation
    parts = getattr(evaluation, "reason_parts", None)
    if not parts:
        return evaluation.reason
    return reasons.render(parts, unit_system)


def finding_shape(*, finding: Finding, unit_system: str) -> dict:
    """One finding as every API answer shows it: plain title and text in the reader's units, first and last
    seen, how many visits (or, from the trends, days) saw it, its kind and its corrective work (none for a design
    review); who saw it (``source``, ``source_words``), and for a trend finding the rule and its evidence."""
    wo = finding.corrective_work_order
    evidence = None
    if finding.source != Finding.Source.INSPECTION:
        e = finding.evidence or {}
        evidence = {
            "section": e.get("section") or "",
            "window_start": e.get("start"),
            "window_end": e.get("end"),
            "share": e.get("share"),
            "days": e.get("days") or finding.times_seen,
            "lowest_supply_air_c": e.get("lowest_c"),
        }
    return {
        "id": finding.pk,
        "kind": finding.kind,
        "kind_label": finding.get_kind_display(),
        "severity": finding.severity,
        "state": finding.state,
        "title": finding.title,
        "text": reason_for(evaluation=finding, unit_system=unit_system),
        "first_seen": finding.opened_at.isoformat(),
        "last_seen": (finding.last_seen_at or finding.opened_at).isoformat(),
        "times_seen": finding.times_seen,
        "corrective_work_order": str(wo.public_id) if wo is not None else None,
        "source": finding.source,
        "source_words": finding.source_words,
        "rule": finding.rule,
        "evidence": evidence,
    }


# Plain names of the checks over several readings, for people (never the check's code).
CHECK_LABELS = {
    "filter_loading": "Filter loading at design airflow",
    "filter_after_change": "Filter pressure drop after change",
    "oa_fraction_temperature": "Outdoor-air fraction by temperatures",
    "oa_fraction_co2": "Outdoor-air fraction by CO2",
    "coil_balance": "Coil heat balance",
    "supply_temperature": "Supply-air temperature against set point",
    "duct_static": "Duct static pressure against set point",
    "damper_position": "Damper position against command",
    "sensor_drift": "Sensor against reference meter",
    "heat_recovery": "Heat-recovery effectiveness",
}


def item_labels(*, api_keys) -> dict[str, str]:
    """{"<template code>.<key>": the item's label (latest template version)} for the given api keys."""
    wanted = {k.partition(".")[0]: set() for k in api_keys if "." in k}
    for k in api_keys:
        if "." in k:
            wanted[k.partition(".")[0]].add(k.partition(".")[2])
    out: dict[str, str] = {}
    rows = (
        ChecklistItem.objects.filter(template__code__in=list(wanted))
        .order_by("template__code", "key", "template__version")
        .values_list("template__code", "key", "label")
    )
    for code, key, label in rows:  # latest version last, so it wins
        if key in wanted.get(code, ()):
            out[f"{code}.{key}"] = label
    return out


def check_label(*, check: str, item: str, labels: dict[str, str]) -> str:
    """The plain name of a judgement: the check's name, or for a single answer the checklist item's label."""
    if check in CHECK_LABELS:
        return CHECK_LABELS[check]
    return labels.get(item) or "Checklist answer"


def findings_seen_on(*, inspections) -> dict[int, list[Finding]]:
    """{inspection id: the findings its failed judgements observed}, each finding once, oldest first.

    A finding gathers the visits that saw it, so a visit's record lists the finding that was open for each of its
    failures at the time (same unit, part and problem), not only the findings it opened.
    """
    from .services.findings import problem_of

    by_id = {i.pk: i for i in inspections}
    if not by_id:
        return {}
    failed = list(
        Evaluation.objects.filter(inspection_id__in=by_id, verdict=Verdict.FAIL).values_list(
            "inspection_id", "check_name", "item_key", "component_id"
        )
    )
    ahu_ids = {i.ahu_id for i in by_id.values()}
    candidates = list(
        Finding.objects.filter(ahu_id__in=ahu_ids)
        .exclude(close_cause=Finding.CloseCause.MERGED)
        .select_related("component", "corrective_work_order", "evaluation", "latest_evaluation")
        .order_by("opened_at", "pk")
    )
    out: dict[int, list[Finding]] = {pk: [] for pk in by_id}
    for f in candidates:  # the first and the latest visit that saw it
        for insp_id in {f.inspection_id, f.latest_inspection_id} & set(by_id):
            out[insp_id].append(f)
    for insp_id, check, item, component_id in failed:
        insp = by_id[insp_id]
        problem = problem_of(check=check, item=item)
        # Amendment failures open at the amendment's time, after the visit: the finding's own first
        # inspection counts too.
        match = next(
            (
                f
                for f in candidates
                if f.ahu_id == insp.ahu_id
                and f.component_id == component_id
                and f.problem == problem
                and (
                    f.inspection_id == insp_id
                    or (f.opened_at <= insp.finished_at and (f.closed_at is None or f.closed_at > insp.finished_at))
                )
            ),
            None,
        )
        if match is not None and match not in out[insp_id]:
            out[insp_id].append(match)
    for found in out.values():
        found.sort(key=lambda f: (f.opened_at, f.pk))
    return out


# Causes that close a finding without its corrective work: the problem is gone, the work may no longer be needed.
RESOLVED_WITHOUT_WORK = {Finding.CloseCause.OK_LATER, Finding.CloseCause.REPLACED, Finding.CloseCause.AMENDED}


def corrective_work_already_resolved(*, work_order_ids) -> set[int]:
    """Of ``work_order_ids``, the corrective work orders whose findings are all closed without the work (ok on a
    later visit, filters replaced, or cleared by an amendment): approved work the supervisor may cancel."""
    held: dict[int, bool] = {}
    for wo_id, state, cause in Finding.objects.filter(corrective_work_order_id__in=set(work_order_ids)).values_list(
        "corrective_work_order_id", "state", "close_cause"
    ):
        done = state == Finding.State.CLOSED and cause in RESOLVED_WITHOUT_WORK
        held[wo_id] = held.get(wo_id, True) and done
    return {wo_id for wo_id, done in held.items() if done}


def finding_observations(*, finding: Finding) -> list[Evaluation]:
    """The failed judgements that observed ``finding``, oldest visit first: on its unit and part, of its problem,
    from its first visit until it closed (the visits of duplicates merged into it included). Each carries its
    inspection (with work order and technician) for the finding's history."""
    from .services.findings import problem_of

    if finding.source != Finding.Source.INSPECTION:
        return []  # seen by another source (the trends): no visit observed it
    merged = set(Finding.objects.filter(merged_into=finding).values_list("inspection_id", "latest_inspection_id"))
    own = {finding.inspection_id, finding.latest_inspection_id} | {i for pair in merged for i in pair}
    candidates = Evaluation.objects.filter(
        inspection__ahu_id=finding.ahu_id, component_id=finding.component_id, verdict=Verdict.FAIL
    ).select_related("inspection__work_order", "inspection__technician", "component", "amendment")
    out = []
    for e in candidates:
        if finding.problem:
            if problem_of(check=e.check_name, item=e.item_key) != finding.problem:
                continue
        elif e.pk not in (finding.evaluation_id, finding.latest_evaluation_id):
            continue  # stored before findings had a problem: only its own two judgements are known to be it
        seen = e.amendment.created_at if e.amendment is not None else e.inspection.finished_at
        within = (
            seen is not None and finding.opened_at <= seen and (finding.closed_at is None or seen < finding.closed_at)
        )
        if e.inspection_id in own or within:
            out.append(e)
    out.sort(key=lambda e: (e.inspection.finished_at or e.inspection.received_at, e.pk))
    return out


def finding_photos(*, finding: Finding, inspection_ids) -> list[Photo]:
    """The photos taken on the visits ``inspection_ids`` of the part the finding is about (or, for a finding of
    the whole unit, of the task it came from), oldest first."""
    task = (finding.evaluation.item_key if finding.evaluation_id else "").partition(".")[0]
    out = []
    for photo in Photo.objects.filter(inspection_id__in=set(inspection_ids)).select_related("component"):
        same_task = photo.item_key.partition(".")[0] == task
        if finding.component_id is not None:
            if photo.component_id == finding.component_id or (photo.component_id is None and same_task):
                out.append(photo)
        elif same_task:
            out.append(photo)
    return out
