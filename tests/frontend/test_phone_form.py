"""The phone form's page before any script: the site's address, map links and access notes, the section list
with its counts, "All pass" only where a section has several OK / Not OK items, the last values, a steady
number of queries however many earlier visits the unit has."""

import datetime as dt
import re

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext
from django.utils import timezone

from inspections.services import inspection_sync
from inventory.models import Site
from tests.factories.inspections import r, sync_form, tasks_add
from tests.frontend.scenario import make_work

pytestmark = [pytest.mark.django_db, pytest.mark.usefixtures("clock")]  # dates made today are the clock's

HAS_ACCESS_NOTES = any(f.name == "access_notes" for f in Site._meta.get_fields())


def _page(client, wo) -> str:
    response = client.get(f"/w/{wo.public_id}/")
    assert response.status_code == 200
    return response.content.decode()


def _earlier_visit(scenario, days_ago: int, dp: float):
    wo = make_work(ahu=scenario.unit_a, assignee=scenario.technician, title="Earlier service")
    final = scenario.unit_a.components.get(name="Final filters")
    finished = timezone.now() - dt.timedelta(days=days_ago)
    [result] = inspection_sync(
        user=scenario.technician, forms=[sync_form(wo, [r("filter_check.dp", dp, final)], finished_at=finished)]
    )
    assert result["status"] in ("stored", "flagged"), result


def test_the_site_address_and_map_links_are_on_the_form(scenario, login):
    """The address as typed in the registry, a geo: link for the phone's map app and an OpenStreetMap link built
    from the site's coordinates (no lookup)."""
    site = scenario.site_a
    site.address = "14 Quay Street\nHarbour Town"
    site.latitude, site.longitude = 51.4545, -2.5879
    site.save(update_fields=["address", "latitude", "longitude"])
    html = _page(login(scenario.technician), scenario.work_a)
    assert "14 Quay Street<br>Harbour Town" in html
    assert 'href="geo:51.454500,-2.587900?q=51.454500,-2.587900(Harbour%20House)"' in html
    assert 'href="https://www.openstreetmap.org/?mlat=51.454500&amp;mlon=-2.587900#map=18/51.454500/-2.587900"' in html


@pytest.mark.skipif(not HAS_ACCESS_NOTES, reason="the registry keeps no access notes for a site yet")
def test_the_sites_access_notes_are_on_the_form(scenario, login):
    """How to get in (keys, reception, roof access) shows under the address."""
    site = scenario.site_a
    site.access_notes = "Keys at reception; roof hatch code from the facilities desk."
    site.save(update_fields=["access_notes"])
    html = _page(login(scenario.technician), scenario.work_a)
    assert "Getting in:</strong> Keys at reception; roof hatch code from the facilities desk." in html


def test_sections_are_listed_with_counts_and_all_pass_only_where_several_checks_are(scenario, login):
    """The section list links every section with "0/n"; "All pass" shows in the dampers section (six OK / Not
    OK items, two per damper) and not in the filter check (one)."""
    tasks_add(scenario.work_a, ["damper_actuator"], key="now")
    html = _page(login(scenario.technician), scenario.work_a)
    assert re.search(r'<a href="#section-damper_actuator">Dampers and actuators</a> <span[^>]*>0/\d+</span>', html)
    assert 'id="section-filter_check"' in html
    sections = {chunk.split('"')[0]: chunk for chunk in html.split('data-section="')[1:]}
    assert "data-all-pass" in sections["damper_actuator"]
    assert "data-all-pass" not in sections["filter_check"]


def test_last_values_take_the_same_queries_for_one_earlier_visit_or_ten(scenario, login):
    """Ten earlier visits cost the page no more queries than one; the newest value shows."""
    client = login(scenario.technician)
    _earlier_visit(scenario, 40, 150)
    with CaptureQueriesContext(connection) as one:
        _page(client, scenario.work_a)
    for k in range(9):
        _earlier_visit(scenario, 30 - k, 160 + k)
    with CaptureQueriesContext(connection) as ten:
        html = _page(client, scenario.work_a)
    assert "last: 168 Pa on" in html
    assert len(ten.captured_queries) == len(one.captured_queries)
