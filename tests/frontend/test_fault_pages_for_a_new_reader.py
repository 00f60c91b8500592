"""What a new reader found wrong on the building-automation pages, walked as each of them uses the pages.

- The supervisor's active faults list the filter banks the trends found loaded, with the change each proposed, as
  they list the guideline's faults (the filter feed keeps a finding, not a ``Fault``).
- The property manager's faults page follows her site filter (``?site=``), refuses a site not hers or not a number
  with the supervisor's message (400, naming the field, the value and what is allowed), and reads the faults once.
- Her findings list shows what the trends saw and the rule's limit for a trend finding (never a bare "—"), and no
  text says "found in the building-automation trends" twice; counts read "1 day", "2 days", never "day(s)".

The worlds are made through the services: a stuck outdoor-air damper imported as a trend CSV and judged
(``tests.frontend.test_automation_pages.stuck_damper_world``), and a final-filter bank whose pressure sensor reads
176 then 178 Pa at 80 % fan speed (246 and 249 Pa at design airflow by the first fan law and n = 1.5, 97 and 99 %
of its 90–250 Pa span, over the 95 % change point: engineering.filters, common practice) judged on two days. The
clock is set for each read.
"""

import datetime as dt
import re

import pytest
import time_machine
from django.db import connection
from django.test.utils import CaptureQueriesContext
from django.urls import reverse

from accounts.models import Role, SiteGrant
from automation.judging import unit_day_judge
from inspections.models import Finding
from scheduling.models import WorkOrder
from scheduling.services import task_library_install
from tests.automation.trend_builders import map_points, put_day
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit
from tests.frontend.test_automation_pages import stuck_damper_world

pytestmark = pytest.mark.django_db

FILTER_DAYS = [dt.date(2026, 1, 12), dt.date(2026, 1, 13)]
READ_AT = dt.datetime(2026, 1, 14, 11, tzinfo=dt.UTC)


def _text(html: str) -> str:
    return re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", html)).replace("&#x27;", "'")


def _row(html: str, marker: str) -> str:
    assert marker in html, marker
    return html.split(marker)[1].split("</tr>")[0]


def _get(client, user, url, **params):
    client.force_login(user)
    with time_machine.travel(READ_AT, tick=False):
        return client.get(url, params)


@pytest.fixture
def world():
    org, site, ahu, _points, fault = stuck_damper_world()
    # A second site of the same organisation whose final filters load up in the trend.
    wharf = SiteFactory(organisation=org, name="Wharf House", time_zone="UTC")
    unit = make_full_unit(building=BuildingFactory(site=wharf, name="Main block"), tag="AHU-01")
    task_library_install()
    points = map_points(unit)
    for day, dp in zip(FILTER_DAYS, (176, 178), strict=True):
        start = dt.datetime.combine(day, dt.time(), tzinfo=dt.UTC)
        put_day(points, start, {"SF-STS": 1, "SF-SPD": 80, "FILT-DP": dp})
        with time_machine.travel(start + dt.timedelta(days=1, hours=1), tick=False):
            unit_day_judge(ahu=unit, day=day)
    bank = unit.components.get(name="Final filters")
    [loaded] = Finding.objects.filter(ahu=unit, component=bank, rule="FILTER", state=Finding.State.OPEN)
    boss = make_person(organisation=org, role=Role.SUPERVISOR, username="boss")
    pm = make_person(organisation=org, role=Role.PROPERTY_MANAGER, username="pm")
    SiteGrant.objects.create(user=pm, site=site)
    SiteGrant.objects.create(user=pm, site=wharf)
    hidden = SiteFactory(organisation=org, name="Hidden Yard", time_zone="UTC")  # hers not
    foreign = SiteFactory(organisation=OrganisationFactory(), name="Far Quay", time_zone="UTC")
    return {
        "org": org,
        "site": site,
        "ahu": ahu,
        "fault": fault,
        "wharf": wharf,
        "unit": unit,
        "bank": bank,
        "loaded": loaded,
        "boss": boss,
        "pm": pm,
        "hidden": hidden,
        "foreign": foreign,
    }


def test_a_filter_the_trend_found_loaded_is_on_the_supervisors_active_faults_with_the_change_it_proposed(client, world):
    loaded, unit = world["loaded"], world["unit"]
    [change] = WorkOrder.objects.filter(ahu=unit, condition_code="filter_loaded")
    assert loaded.corrective_work_order == change
    html = _get(client, world["boss"], reverse("frontend:faults")).content.decode()
    assert "<h2>Active (2)</h2>" in html  # the stuck damper and the loaded filter
    row = _row(html, f'data-loaded-filter="{loaded.pk}"')
    words = _text(row)
    assert "AHU-01" in words and "Main block · Wharf House" in words
    assert "Filter loaded — Final filters" in words
    # What the trend saw, in the reader's units, and since when.
    assert "249 Pa at design airflow" in words and "12 Jan 2026" in words
    # The change it proposed, where the supervisor approves it, as for a fault.
    assert f'data-work="{change.public_id}"' in row and change.title in words
    with time_machine.travel(READ_AT, tick=False):
        assert f"data-work-state>{change.state_words}<" in row
    assert f"{reverse('frontend:corrective')}#wo-{change.public_id}" in row
    # Its evidence: the unit's trends over the week up to the day it was last seen; its finding.
    trends = reverse("frontend:unit_trends", kwargs={"pk": unit.pk}) + "?start=2026-01-07"
    assert f'href="{trends}"' in row
    assert f'data-finding-link="{loaded.pk}"' in row
    page = _get(client, world["boss"], trends)
    assert page.status_code == 200 and 'data-chart="pressures"' in page.content.decode()
    # The site filter keeps it with its site only.
    html = _get(client, world["boss"], reverse("frontend:faults"), site=str(world["wharf"].pk)).content.decode()
    assert f'data-loaded-filter="{loaded.pk}"' in html and f'data-fault="{world["fault"].pk}"' not in html
    html = _get(client, world["boss"], reverse("frontend:faults"), site=str(world["site"].pk)).content.decode()
    assert f'data-loaded-filter="{loaded.pk}"' not in html and f'data-fault="{world["fault"].pk}"' in html
    # Once the change is done the finding closes and the list no longer shows it.
    Finding.objects.filter(pk=loaded.pk).update(state=Finding.State.CLOSED, closed_at=READ_AT)
    html = _get(client, world["boss"], reverse("frontend:faults")).content.decode()
    assert f'data-loaded-filter="{loaded.pk}"' not in html


def test_the_property_manager_sees_the_loaded_filter_counted_and_listed_with_its_finding(client, world):
    loaded, wharf = world["loaded"], world["wharf"]
    html = _get(client, world["pm"], reverse("frontend:faults")).content.decode()
    assert (
        f'<tr data-site="{wharf.pk}"><th scope="row">Wharf House</th><td class="num" data-label="Active faults">1<'
        in (html)
    )
    row = _row(html, f'data-loaded-filter="{loaded.pk}"')
    assert reverse("frontend:manager_finding", kwargs={"pk": loaded.pk}) in row
    assert "Filter loaded" in row and "Final filters" in row and "awaiting approval" in row


def test_the_property_managers_faults_follow_her_site_filter(client, world):
    site, wharf, fault, loaded = world["site"], world["wharf"], world["fault"], world["loaded"]
    page = _get(client, world["pm"], reverse("frontend:faults"), site=str(wharf.pk))
    assert page.status_code == 200
    html = page.content.decode()
    assert f'<option value="{wharf.pk}" selected>Wharf House</option>' in html
    assert f'data-site="{wharf.pk}"' in html and f'data-site="{site.pk}"' not in html
    assert f'data-loaded-filter="{loaded.pk}"' in html and f'data-fault="{fault.pk}"' not in html
    html = _get(client, world["pm"], reverse("frontend:faults"), site=str(site.pk)).content.decode()
    assert f'data-fault="{fault.pk}"' in html and f'data-loaded-filter="{loaded.pk}"' not in html


@pytest.mark.parametrize("which", ["hidden", "foreign", "word", "no such number"])
def test_a_site_not_hers_or_not_a_number_is_refused_naming_the_field_the_value_and_what_is_allowed(
    client, world, which
):
    value = {
        "hidden": str(world["hidden"].pk),
        "foreign": str(world["foreign"].pk),
        "word": "abc",
        "no such number": "999999",
    }[which]
    page = _get(client, world["pm"], reverse("frontend:faults"), site=value)
    assert page.status_code == 400
    words = _text(page.content.decode())
    # The supervisor's page says it so (automation_faults.site_choice, one function for both).
    assert f"Site: '{value}' is not one of the sites you may see; choose one of the list." in words
    assert world["fault"].title not in words and "Filter loaded" not in words  # nothing is listed
    assert world["hidden"].name not in words and world["foreign"].name not in words


def test_the_property_managers_summary_reads_the_faults_once(client, world):
    """The open faults and the freeze events come from one read of the faults' rows (freeze-protection readiness
    reads its own events, a few columns, through ``inspections.freeze``)."""
    client.force_login(world["pm"])
    with time_machine.travel(READ_AT, tick=False), CaptureQueriesContext(connection) as seen:
        assert client.get(reverse("frontend:faults")).status_code == 200
    rows_read = [q["sql"] for q in seen.captured_queries if '"automation_fault"."reason"' in q["sql"]]
    assert len(rows_read) == 1, rows_read


def test_her_findings_list_shows_what_the_trends_saw_and_the_limit_never_a_bare_dash(client, world):
    fault, loaded = world["fault"], world["loaded"]
    html = _get(client, world["pm"], reverse("frontend:manager_findings")).content.decode()
    # The loaded filter: its pressure drop at design airflow and share of its span, against the change point.
    row = _row(html, f'data-finding="{loaded.pk}"')
    value = _text(row.split("data-value>")[1].split("</td>")[0]).strip()
    limit = _text(row.split("data-limit>")[1].split("</td>")[0]).strip()
    assert value == "249 Pa at design airflow (the day's median), 99 % of the clean-to-final span"
    assert limit == "change at 95 % of the span from clean 90 Pa to final 250 Pa"
    assert 'data-label="What the trends saw"' in row
    # The stuck damper: the share of the operating time, against the rule's test.
    row = _row(html, f'data-finding="{fault.finding_id}"')
    value = _text(row.split("data-value>")[1].split("</td>")[0]).strip()
    limit = _text(row.split("data-limit>")[1].split("</td>")[0]).strip()
    assert value.startswith("fault during ") and "% of the operating time the rule could judge" in value
    assert limit.startswith("rule FC6: ") and "%OAmin" in limit
    # In her units: inches of water for the filter.
    world["pm"].unit_system = "us"
    world["pm"].save(update_fields=["unit_system"])
    html = _get(client, world["pm"], reverse("frontend:manager_findings")).content.decode()
    row = _row(html, f'data-finding="{loaded.pk}"')
    assert "in. w.c. at design airflow" in row and " Pa" not in _text(row)
    # The finding's own page says the same.
    page = _text(
        _get(client, world["pm"], reverse("frontend:manager_finding", kwargs={"pk": loaded.pk})).content.decode()
    )
    assert "What the trends saw" in page and "in. w.c. at design airflow (the day's median)" in page


def test_found_in_the_trends_is_said_once_and_counts_have_their_plural(client, world):
    fault, loaded = world["fault"], world["loaded"]
    html = _get(client, world["pm"], reverse("frontend:manager_findings")).content.decode()
    for finding_id in (fault.finding_id, loaded.pk):
        words = _text(_row(html, f'data-finding="{finding_id}"')).lower()
        assert words.count("found in the building-automation trends") == 1, words
    for finding_id in (fault.finding_id, loaded.pk):
        page = _text(
            _get(client, world["pm"], reverse("frontend:manager_finding", kwargs={"pk": finding_id})).content.decode()
        ).lower()
        assert page.count("found in the building-automation trends") <= 1, page
    boss_page = _get(client, world["boss"], reverse("frontend:fault", kwargs={"pk": fault.pk})).content.decode()
    assert "day(s)" not in boss_page
    days = len(fault.days_seen)
    assert f"({days} day{'' if days == 1 else 's'})" in boss_page
    corrective = _text(_get(client, world["boss"], reverse("frontend:corrective")).content.decode()).lower()
    assert corrective.count("found in the building-automation trends") == 2  # one per proposal: damper, filter
