"""Answer versions: the organisation's (what every answer shows), its work's (its boards) and each person's own
work's (their today), moved by the services that change what polled answers show.

No SQL text is read and no Django internals are touched: a write that skips the services moves nothing
(the answers' time limit covers those), a service's write moves its own organisation's versions and no other,
and a rolled-back service leaves the versions where they were.
"""

import pytest
from django.db import connection, transaction
from django.test.utils import CaptureQueriesContext
from rest_framework.authtoken.models import Token

from accounts import changes
from accounts.changes import (
    Scope,
    changes_deferred,
    organisation_changed,
    person_changed,
    token_versions,
    versions_of,
    work_changed,
)
from accounts.models import Organisation, User
from scheduling.models import WorkOrder
from scheduling.services import work_order_assign
from tests.factories.accounts import OrganisationFactory, UserFactory
from tests.factories.inventory import make_full_unit
from tests.factories.scheduling import WorkOrderFactory, make_supervisor, make_technician

pytestmark = pytest.mark.django_db(transaction=True)


def version(org) -> int:
    return Organisation.objects.get(pk=org.pk).answers_version


def work_version(org) -> int:
    return Organisation.objects.get(pk=org.pk).work_version


def own_version(user) -> int:
    return User.objects.get(pk=user.pk).work_version


def test_the_helper_moves_one_organisation_and_no_other():
    """organisation_changed adds one to that organisation's version; another's stays."""
    a, b = OrganisationFactory(), OrganisationFactory()
    before_a, before_b = version(a), version(b)
    organisation_changed(organisation_id=a.pk)
    assert (version(a), version(b)) == (before_a + 1, before_b)
    organisation_changed(organisation_id=None)  # a record of no organisation: nothing to move
    assert (version(a), version(b)) == (before_a + 1, before_b)


def test_work_changed_moves_the_work_and_the_people_named_and_nothing_else():
    """work_changed adds one to the organisation's work version and to each named person's own; the organisation's
    version, another organisation's and another person's stay. None (nobody assigned) is skipped."""
    a, b = OrganisationFactory(), OrganisationFactory()
    tech, other = make_technician(a), make_technician(a)
    before = (version(a), work_version(a), own_version(tech), own_version(other), work_version(b))
    work_changed(organisation_id=a.pk, people=[tech.pk, None, tech.pk])
    after = (version(a), work_version(a), own_version(tech), own_version(other), work_version(b))
    assert after == (before[0], before[1] + 1, before[2] + 1, before[3], before[4])


def test_a_rolled_back_service_leaves_the_version():
    """The bump is part of the service's transaction: abandoned with it. An assignment moves the organisation's
    work version and its technician's own, not the organisation's version."""
    ahu = make_full_unit()
    org = ahu.building.site.organisation
    sup, tech = make_supervisor(org), make_technician(org)
    wo = WorkOrderFactory(organisation=org, ahu=ahu)
    before = (version(org), work_version(org), own_version(tech))
    with pytest.raises(RuntimeError), transaction.atomic():
        work_order_assign(work_order=wo, assignee=tech, by=sup)
        raise RuntimeError("abandon")
    assert (version(org), work_version(org), own_version(tech)) == before
    work_order_assign(work_order=wo, assignee=tech, by=sup)
    assert (version(org), work_version(org), own_version(tech)) == (before[0], before[1] + 1, before[2] + 1)


def test_a_reassignment_moves_the_old_and_the_new_assignee():
    """Reassigned from one technician to another, and then unassigned: each move names the assignee before it
    and after it, so both todays go stale; a third technician's stays."""
    ahu = make_full_unit()
    org = ahu.building.site.organisation
    sup, first, second, third = make_supervisor(org), make_technician(org), make_technician(org), make_technician(org)
    wo = WorkOrderFactory(organisation=org, ahu=ahu)
    work_order_assign(work_order=wo, assignee=first, by=sup)
    before = [own_version(p) for p in (first, second, third)]
    work_order_assign(work_order=wo, assignee=second, by=sup)
    assert [own_version(p) for p in (first, second, third)] == [before[0] + 1, before[1] + 1, before[2]]
    from scheduling.services import work_order_unassign

    work_order_unassign(work_order=wo, by=sup)
    assert [own_version(p) for p in (first, second, third)] == [before[0] + 1, before[1] + 2, before[2]]


def test_deferred_changes_move_each_version_once():
    """Inside changes_deferred every kind moves once at the end (one statement each); an organisation whose own
    version moves needs no work move (every answer's key holds it), its people's still move."""
    a, b = OrganisationFactory(), OrganisationFactory()
    tech = make_technician(a)
    before = (version(a), work_version(a), version(b), work_version(b), own_version(tech))
    with CaptureQueriesContext(connection) as seen, transaction.atomic(), changes_deferred():
        for _ in range(3):
            work_changed(organisation_id=a.pk, people=[tech.pk])
            work_changed(organisation_id=b.pk)
        organisation_changed(organisation_id=b.pk)
    updates = [q["sql"] for q in seen.captured_queries if q["sql"].startswith("UPDATE")]
    assert len(updates) == 3, updates  # b's version; a's work; the technician's own
    after = (version(a), work_version(a), version(b), work_version(b), own_version(tech))
    assert after == (before[0], before[1] + 1, before[2] + 1, before[3], before[4] + 1)


def test_writes_outside_the_services_move_nothing():
    """No statement is watched: a QuerySet.update() is invisible to the versions (the time limit covers it)."""
    ahu = make_full_unit()
    org = ahu.building.site.organisation
    wo = WorkOrderFactory(organisation=org, ahu=ahu)
    before = version(org)
    WorkOrder.objects.filter(pk=wo.pk).update(title="renamed by hand")
    assert version(org) == before
    assert not connection.execute_wrappers, "no execute wrapper is installed"


def test_a_persons_versions_and_the_token_check_are_one_query_each():
    """versions_of and token_versions each cost one query; an unknown token or an inactive person give None."""
    a, b = OrganisationFactory(), OrganisationFactory()
    tech = make_technician(a)
    from accounts.models import Membership, Role

    Membership.objects.create(user=tech, organisation=b, role=Role.TECHNICIAN)
    key = Token.objects.create(user=tech).key
    with CaptureQueriesContext(connection) as seen:
        mine = versions_of(user_id=tech.pk)
        found = token_versions(key=key)
    assert len(seen) == 2
    assert mine.organisations == ((a.pk, version(a)), (b.pk, version(b)))
    assert mine.work == (work_version(a), work_version(b)) and mine.own_work == own_version(tech)
    assert found == (tech.pk, mine)
    assert token_versions(key="0" * 40) is None
    person_changed(user_id=tech.pk)  # a person of two organisations: both move
    moved = versions_of(user_id=tech.pk)
    assert moved.organisations == ((a.pk, mine.organisations[0][1] + 1), (b.pk, mine.organisations[1][1] + 1))
    work_changed(organisation_id=b.pk, people=[tech.pk])
    after = versions_of(user_id=tech.pk)
    assert after.key(Scope.ORGANISATIONS) == moved.key(Scope.ORGANISATIONS)  # the time zone stays kept
    assert after.key(Scope.OWN_WORK) != moved.key(Scope.OWN_WORK)
    assert after.key(Scope.ORGANISATION_WORK) != moved.key(Scope.ORGANISATION_WORK)
    assert versions_of(user_id=UserFactory().pk) is None  # nobody's member: nothing kept
    type(tech).objects.filter(pk=tech.pk).update(is_active=False)
    assert token_versions(key=key) is None


def test_a_migrate_moves_every_organisation():
    """post_migrate: a data migration may have changed anyone's data."""
    a, b = OrganisationFactory(), OrganisationFactory()
    before = (version(a), version(b))
    changes.migrations_applied()
    assert (version(a), version(b)) == (before[0] + 1, before[1] + 1)
