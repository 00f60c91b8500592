"""One work order, one shape: the API's serializer, the board's row and the technician's today row of the same
work order say the same thing, field by field, in every state it can be shown in."""

import datetime as dt
import json

import pytest
from rest_framework.utils.encoders import JSONEncoder

from scheduling import shapes
from scheduling.models import TaskDefinition, WorkOrder, WorkOrderTask
from scheduling.selectors import board_page_for, to_verify_rows, today_visits_for, work_orders_visible_to
from scheduling.serializers import WorkOrderOutput
from tests.factories.inventory import ComponentFactory, make_full_unit
from tests.factories.scheduling import WorkOrderFactory, make_supervisor, make_technician

pytestmark = pytest.mark.django_db
TODAY = dt.date(2025, 3, 5)  # a Wednesday
MONDAY = dt.date(2025, 3, 3)
STARTED = dt.datetime(2025, 3, 5, 8, 15, 30, 123456, tzinfo=dt.UTC)
FINISHED = dt.datetime(2025, 3, 5, 10, 2, 0, tzinfo=dt.UTC)

STATES = {
    "planned": {"state": WorkOrder.State.PLANNED},
    "assigned": {"state": WorkOrder.State.ASSIGNED, "assigned": True},
    "in progress": {"state": WorkOrder.State.IN_PROGRESS, "assigned": True, "started_at": STARTED},
    "completed": {
        "state": WorkOrder.State.COMPLETED,
        "assigned": True,
        "started_at": STARTED,
        "completed_at": FINISHED,
    },
    "corrective pending approval": {
        "state": WorkOrder.State.PLANNED,
        "kind": WorkOrder.Kind.CORRECTIVE,
        "approval": WorkOrder.Approval.PENDING,
        "condition_code": "belt-worn",
        "reason": "Belt glazed at the last visit",
    },
}
# Where each state is shown: the board's sections hold open, approved work; the today list the technician's.
ON_BOARD = {"planned", "assigned", "in progress"}
ON_TODAY = {"assigned", "in progress"}


def as_json(data):
    return json.loads(json.dumps(data, cls=JSONEncoder))


def _make(name):
    fields = dict(STATES[name])
    ahu = make_full_unit(service_start=dt.date(2024, 1, 15))
    org = ahu.building.site.organisation
    tech = make_technician(org, first_name="Ada", last_name="Brink")
    assigned = fields.pop("assigned", False)
    wo = WorkOrderFactory(
        ahu=ahu,
        due_date=TODAY,
        overdue_on=TODAY + dt.timedelta(days=3),
        due_by=dt.datetime(2025, 3, 5, 16, tzinfo=dt.UTC),
        assignee=tech if assigned else None,
        priority=WorkOrder.Priority.HIGH,
        **fields,
    )
    task = TaskDefinition.objects.filter(organisation__isnull=True).order_by("code").first()
    component = ComponentFactory(ahu=ahu)
    made = {"work_order": wo, "ahu": ahu, "task": task, "task_code": task.code, "due_date": TODAY}
    WorkOrderTask.objects.create(**made, component=component, component_key=component.pk, occurrence_key="a")
    WorkOrderTask.objects.create(**made, occurrence_key="b", completed_at=FINISHED)
    return wo, org, tech


def _board_item(wo, org, name):
    page = board_page_for(organisation=org, week_start=MONDAY, today=TODAY)
    shown = [r for section in ("overdue", "due", "assigned") for r in page[section] if r["id"] == wo.public_id]
    if name in ON_BOARD:
        assert len(shown) == 1, f"{name} work is on the board"
        return shown[0]
    assert not shown, f"{name} work is not on the board"
    # Not on the board in this state: the board's own builder on the board's own columns.
    return shapes.board_item_shape(WorkOrder.objects.filter(pk=wo.pk).values(*shapes.BOARD_ITEM_COLUMNS).get())


def _today_row(wo, tech, name):
    visits = today_visits_for(technician=tech, day=TODAY, today=TODAY)  # the technician's today: in progress shows
    shown = [w for v in visits for w in v["work_orders"] if w["id"] == wo.public_id]
    if name in ON_TODAY:
        assert len(shown) == 1, f"{name} work is on the technician's today"
        return shown[0]
    assert not shown, f"{name} work is not on anyone's today"
    row = WorkOrder.objects.filter(pk=wo.pk).values(*shapes.WORK_ORDER_COLUMNS).get()
    tasks = WorkOrderTask.objects.filter(work_order=wo).order_by("due_date", "id").values(*shapes.TASK_COLUMNS)
    return shapes.work_order_shape(row, tasks=[shapes.task_shape(t) for t in tasks])


@pytest.mark.parametrize("name", list(STATES))
def test_serializer_board_and_today_agree(library, name):
    wo, org, tech = _make(name)
    sup = make_supervisor(org)
    api = as_json(WorkOrderOutput(work_orders_visible_to(user=sup).get(pk=wo.pk)).data)
    board = as_json(_board_item(wo, org, name))
    today = as_json(_today_row(wo, tech, name))

    assert list(api) == list(shapes.WORK_ORDER_FIELDS)
    assert today == api, "the today row is the work-order shape itself"
    assert list(board) == list(shapes.BOARD_ITEM_FIELDS)
    for field in shapes.BOARD_ITEM_FIELDS:
        if field in ("unit", "site"):  # the board names the unit with its building and leaves out the position
            common = set(board[field]) & set(api[field])
            assert {k: board[field][k] for k in common} == {k: api[field][k] for k in common}, field
        else:
            assert board[field] == api[field], field
    assert board["unit"]["name"] == f"{wo.ahu.tag} ({wo.ahu.building.name})"
    assert api["site"]["latitude"] == wo.ahu.building.site.latitude

    # What each state should read as, so that agreeing on a wrong value cannot pass.
    assert api["id"] == str(wo.public_id) and api["state"] == STATES[name]["state"]
    assert api["allowed_states"] == sorted(WorkOrder.TRANSITIONS[wo.state])
    assert api["assignee"] == (
        None if tech.pk != wo.assignee_id else {"id": tech.pk, "username": tech.username, "name": "Ada Brink"}
    )
    assert api["started_at"] == (None if wo.started_at is None else "2025-03-05T08:15:30.123456Z")
    assert [t["code"] for t in api["tasks"]] == [t.task_code for t in wo.tasks.order_by("due_date", "id")]
    assert api["tasks"][0]["component"]["id"] == wo.tasks.order_by("id")[0].component_id
    assert api["tasks"][1]["component"] is None


def test_to_verify_row_agrees_with_the_serializer(library):
    """Completed work waiting for verification reads as the serializer shows it."""
    wo, org, _ = _make("completed")
    api = as_json(WorkOrderOutput(work_orders_visible_to(user=make_supervisor(org)).get(pk=wo.pk)).data)
    (row,) = as_json(to_verify_rows(organisation=org))
    assert list(row) == ["id", "title", "unit", "site", "assignee", "completed_at", "version"]
    for field in ("id", "title", "assignee", "completed_at", "version"):
        assert row[field] == api[field], field
    assert row["unit"]["id"] == api["unit"]["id"] and row["site"]["code"] == api["site"]["code"]
