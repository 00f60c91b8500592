"""The supervisor's and technician's pages as a person reads them: times on the site's clock with the zone
named, work-order titles whole, and the checklist's heading saying where (site · building · unit).

The scenario's sites are in Europe/Amsterdam (tests.factories.inventory.SiteFactory); in January that is CET,
UTC+1 (IANA tz database). The clock is fixed at 14 Jan 2026 23:30 UTC, already 15 Jan 00:30 in Amsterdam, so a
page that printed the server's (UTC) date would show the 14th.
"""

import datetime as dt
import json
import re

import pytest
import time_machine
from django.urls import reverse

from inspections.services import inspection_sync
from scheduling.models import TaskDefinition
from scheduling.titles import TITLE_MAX, visit_title
from tests.factories.inspections import r, sync_form
from tests.frontend import scenario as scenario_module
from tests.frontend.scenario import make_work

pytestmark = pytest.mark.django_db
NOW = dt.datetime(2026, 1, 14, 23, 30, tzinfo=dt.UTC)  # 15 Jan 2026 00:30 CET
FINISHED = NOW - dt.timedelta(minutes=15)  # 15 Jan 2026 00:15 CET
BARE_DATE = re.compile(r">\s*\d{1,2} [A-Z][a-z]{2} \d{4}\s*<")


@pytest.fixture
def s(db):
    """work_a's final filters read 400 Pa (common practice: far past a final pressure drop of about 250 Pa), so a
    finding opens and corrective work is proposed for the supervisor's approval."""
    with time_machine.travel(NOW, tick=False):
        s = scenario_module.build()
        final = s.unit_a.components.get(name="Final filters")
        form = sync_form(s.work_a, [r("filter_check.dp", 400.0, final)], finished_at=FINISHED)
        [result] = inspection_sync(user=s.technician, forms=[form])
        assert result["status"] in {"stored", "flagged"}, result
        yield s


def words(html: str) -> str:
    return " ".join(html.split())


def test_findings_page_times_are_on_the_sites_clock_with_the_zone(s, login):
    """First and last seen read 15 Jan 2026 00:15 CET (the form's finish on the site's clock), never the
    server's UTC day (14 Jan) nor a bare date."""
    with time_machine.travel(NOW, tick=False):
        html = login(s.supervisor).get(reverse("frontend:findings")).content.decode()
    text = words(html)
    assert 'data-label="First seen">15 Jan 2026 00:15 CET<' in text, text
    assert 'data-label="Last seen">15 Jan 2026 00:15 CET<' in text
    assert "14 Jan 2026" not in text
    assert not BARE_DATE.search(text), BARE_DATE.search(text)


def test_corrective_page_times_are_on_the_sites_clock_with_the_zone(s, login):
    """The proposal lists its finding 'first seen 15 Jan 2026 00:15 CET'."""
    with time_machine.travel(NOW, tick=False):
        text = words(login(s.supervisor).get(reverse("frontend:corrective")).content.decode())
    assert "(first seen 15 Jan 2026 00:15 CET" in text, text
    assert "14 Jan 2026" not in text


def test_the_checklist_heading_names_site_building_and_unit_and_the_whole_title(s, login):
    """A visit bundling every library task is titled with whole task names that fit the column, and the
    checklist page's heading reads 'Harbour House · North block · AHU-01' before that title."""
    with time_machine.travel(NOW, tick=False):
        names = list(TaskDefinition.objects.filter(organisation__isnull=True).values_list("name", flat=True))
        title = visit_title(names)
        wo = make_work(ahu=s.unit_a, assignee=s.technician, title=title)
        html = login(s.technician).get(reverse("frontend:checklist", kwargs={"public_id": wo.public_id})).content
    heading = re.search(r"<h1[^>]*>(.*?)</h1>", html.decode(), re.S).group(1)
    heading_text = words(re.sub(r"<[^>]+>", " ", heading))
    assert heading_text.startswith("Harbour House · North block · AHU-01"), heading_text
    assert title in words(heading.replace("&#x27;", "'")), heading
    assert len(title) <= TITLE_MAX and re.search(r", and \d+ more tasks$", title), title


def test_the_phone_pages_ship_the_sites_clock(s, login):
    """The checklist and today pages carry the site's zone and its clock changes for the phone's times
    (units.js timeText): Europe/Amsterdam, CET in January."""
    with time_machine.travel(NOW, tick=False):
        client = login(s.technician)
        for url in (reverse("frontend:checklist", kwargs={"public_id": s.work_a.public_id}), reverse("frontend:today")):
            html = client.get(url).content.decode()
            found = re.search(r'<script id="site-clock" type="application/json">(.*?)</script>', html, re.S)
            assert found, url
            clock = json.loads(found.group(1))
            assert clock["zone"] == "Europe/Amsterdam"
            at = int(FINISHED.timestamp() * 1000)
            span = [sp for sp in clock["spans"] if sp[0] <= at][-1]
            assert span[1:] == [3600, "CET"], span
