"""The checklist of one work order: its templates and items per unit and part, their limits resolved, its
safety box, and the document the phone caches (inspections/SYNC.md)."""

from __future__ import annotations

from dataclasses import dataclass, field

from accounts.models import User
from engineering import formatting as fmt
from inventory.models import AHU, Component
from scheduling.models import WorkOrder

from .. import checklists
from ..cautions import COMPONENT_CAUTIONS, GENERAL_CAUTIONS, LOCKOUT, cautions_once
from ..limits import dynamic_limits
from ..models import ChecklistItem, ChecklistTemplate
from ..services.library import templates_current

# A corrective work order without tasks gets the checklist that fixes its condition.
CONDITION_TEMPLATES = {
    "filter_loaded": "filter_replace",
    "sensor_drift": "sensor_calibration",
    "supply_temp_off": "controls_check",
    "damper_position": "damper_actuator",
    "fan_not_proven": "fan_proving",
    "freeze_protection_failed": "preheater_freeze",
    "valve_leak": "coil_valve_leak",
}


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
        items = [item for item in template.items.all() if _unit_matches(work_order.ahu, item)]
        t_slots = []
        for run in item_runs(items):
            if not run[0].component_kind:
                t_slots.extend(
                    Slot(item, template, None, item_limits(item=item, ahu=work_order.ahu, component=None))
                    for item in run
                )
                continue
            # One part's items together, as the template lists them, then the next part's (never coil A
            # entering, coil B entering, coil A leaving …).
            for comp in components:
                if wanted is not None and comp.pk not in wanted:
                    continue
                t_slots.extend(
                    Slot(item, template, comp, item_limits(item=item, ahu=work_order.ahu, component=comp))
                    for item in run
                    if _matches(comp, item)
                )
        if t_slots:
            used.append(template)
            slots.extend(t_slots)
    return Checklist(work_order=work_order, templates=used, slots=slots)


def item_runs(items: list[ChecklistItem]) -> list[list[ChecklistItem]]:
    """A template's items in its order, cut into runs of unit items and runs of per-part items: the form asks a
    run of per-part items part by part (every item of the first part, then of the next), and unit items where
    the template puts them."""
    runs: list[list[ChecklistItem]] = []
    for item in items:
        if runs and bool(runs[-1][0].component_kind) == bool(item.component_kind):
            runs[-1].append(item)
        else:
            runs.append([item])
    return runs


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

    from ..phone import checklist_context

    return checklist_context(checklist=checklist, as_of=timezone.now())


def _item_entry(slot: Slot, system: str) -> dict:
    """One slot of the checklist as the phone reads it: the item's words, its part, units and limits (SI and the
    reader's units)."""
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
    return entry


def checklist_for(*, work_order: WorkOrder, user: User) -> dict:
    """The checklist document the phone caches (shape in inspections/SYNC.md)."""
    system = user.unit_system
    checklist = checklist_build(work_order=work_order)
    ahu = work_order.ahu
    by_template: dict[int, list[dict]] = {}
    for slot in checklist.slots:
        by_template.setdefault(slot.template.pk, []).append(_item_entry(slot, system))
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
