import datetime as dt

import factory

from accounts.models import Role
from scheduling.models import MeterReading, TaskDefinition, WorkOrder, WorkOrderTask

from .accounts import make_person
from .inventory import AHUFactory


class WorkOrderFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = WorkOrder

    ahu = factory.SubFactory(AHUFactory)
    organisation = factory.LazyAttribute(lambda o: o.ahu.building.site.organisation)
    title = factory.Sequence(lambda n: f"Visit {n}")
    due_date = factory.LazyFunction(lambda: dt.date(2025, 3, 3))


class MeterReadingFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = MeterReading

    ahu = factory.SubFactory(AHUFactory)
    hours = 1000.0
    taken_at = factory.LazyFunction(lambda: dt.datetime(2025, 1, 1, 8, tzinfo=dt.UTC))
    source = MeterReading.Source.MANUAL


def make_technician(organisation, **fields):
    return make_person(organisation=organisation, role=Role.TECHNICIAN, **fields)


def make_supervisor(organisation, **fields):
    return make_person(organisation=organisation, role=Role.SUPERVISOR, **fields)


def add_task(work_order, task, component=None, *, key: str = "test", **fields) -> WorkOrderTask:
    """One occurrence of ``task`` on ``work_order``, due with it: ``task`` a TaskDefinition or the code of a
    library task, for the whole unit or for ``component``; occurrence key ``<key>:<work order>:<code>:<component>``.
    ``fields`` set the rest (``completed_at``, ``due_date``, ...)."""
    if isinstance(task, str):
        task = TaskDefinition.objects.get(organisation__isnull=True, code=task)
    component_key = component.pk if component else 0
    fields.setdefault("due_date", work_order.due_date)
    return WorkOrderTask.objects.create(
        work_order=work_order,
        task=task,
        task_code=task.code,
        ahu=work_order.ahu,
        component=component,
        component_key=component_key,
        occurrence_key=f"{key}:{work_order.pk}:{task.code}:{component_key}",
        **fields,
    )
