"""Answer versions: one per organisation, moved by the services that change what polled answers show.

No SQL text is read and no Django internals are touched: a write that skips the services moves nothing
(the answers' time limit covers those), a service's write moves its own organisation's version and no other,
and a rolled-back service leaves the version where it was.
"""

import pytest
from django.db import connection, transaction
from django.test.utils import CaptureQueriesContext
from rest_framework.authtoken.models import Token

from accounts import changes
from accounts.changes import organisation_changed, person_changed, token_versions, versions_of
from accounts.models import Organisation
from scheduling.models import WorkOrder
from scheduling.services import work_order_assign
from tests.factories.accounts import OrganisationFactory
from tests.factories.inventory import make_full_unit
from tests.factories.scheduling import WorkOrderFactory, make_supervisor, make_technician

pytestmark = pytest.mark.django_db(transaction=True)


def version(org) -> int:
    return Organisation.objects.get(pk=org.pk).answers_version


def test_the_helper_moves_one_organisation_and_no_other():
    """organisation_changed adds one to that organisation's version; another's stays."""
    a, b = OrganisationFactory(), OrganisationFactory()
    before_a, before_b = version(a), version(b)
    organisation_changed(organisation_id=a.pk)
    assert (version(a), version(b)) == (before_a + 1, before_b)
    organisation_changed(organisation_id=None)  # a record of no organisation: nothing to move
    assert (version(a), version(b)) == (before_a + 1, before_b)


def test_a_rolled_back_service_leaves_the_version():
    """The bump is part of the service's transaction: abandoned with it."""
    ahu = make_full_unit()
    org = ahu.building.site.organisation
    sup, tech = make_supervisor(org), make_technician(org)
    wo = WorkOrderFactory(organisation=org, ahu=ahu)
    before = version(org)
    with pytest.raises(RuntimeError), transaction.atomic():
        work_order_assign(work_order=wo, assignee=tech, by=sup)
        raise RuntimeError("abandon")
    assert version(org) == before
    work_order_assign(work_order=wo, assignee=tech, by=sup)
    assert version(org) == before + 1


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
    assert mine == ((a.pk, version(a)), (b.pk, version(b)))
    assert found == (tech.pk, mine)
    assert token_versions(key="0" * 40) is None
    person_changed(user_id=tech.pk)  # a person of two organisations: both move
    assert versions_of(user_id=tech.pk) == ((a.pk, mine[0][1] + 1), (b.pk, mine[1][1] + 1))
    type(tech).objects.filter(pk=tech.pk).update(is_active=False)
    assert token_versions(key=key) is None


def test_a_migrate_moves_every_organisation():
    """post_migrate: a data migration may have changed anyone's data."""
    a, b = OrganisationFactory(), OrganisationFactory()
    before = (version(a), version(b))
    changes.migrations_applied()
    assert (version(a), version(b)) == (before[0] + 1, before[1] + 1)
