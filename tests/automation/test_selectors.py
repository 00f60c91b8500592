"""Reads of the point map start from the sites a person may see."""

import pytest
from django.core.exceptions import PermissionDenied
from django.http import Http404

from accounts.models import Role
from automation.selectors import point_for, points_visible_to, site_for
from scheduling.models import WorkOrder
from tests.factories.scheduling import WorkOrderFactory


def test_points_of_another_organisation_are_invisible(plant):
    """A supervisor sees their organisation's points only; another organisation's point is not found."""
    visible = set(points_visible_to(user=plant.people.supervisor).values_list("pk", flat=True))
    assert visible == {p.pk for p in plant.points.values()}
    with pytest.raises(Http404):
        point_for(user=plant.people.supervisor, id=plant.foreign_points["AHU1.SAT"].pk)
    with pytest.raises(Http404):
        site_for(user=plant.people.supervisor, id=plant.foreign_site.pk)


def test_a_technician_reads_the_points_of_their_work_but_may_not_change_them(plant):
    """A technician with work on the unit sees its points (read), and is refused a change (403, not 404)."""
    assert not points_visible_to(user=plant.people.technician).exists()
    WorkOrderFactory(
        ahu=plant.ahu,
        organisation=plant.org_a,
        assignee=plant.people.technician,
        state=WorkOrder.State.ASSIGNED,
        title="Filter round",
    )
    point = plant.points["AHU1.FILT-DP"]
    assert point_for(user=plant.people.technician, id=point.pk) == point
    with pytest.raises(PermissionDenied):
        point_for(user=plant.people.technician, id=point.pk, write=True)
    assert points_visible_to(user=plant.people.technician, ahu_id=plant.foreign_ahu.pk).count() == 0


def test_role_is_what_counts(plant):
    """The property manager without a grant sees nothing of the site."""
    assert plant.people.manager.memberships.get().role == Role.PROPERTY_MANAGER
    assert not points_visible_to(user=plant.people.manager).exists()
