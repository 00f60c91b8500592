import datetime as dt

import factory

from accounts.models import Role
from scheduling.models import MeterReading, WorkOrder

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
