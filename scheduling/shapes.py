"""The work order's one JSON shape, built in one place for every answer that shows a work order.

The API's ``WorkOrderOutput`` (one work order, the list, the today visits) and the board's row are built here,
from a ``values()`` row of ORM paths (the fast reads) or from a work order instance (the same paths read as
attributes) alike, so the serializer, the board and the technician's today cannot drift apart. The serializers
only declare the schema."""

from __future__ import annotations

from collections.abc import Callable, Iterable, Mapping
from typing import Any

from .models import WorkOrder

Get = Callable[[str], Any]

# The ORM paths the whole shape reads from a work order (without its tasks) ...
WORK_ORDER_COLUMNS = (
    "public_id",
    "kind",
    "state",
    "priority",
    "approval",
    "title",
    "reason",
    "condition_code",
    "ahu_id",
    "ahu__tag",
    "ahu__label_code",
    "ahu__building__site_id",
    "ahu__building__site__code",
    "ahu__building__site__name",
    "ahu__building__site__latitude",
    "ahu__building__site__longitude",
    "assignee_id",
    "assignee__username",
    "assignee__first_name",
    "assignee__last_name",
    "due_date",
    "due_by",
    "overdue_on",
    "scheduled_for",
    "started_at",
    "completed_at",
    "verified_at",
    "version",
)
# ... and from each of its tasks (relative to the task; ``tasks__`` before each when read with the work order).
TASK_COLUMNS = (
    "id",
    "task_code",
    "task__name",
    "task__checklist_code",
    "component_id",
    "component__name",
    "component__kind",
    "component__label_code",
    "due_date",
    "task__estimated_minutes",
    "task__safety_notes",
    "completed_at",
)
# The board's row: the work order without its tasks and times, its unit named with its building.
BOARD_ITEM_FIELDS = (
    "id",
    "kind",
    "state",
    "priority",
    "approval",
    "title",
    "condition_code",
    "unit",
    "site",
    "assignee",
    "due_date",
    "due_by",
    "overdue_on",
    "scheduled_for",
    "version",
    "allowed_states",
)
# A row's unit named with its building and site, and its assignee: what every list of work orders shows.
UNIT_IN_BUILDING_COLUMNS = (
    "ahu_id",
    "ahu__tag",
    "ahu__label_code",
    "ahu__building_id",
    "ahu__building__name",
    "ahu__building__site_id",
    "ahu__building__site__code",
    "ahu__building__site__name",
)
ASSIGNEE_COLUMNS = ("assignee_id", "assignee__username", "assignee__first_name", "assignee__last_name")
BOARD_ITEM_COLUMNS = (
    "public_id",
    "kind",
    "state",
    "priority",
    "approval",
    "title",
    "condition_code",
    *UNIT_IN_BUILDING_COLUMNS,
    *ASSIGNEE_COLUMNS,
    "due_date",
    "due_by",
    "overdue_on",
    "scheduled_for",
    "version",
)


def getter(source: Any, *, prefix: str = "") -> Get:
    """Read an ORM path (``"ahu__building__site__code"``) from a ``values()`` row or from a model instance."""
    if isinstance(source, Mapping):
        return lambda path: source[prefix + path]

    def get(path: str) -> Any:
        value = source
        for name in path.split("__"):
            value = getattr(value, name)
        return value

    return get


def allowed_states(state: str) -> list[str]:
    """The states a work order in ``state`` may move to, as every answer lists them."""
    return sorted(WorkOrder.TRANSITIONS.get(state, ()))


def person_ref(*, id: int, username: str, first_name: str, last_name: str) -> dict:
    """A person as the answers name them: their full name, else their username (as ``User.__str__``)."""
    return {"id": id, "username": username, "name": f"{first_name} {last_name}".strip() or username}


def _assignee(get: Get) -> dict | None:
    if get("assignee_id") is None:
        return None
    return person_ref(
        id=get("assignee_id"),
        username=get("assignee__username"),
        first_name=get("assignee__first_name"),
        last_name=get("assignee__last_name"),
    )


def unit_brief(get: Get) -> dict:
    return {"id": get("ahu_id"), "tag": get("ahu__tag"), "label_code": get("ahu__label_code")}


def unit_ref(get: Get) -> dict:
    """A unit as the board names it: its tag with its building ("AHU-01 (Mill Block)", as ``AHU.display_name``),
    since tags are unique only within a building."""
    tag, building_name = get("ahu__tag"), get("ahu__building__name")
    return {
        "id": get("ahu_id"),
        "tag": tag,
        "name": f"{tag} ({building_name})",
        "label_code": get("ahu__label_code"),
        "building": {"id": get("ahu__building_id"), "name": building_name},
    }


def site_ref(get: Get) -> dict:
    return {
        "id": get("ahu__building__site_id"),
        "code": get("ahu__building__site__code"),
        "name": get("ahu__building__site__name"),
    }


def site_place(get: Get) -> dict:
    return {
        **site_ref(get),
        "latitude": get("ahu__building__site__latitude"),
        "longitude": get("ahu__building__site__longitude"),
    }


def task_shape(source: Any, *, prefix: str = "") -> dict:
    """One task of a work order (``WorkOrderTaskOutput``), from a task instance or a row (``prefix="tasks__"``
    when read joined with its work order)."""
    get = getter(source, prefix=prefix)
    component_id = get("component_id")
    return {
        "id": get("id"),
        "code": get("task_code"),
        "name": get("task__name"),
        "checklist_code": get("task__checklist_code"),
        "component": None
        if component_id is None
        else {
            "id": component_id,
            "name": get("component__name"),
            "kind": get("component__kind"),
            "label_code": get("component__label_code"),
        },
        "due_date": get("due_date"),
        "estimated_minutes": get("task__estimated_minutes"),
        "safety_notes": get("task__safety_notes"),
        "completed_at": get("completed_at"),
    }


WORK_ORDER_FIELDS = (
    "id",
    "kind",
    "state",
    "priority",
    "approval",
    "title",
    "reason",
    "condition_code",
    "unit",
    "site",
    "assignee",
    "due_date",
    "due_by",
    "overdue_on",
    "due_basis",
    "scheduled_for",
    "started_at",
    "completed_at",
    "verified_at",
    "version",
    "tasks",
    "allowed_states",
)


def work_order_shape(
    source: Any,
    *,
    tasks: Iterable[dict] = (),
    fields: tuple[str, ...] = WORK_ORDER_FIELDS,
    unit: Callable[[Get], dict] = unit_brief,
    site: Callable[[Get], dict] = site_place,
    due_basis: str = "",
) -> dict:
    """A work order as the API shows it (``WorkOrderOutput``): from an instance (with its unit, site and
    assignee joined) or a row of ``WORK_ORDER_COLUMNS``; ``tasks`` already shaped (:func:`task_shape`);
    ``due_basis`` the meter its run-hour tasks' due dates were projected from (``scheduling.due_basis``, read for
    many work orders at once by the caller; "" for none).

    ``fields``, ``unit`` and ``site`` give a smaller view of the same shape (the board's row,
    :func:`board_item_shape`); only the columns of the fields asked for are read."""
    get = getter(source)
    out: dict[str, Any] = {}
    for name in fields:
        if name == "unit":
            out[name] = unit(get)
        elif name == "site":
            out[name] = site(get)
        elif name == "assignee":
            out[name] = _assignee(get)
        elif name == "tasks":
            out[name] = list(tasks)
        elif name == "allowed_states":
            out[name] = allowed_states(get("state"))
        elif name == "due_basis":
            out[name] = due_basis
        else:
            out[name] = get("public_id" if name == "id" else name)
    return out


def board_item_shape(source: Any) -> dict:
    """A work order on the board (``BoardItemOutput`` without ``suggested``): the work-order shape without its
    tasks and times, its unit named with its building and its site without a position. From a row of
    ``BOARD_ITEM_COLUMNS`` or an instance."""
    return work_order_shape(source, fields=BOARD_ITEM_FIELDS, unit=unit_ref, site=site_ref)
