"""Lists and pages use the same number of queries for 2 rows as for 20 (no N+1 can land).

Each case asks the same endpoint as the same role in a portfolio of about 2
rows and one of about 20, and requires the larger to need no more queries.
"""

from __future__ import annotations

import pytest
from django.db import connection
from django.test import Client
from django.test.utils import CaptureQueriesContext
from rest_framework.test import APIClient

from accounts.models import User

from .conftest import TODAY

pytestmark = pytest.mark.django_db
DAY = TODAY.isoformat()

API = [
    ("supervisor", "/api/inventory/sites/"),
    ("supervisor", "/api/inventory/buildings/"),
    ("supervisor", "/api/inventory/ahus/"),
    ("supervisor", "/api/inventory/components/"),
    ("supervisor", "/api/scheduling/work-orders/"),
    ("technician", f"/api/scheduling/today/?day={DAY}"),
    ("supervisor", f"/api/scheduling/board/?week={DAY}"),
    ("supervisor", "/api/inspections/flagged/"),
    ("property_manager", "/api/inspections/freeze-readiness/"),
    ("supervisor", "/api/inspections/freeze-readiness/"),
    ("supervisor", "/api/inspections/findings/"),
    ("supervisor", "/api/inspections/findings/?state=all"),
    ("property_manager", "/api/inspections/findings/"),
]
PAGES = [
    ("technician", "/today/"),
    ("supervisor", "/board/"),
    ("supervisor", "/registry/"),
    ("supervisor", "/findings/"),
    ("supervisor", "/flagged/"),
    ("supervisor", "/corrective/"),
    ("property_manager", "/dashboard/"),
    ("property_manager", "/site-findings/?state=all"),
]


def person(portfolio, role: str) -> User:
    name = {
        "supervisor": portfolio.main.supervisor,
        "technician": portfolio.main.technicians[0],
        "property_manager": portfolio.main.property_manager,
    }[role]
    return User.objects.get(username=name)


def count(client, path: str) -> tuple[int, bytes]:
    client.get(path)  # first call warms caches (content types, templates, checklist library)
    with CaptureQueriesContext(connection) as ctx:
        response = client.get(path)
    assert response.status_code == 200, (path, response.status_code, response.content[:300])
    return len(ctx.captured_queries), response.content


def api_client(user: User) -> APIClient:
    client = APIClient()
    client.force_authenticate(user)
    return client


def page_client(user: User) -> Client:
    client = Client()
    client.force_login(user)
    return client


def assert_steady(small: tuple[int, bytes], large: tuple[int, bytes], path: str) -> None:
    (n_small, body_small), (n_large, body_large) = small, large
    assert len(body_large) > len(body_small), f"{path}: the larger portfolio should list more"
    assert n_large <= n_small, f"{path}: {n_small} queries for ~2 rows but {n_large} for ~20 (N+1)"


@pytest.mark.parametrize(("role", "path"), API, ids=[p for _, p in API])
def test_api_lists_use_a_steady_number_of_queries(pair, role, path):
    small = count(api_client(person(pair.small, role)), path)
    large = count(api_client(person(pair.large, role)), path)
    assert_steady(small, large, path)


@pytest.mark.parametrize(("role", "path"), PAGES, ids=[p for _, p in PAGES])
def test_pages_use_a_steady_number_of_queries(pair, role, path):
    small = count(page_client(person(pair.small, role)), path)
    large = count(page_client(person(pair.large, role)), path)
    assert_steady(small, large, path)


def test_a_component_tree_of_20_parts_takes_the_queries_of_one_of_2():
    """The unit tree endpoint reads the whole tree at once, however many parts and levels it has."""
    from tests.factories.accounts import OrganisationFactory
    from tests.factories.inventory import AHUFactory, ComponentFactory, SiteFactory
    from tests.factories.scheduling import make_supervisor

    org = OrganisationFactory()
    supervisor = make_supervisor(org)
    site = SiteFactory(organisation=org)
    small_unit = AHUFactory(building__site=site)
    large_unit = AHUFactory(building__site=site)
    for unit, n in ((small_unit, 2), (large_unit, 20)):
        parent = None
        for i in range(n):
            comp = ComponentFactory(ahu=unit, name=f"Filters {i}", parent=parent if i % 3 else None, position=i)
            parent = comp
    client = api_client(supervisor)
    small = count(client, f"/api/inventory/ahus/{small_unit.pk}/tree/")
    large = count(client, f"/api/inventory/ahus/{large_unit.pk}/tree/")
    assert_steady(small, large, "/api/inventory/ahus/<pk>/tree/")


def test_the_reports_list_reads_its_rows_at_once(pair):
    """A supervisor's list of reports takes the same queries for 2 reports as for 20."""
    from reports.models import Report
    from reports.selectors import reports_visible_to

    counts = []
    for portfolio, n in ((pair.small, 2), (pair.large, 20)):
        user = person(portfolio, "supervisor")
        Report.objects.bulk_create(
            Report(
                organisation_id=portfolio.main.organisation_id,
                kind=Report.Kind.COMPLIANCE,
                requested_by=user,
                site_ids=portfolio.main.site_ids[:1],
                parameters={"sites": portfolio.main.site_ids[:1]},
            )
            for _ in range(n)
        )
        with CaptureQueriesContext(connection) as ctx:
            rows = reports_visible_to(user=user)
            listed = [(r.public_id, r.get_kind_display(), r.requested_by and str(r.requested_by)) for r in rows]
        assert len(listed) == n
        counts.append(len(ctx.captured_queries))
    assert counts[1] <= counts[0], f"reports list: {counts[0]} queries for 2 reports, {counts[1]} for 20"
