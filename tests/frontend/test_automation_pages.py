"""The building-automation pages: a unit's trends with its fault windows, the supervisor's faults, a property
manager's summary of their own sites, and a site's point map with its trend-file import.

The world is made through the services: a point map (``automation.services.point_create``), one heating day of
15-minute trends imported as a CSV file (``automation.trends.trend_import``) in which the outdoor-air damper is
stuck open, and the night's judging (``automation.judging.unit_day_judge``), which opens Guideline 36's FC6 with
its corrective work. The clock is set for each step; nothing depends on today's date.
"""

import datetime as dt
import html
import re
import zoneinfo

import pytest
import time_machine
from django.urls import reverse

from accounts.models import Role, SiteGrant, User
from automation.fault_models import Fault
from automation.judging import unit_day_judge
from automation.models import TrendDay
from automation.trends import trend_import
from scheduling.services import task_library_install
from tests.automation.trend_builders import map_points
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit

pytestmark = pytest.mark.django_db

ZONE = "Europe/Amsterdam"
DAY1 = dt.date(2026, 1, 12)  # a Monday in January
AFTER = dt.datetime(2026, 1, 14, 11, tzinfo=dt.UTC)  # two days later, when the pages are read

# Heating with the outdoor-air damper commanded to its minimum (25 %): outdoor −5 °C, return 21 °C. A working
# damper gives mixed air of 0.25 × −5 + 0.75 × 21 = 14.5 °C; stuck open it sits at −4 °C, an outdoor-air
# fraction of 0.96, far from the minimum (Guideline 36 FC#6, thresholds as engineering.faults, from memory).
HEATING = {"OAT": -5, "RAT": 21, "MAT": -4, "SAT": 18, "SAT-SP": 18, "SF-STS": 1, "SF-SPD": 80, "OAD": 25}
HEATING |= {"HCV": 50, "CCV": 0}


def heating_day_csv(tag: str, day: dt.date, values: dict) -> str:
    """A wide trend file of one site-local day at 15-minute steps, times without a zone (the site's)."""
    names = list(values)
    lines = ["timestamp," + ",".join(f"{tag}.{n}" for n in names)]
    t = dt.datetime.combine(day, dt.time())
    while t.date() == day:
        lines.append(f"{t:%Y-%m-%d %H:%M}," + ",".join(str(values[n]) for n in names))
        t += dt.timedelta(minutes=15)
    return "\n".join(lines) + "\n"


def stuck_damper_world(*, tag: str = "AHU-07", org=None, site_name: str = "Dune Offices"):
    org = org or OrganisationFactory(name="Dune Air")
    site = SiteFactory(organisation=org, name=site_name, time_zone=ZONE)
    ahu = make_full_unit(building=BuildingFactory(site=site, name="East wing"), tag=tag)
    task_library_install()
    points = map_points(ahu)
    with time_machine.travel(dt.datetime(2026, 1, 13, 1, tzinfo=dt.UTC), tick=False):
        trend_import(site=site, text=heating_day_csv(tag, DAY1, HEATING), layout="wide")
        unit_day_judge(ahu=ahu, day=DAY1)
    fault = Fault.objects.get(ahu=ahu, code="FC6")
    return org, site, ahu, points, fault


@pytest.fixture
def world():
    org, site, ahu, points, fault = stuck_damper_world()
    boss = make_person(organisation=org, role=Role.SUPERVISOR, username="boss")
    return {"org": org, "site": site, "ahu": ahu, "points": points, "fault": fault, "boss": boss}


def get(client, user, url, **params):
    client.force_login(user)
    with time_machine.travel(AFTER, tick=False):
        return client.get(url, params)


def test_the_supervisor_sees_the_stuck_damper_with_its_section_share_evidence_and_proposed_work(client, world):
    fault, ahu = world["fault"], world["ahu"]
    wo = fault.corrective_work_order
    assert wo is not None
    page = get(client, world["boss"], reverse("frontend:faults"))
    assert page.status_code == 200
    html = page.content.decode()
    assert "AHU-07" in html and "East wing" in html and "Dune Offices" in html
    assert fault.title in html and "Guideline 36" in html and fault.code in html
    assert f"{round(fault.share * 100)} %" in html
    assert reverse("frontend:fault", kwargs={"pk": fault.pk}) in html
    with time_machine.travel(AFTER, tick=False):
        words = wo.state_words
    assert words == "awaiting approval"  # proposed by the judging, not yet approved (not yet overdue either)
    assert wo.title in html and f"data-work-state>{words}<" in html
    assert reverse("frontend:corrective") in html  # where it is approved
    # The menu has the page.
    assert f'href="{reverse("frontend:faults")}"' in html and ">Faults<" in html
    assert ahu.pk  # the unit's trend page is reached from the fault's evidence link (next test)


def test_the_evidence_shows_charts_by_group_with_the_fault_window_shaded_and_the_points_in_plain_words(client, world):
    fault = world["fault"]
    page = get(client, world["boss"], reverse("frontend:fault", kwargs={"pk": fault.pk}))
    assert page.status_code == 200
    html = page.content.decode()
    for group in ("temperatures", "commands"):
        assert f'data-chart="{group}"' in html
    assert f'data-band="{fault.title}"' in html
    assert "Mixed air temperature sensor" in html and "Damper position command" in html
    assert "Temperatures (°C)" in html
    # Default stretch: seven days up to the day the fault was last seen, on the site's clock.
    last = fault.last_seen_at.astimezone(zoneinfo.ZoneInfo(ZONE)).date()
    assert last in (DAY1, DAY1 + dt.timedelta(days=1))
    assert f'value="{(last - dt.timedelta(days=6)).isoformat()}"' in html


def test_the_units_trend_page_defaults_to_the_last_seven_days_up_to_the_sites_today(client, world):
    ahu = world["ahu"]
    page = get(client, world["boss"], reverse("frontend:unit_trends", kwargs={"pk": ahu.pk}))
    assert page.status_code == 200
    html = page.content.decode()
    today = AFTER.astimezone(zoneinfo.ZoneInfo(ZONE)).date()  # 14 Jan 2026
    assert f'value="{(today - dt.timedelta(days=6)).isoformat()}"' in html
    assert 'data-chart="temperatures"' in html and 'data-band="' in html
    # Reached from the unit's registry page.
    unit_page = get(client, world["boss"], reverse("frontend:registry_unit", kwargs={"pk": ahu.pk}))
    assert reverse("frontend:unit_trends", kwargs={"pk": ahu.pk}) in unit_page.content.decode()


def test_a_bad_stretch_is_named_and_the_default_shown(client, world):
    page = get(
        client, world["boss"], reverse("frontend:unit_trends", kwargs={"pk": world["ahu"].pk}), days="400", start="x"
    )
    assert page.status_code == 400
    html = page.content.decode()
    assert "Days: &#x27;400&#x27; is not allowed; allowed: a whole number from 1 to 31." in html
    assert (
        "From: &#x27;x&#x27; is not a date; allowed: a date as YYYY-MM-DD or DD.MM.YYYY "
        "(31 January 2026: 2026-01-31 or 31.01.2026) from 2000-01-01"
    ) in html
    assert 'data-chart="temperatures"' in html
    for start, words in (
        ("2026-02-30", "is not a date"),
        ("1999-12-31", "is not allowed; allowed: from 2000-01-01 to 2026-01-14"),
    ):
        html = get(
            client, world["boss"], reverse("frontend:unit_trends", kwargs={"pk": world["ahu"].pk}), start=start
        ).content.decode()
        assert f"From: &#x27;{start}&#x27; {words}" in html


def test_a_refused_days_value_stays_as_typed_and_a_stretch_ends_today(client, world):
    """Tryout: the Days field was reset to 7 beside the refusal of what was typed; and From today with 31 days drew
    empty charts up to a month ahead. A refused value stays in its field; a stretch ends on the site's today."""
    url = reverse("frontend:unit_trends", kwargs={"pk": world["ahu"].pk})
    for typed in ("0", "32", "-1", "abc", "1e5", "7.5"):
        page = get(client, world["boss"], url, days=typed)
        assert page.status_code == 400, typed
        html = page.content.decode()
        assert f'name="days" value="{typed}"' in html, typed
        assert f"Days: &#x27;{typed}&#x27; is not allowed; allowed: a whole number from 1 to 31." in html
    today = AFTER.astimezone(zoneinfo.ZoneInfo(ZONE)).date()  # 14 Jan 2026
    page = get(client, world["boss"], url, start=(today - dt.timedelta(days=2)).isoformat(), days="31")
    assert page.status_code == 200
    html = page.content.decode()
    assert 'name="days" value="3"' in html
    assert "12 Jan 2026 – 14 Jan 2026 on the site" in html


def test_a_stretch_typed_day_first_with_dots_is_read_as_that_day(client, world):
    """Tryout (issue 19): 08.01.2026 is 8 January 2026 (the day-first form with dots no convention reads month
    first); 08/01/2026 could be either and is refused naming the forms that are read."""
    url = reverse("frontend:unit_trends", kwargs={"pk": world["ahu"].pk})
    page = get(client, world["boss"], url, start="08.01.2026")
    assert page.status_code == 200
    assert 'value="2026-01-08"' in page.content.decode()
    html = get(client, world["boss"], url, start="08/01/2026").content.decode()
    assert (
        "From: &#x27;08/01/2026&#x27; is not a date (with slashes it could be day or month first); allowed: a date as "
        "YYYY-MM-DD or DD.MM.YYYY (31 January 2026: 2026-01-31 or 31.01.2026) from 2000-01-01"
    ) in html
    # The field is text the server reads (not the browser's locale), and keeps the refused day as typed.
    field = html.split('id="start"')[0].rsplit("<input", 1)[1] + html.split('id="start"')[1].split(">", 1)[0]
    assert 'type="text"' in field and 'value="08/01/2026"' in field


def test_values_are_in_the_persons_units(client, world):
    """A person who reads US units sees the temperatures chart in °F (engineering.units)."""
    boss: User = world["boss"]
    boss.unit_system = "us"
    boss.save(update_fields=["unit_system"])
    html = get(client, boss, reverse("frontend:fault", kwargs={"pk": world["fault"].pk})).content.decode()
    assert "Temperatures (°F)" in html and "Temperatures (°C)" not in html


def test_another_organisations_fault_unit_and_site_are_not_found(client, world):
    stranger = make_person(organisation=OrganisationFactory(), role=Role.SUPERVISOR, username="stranger")
    for url in (
        reverse("frontend:fault", kwargs={"pk": world["fault"].pk}),
        reverse("frontend:unit_trends", kwargs={"pk": world["ahu"].pk}),
        reverse("frontend:site_points", kwargs={"pk": world["site"].pk}),
    ):
        assert get(client, stranger, url).status_code == 404, url
    html = get(client, stranger, reverse("frontend:faults")).content.decode()
    assert world["fault"].title not in html and "data-no-faults" in html
    # Another organisation's site as the filter: refused as any unknown value is, naming it, telling nothing of it.
    for value in (str(world["site"].pk), "abc", "999999"):
        refused = get(client, stranger, reverse("frontend:faults"), site=value)
        assert refused.status_code == 400, value
        text = refused.content.decode()
        assert f"Site: &#x27;{value}&#x27; is not one of the sites you may see" in text
        assert world["site"].name not in text and world["fault"].title not in text


def test_a_technician_may_not_open_the_faults(client, world):
    tech = make_person(organisation=world["org"], role=Role.TECHNICIAN, username="tech")
    assert get(client, tech, reverse("frontend:faults")).status_code == 403
    assert get(client, tech, reverse("frontend:fault", kwargs={"pk": world["fault"].pk})).status_code == 403


def test_the_site_filter_and_closed_faults_folded_away(client, world):
    stuck_damper_world(tag="AHU-09", org=world["org"], site_name="Pier House")
    html = get(client, world["boss"], reverse("frontend:faults")).content.decode()
    assert html.count("data-evidence=") == 2
    html = get(client, world["boss"], reverse("frontend:faults"), site=str(world["site"].pk)).content.decode()
    assert html.count("data-evidence=") == 1 and "AHU-07" in html and "AHU-09" not in html
    fault = world["fault"]
    Fault.objects.filter(pk=fault.pk).update(
        state=Fault.State.CLOSED, closed_at=AFTER, close_cause=Fault.CloseCause.ABSENT
    )
    html = get(client, world["boss"], reverse("frontend:faults"), site=str(world["site"].pk)).content.decode()
    assert "data-no-faults" in html  # its only fault is closed: folded away below
    assert '<details class="card" data-faults="closed">' in html and "not found for the set time" in html


def test_a_property_manager_sees_a_summary_of_their_own_sites_only(client, world):
    site = world["site"]
    other = SiteFactory(organisation=world["org"], name="Dock Hall", time_zone=ZONE)
    hidden = SiteFactory(organisation=world["org"], name="Hidden Yard", time_zone=ZONE)
    pm = make_person(organisation=world["org"], role=Role.PROPERTY_MANAGER, username="pm")
    SiteGrant.objects.create(user=pm, site=site)
    SiteGrant.objects.create(user=pm, site=other)
    page = get(client, pm, reverse("frontend:faults"))
    assert page.status_code == 200
    html = page.content.decode()
    assert (
        f'<tr data-site="{site.pk}"><th scope="row">Dune Offices</th><td class="num" data-label="Active faults">1<'
        in html
    )
    assert (
        f'<tr data-site="{other.pk}"><th scope="row">Dock Hall</th><td class="num" data-label="Active faults">0<'
        in html
    )
    assert hidden.name not in html
    # Each active fault in words: the unit, what was found (linked to her finding's page), since when, the work.
    fault = world["fault"]
    row = html.split(f'data-fault="{fault.pk}"')[1].split("</tr>")[0]
    assert "AHU-07" in row and "Dune Offices" in row and fault.title in row
    assert reverse("frontend:manager_finding", kwargs={"pk": fault.finding_id}) in row
    assert "12 Jan 2026 00:15 CET" in row and "awaiting approval" in row
    assert get(client, pm, reverse("frontend:manager_finding", kwargs={"pk": fault.finding_id})).status_code == 200
    assert 'data-evidence="' not in html  # no supervisor's detail
    assert get(client, pm, reverse("frontend:fault", kwargs={"pk": world["fault"].pk})).status_code == 403
    ungranted = make_person(organisation=world["org"], role=Role.PROPERTY_MANAGER, username="pm2")
    html = get(client, ungranted, reverse("frontend:faults")).content.decode()
    assert site.name not in html and "data-no-faults" in html


def test_the_point_map_lists_brick_classes_and_bacnet_addresses_and_links_the_brick_model(client, world):
    html = get(client, world["boss"], reverse("frontend:site_points", kwargs={"pk": world["site"].pk})).content.decode()
    assert "AHU-07.MAT" in html and "Mixed air temperature sensor" in html and "Mixed_Air_Temperature_Sensor" in html
    assert reverse("automation_api:site-brick", kwargs={"pk": world["site"].pk}) in html
    client.force_login(world["boss"])
    brick = client.get(reverse("automation_api:site-brick", kwargs={"pk": world["site"].pk}))
    assert brick.status_code == 200 and "Mixed_Air_Temperature_Sensor" in brick.content.decode()


def test_a_wrong_trend_file_lists_each_bad_cell_and_stores_nothing(client, world):
    site, boss = world["site"], world["boss"]
    before = TrendDay.objects.count()
    text = "timestamp,AHU-07.MAT,AHU-07.OAT\n2026-01-13 08:00,abc,1\n2026-01-13 08:15,5,1\n2026-01-13 08:30,5,9999\n"
    upload = _file("bad.csv", text)
    client.force_login(boss)
    with time_machine.travel(AFTER, tick=False):
        page = client.post(
            reverse("frontend:site_points", kwargs={"pk": site.pk}), {"layout": "wide", "units": "si", "file": upload}
        )
    assert page.status_code == 400
    html = page.content.decode()
    assert "Nothing was imported" in html and html.count("data-row-error") >= 2
    assert "abc" in html and "9999" in html  # each bad cell with its value
    unknown = "timestamp,AHU-07.NOPE\n2026-01-13 08:00,1\n"
    with time_machine.travel(AFTER, tick=False):
        page = client.post(
            reverse("frontend:site_points", kwargs={"pk": site.pk}),
            {"layout": "wide", "units": "si", "file": _file("x.csv", unknown)},
        )
    assert page.status_code == 400 and "no point of the site has this name" in page.content.decode()
    assert TrendDay.objects.count() == before


def test_a_good_trend_file_is_imported_through_the_service(client, world):
    site, boss = world["site"], world["boss"]
    text = "timestamp,AHU-07.MAT\n2026-01-13 08:00,5\n2026-01-13 08:15,6\n"
    client.force_login(boss)
    with time_machine.travel(AFTER, tick=False):
        page = client.post(
            reverse("frontend:site_points", kwargs={"pk": site.pk}),
            {"layout": "wide", "units": "si", "file": _file("good.csv", text)},
            follow=True,
        )
    assert page.status_code == 200 and "Imported 2 values of 1 point from 2 rows." in page.content.decode()


def test_the_upload_form_names_a_missing_file_and_a_bad_layout(client, world):
    client.force_login(world["boss"])
    page = client.post(reverse("frontend:site_points", kwargs={"pk": world["site"].pk}), {"layout": "sideways"})
    assert page.status_code == 400
    html = page.content.decode()
    assert "Layout: &#x27;sideways&#x27; is not offered; allowed: wide, long." in html
    assert "File: choose a trend CSV file to import." in html
    assert "Units of the values: choose the units the file&#x27;s values are in" in html
    tech = make_person(organisation=world["org"], role=Role.TECHNICIAN, username="tech2")
    client.force_login(tech)
    assert client.post(reverse("frontend:site_points", kwargs={"pk": world["site"].pk}), {}).status_code in (403, 404)


def test_a_big_bad_file_runs_as_a_job_whose_refusal_and_problems_the_point_map_lists(
    client, world, monkeypatch, django_capture_on_commit_callbacks
):
    """A file over the background threshold is a job; after the redirect the page lists it, marked as the upload
    just made, refused, with each problem's line, column, value and what is allowed; nothing is stored."""
    from automation import trends

    site, boss = world["site"], world["boss"]
    monkeypatch.setattr(trends, "BACKGROUND_ROWS", 3)
    before = TrendDay.objects.count()
    rows = [f"2026-01-13 {h:02d}:00,{5 if h != 4 else 'hot'}" for h in range(6)]
    text = "timestamp,AHU-07.MAT\n" + "\n".join(rows) + "\n2026-01-13 07:00,999\n"
    client.force_login(boss)
    with time_machine.travel(AFTER, tick=False):
        with django_capture_on_commit_callbacks(execute=True):
            posted = client.post(
                reverse("frontend:site_points", kwargs={"pk": site.pk}),
                {"layout": "wide", "units": "si", "file": _file("big.csv", text)},
            )
        assert posted.status_code == 302 and "?job=" in posted.url
        page = client.get(posted.url)
    html = page.content.decode()
    assert "imported in the background" in html
    assert 'data-state="refused"' in html and "data-current" in html and "big.csv" in html
    assert "Refused: nothing imported" in html
    assert html.count("data-job-error") == 2
    assert "hot" in html and "is not a number; allowed: a number from -60 to 60 °C" in html
    assert "999" in html and "is out of range for a mixed air temperature sensor" in html
    assert TrendDay.objects.count() == before
    # Read later without the job named, it is listed still, not marked.
    with time_machine.travel(AFTER, tick=False):
        html = client.get(reverse("frontend:site_points", kwargs={"pk": site.pk})).content.decode()
    assert 'data-state="refused"' in html and "data-current" not in html


def test_the_point_map_shows_each_points_trend_header_telling_same_tag_units_apart(client, world):
    from automation.models import Point

    site = world["site"]
    twins = [
        make_full_unit(building=BuildingFactory(site=site, name=f"{side} block"), tag="AHU-02")
        for side in ("North", "South")
    ]
    for ahu in twins:
        Point.objects.create(ahu=ahu, name="AHU-02.OAT", brick_class="Outside_Air_Temperature_Sensor", unit="DEG_C")
    html = get(client, world["boss"], reverse("frontend:site_points", kwargs={"pk": site.pk})).content.decode()
    for ahu in twins:
        assert f"<code data-trend-header>{ahu.label_code}/AHU-02.OAT</code>" in html
    assert "<code data-trend-header>AHU-07.MAT</code>" in html


def _file(name: str, text: str):
    from django.core.files.uploadedfile import SimpleUploadedFile

    return SimpleUploadedFile(name, text.encode(), content_type="text/csv")


# ---------------------------------------------------------------------------
# A freeze event's evidence: the stages drawn from the rule's own definitions, each window once, the text in
# the reader's units, the source cited without working notes.
# ---------------------------------------------------------------------------

FREEZE_DAY = dt.date(2026, 1, 20)


def freeze_day_csv(tag: str, day: dt.date) -> str:
    """A heating day whose supply air falls to 0.5 °C from 02:00 to 03:30 (site time): below every freeze stage's
    temperature (4.4, 3.3 and 1.0 °C) for longer than each stage's time."""
    names = list(HEATING)
    lines = ["timestamp," + ",".join(f"{tag}.{n}" for n in names)]
    t = dt.datetime.combine(day, dt.time())
    while t.date() == day:
        cold = dt.time(2) <= t.time() < dt.time(3, 30)
        values = HEATING | ({"SAT": 0.5} if cold else {})
        lines.append(f"{t:%Y-%m-%d %H:%M}," + ",".join(str(values[n]) for n in names))
        t += dt.timedelta(minutes=15)
    return "\n".join(lines) + "\n"


@pytest.fixture
def freeze_world(world):
    site, ahu = world["site"], world["ahu"]
    with time_machine.travel(dt.datetime(2026, 1, 21, 1, tzinfo=dt.UTC), tick=False):
        trend_import(site=site, text=freeze_day_csv(ahu.tag, FREEZE_DAY), layout="wide")
        unit_day_judge(ahu=ahu, day=FREEZE_DAY)
    world["freeze"] = Fault.objects.get(ahu=ahu, code=Fault.FREEZE)
    return world


def _freeze_page(client, world, *, system: str = "si") -> str:
    boss: User = world["boss"]
    boss.unit_system = system
    boss.save(update_fields=["unit_system"])
    client.force_login(boss)
    with time_machine.travel(dt.datetime(2026, 1, 22, 11, tzinfo=dt.UTC), tick=False):
        page = client.get(reverse("frontend:fault", kwargs={"pk": world["freeze"].pk}))
    assert page.status_code == 200
    return page.content.decode()


def _reason(html: str) -> str:
    return re.search(r"<p data-fault-reason>(.*?)</p>", html, re.S).group(1)


def test_the_freeze_charts_stage_lines_are_the_rules_own_thresholds_with_distinct_labels_apart(client, freeze_world):
    from engineering.faults.freeze import G36_FREEZE_STAGES

    html = _freeze_page(client, freeze_world)
    limits = dict(re.findall(r'data-limit="([^"]+)" data-value="([^"]+)"', html))
    assert sorted(float(v) for v in limits.values()) == sorted({st.below_c for st in G36_FREEZE_STAGES})
    assert len(set(limits)) == len(limits) == 3  # one line per temperature, each with its own words
    # Every stage is on its temperature's line with its time, as the text says it.
    for st in G36_FREEZE_STAGES:
        [words] = [w for w, v in limits.items() if float(v) == st.below_c]
        assert f"{st.name} after {st.for_s / 60:g} min" in words
    reason = _reason(html)
    assert "stage 3 (below 3.3 °C for 15 min or below 1.0 °C for 5 min)" in reason
    assert "freeze below 3.3 °C: stage 2 after 5 min, stage 3 after 15 min" in limits
    # Each line's words are said once, in the chart's key above the plot (page text, wrapping on a phone), never
    # drawn on the plot where close lines (3.3 and 1.0 °C) would print them over each other.
    chart = re.search(r'data-chart="temperatures">(.*?)</figure>', html, re.S).group(1)
    key, plot = chart.split("<svg viewBox=")[0], chart.split("<svg viewBox=")[1]
    labels = re.findall(r'<span data-limit-label="([^"]+)">', key)
    assert sorted(labels) == sorted(limits) and len(set(labels)) == 3
    assert "data-limit-label" not in plot and not any(f">{words}<" in plot for words in limits)
    # Told apart on the plot by their dash, as the key shows them.
    dashes = re.findall(r'stroke-dasharray="([^"]+)" data-limit=', plot)
    assert len(dashes) == len(set(dashes)) == 3


def test_a_freeze_window_is_listed_once_and_the_source_has_no_working_notes(client, freeze_world):
    html = _freeze_page(client, freeze_world)
    listed = re.search(r"<ul data-windows>(.*?)</ul>", html, re.S).group(1)
    items = re.findall(r"<li>(.*?)</li>", listed)
    assert len(items) == len(set(items))
    assert sum("(FREEZE)" in i for i in items) == 1  # stages 1, 2 and 3 over one run: one window
    temperatures = re.search(r'data-chart="temperatures">(.*?)</figure>', html, re.S).group(1)
    assert temperatures.count('data-band="Supply air near freezing"') == 1
    assert "from memory" not in html
    assert "ASHRAE Guideline 36-2018, section 5.16.12" in html
    faults = get(client, freeze_world["boss"], reverse("frontend:faults")).content.decode()
    assert "from memory" not in faults and "ASHRAE Guideline 36-2018, section 5.16.14" in faults


def test_a_us_reader_reads_the_freeze_text_in_fahrenheit_like_its_chart(client, freeze_world):
    html = _freeze_page(client, freeze_world, system="us")
    reason = _reason(html)
    assert "°F" in reason and "°C" not in reason
    assert "stage 3 (below 37.9 °F for 15 min or below 33.8 °F for 5 min)" in reason
    said = "The supply air fell to 32.9 °F at 02:00 CET on the night of 19–20 Jan 2026 and stayed below 37.9 °F for 1 h"
    assert said in reason
    assert "freeze below 37.9 °F: stage 2 after 5 min, stage 3 after 15 min" in html


def test_the_freeze_event_says_plainly_how_low_how_long_which_stage_and_what_the_stage_does(client, freeze_world):
    """The supply air at 0.5 °C from 02:00 to 03:30: the sentence with the event says how low it went and when, how
    long it stayed below the highest stage's temperature, which stage that is and how it is reached, what the unit
    did when the air was coldest (its fan, damper and heating valve, each with its point), and what the guideline's
    freeze protection does at that stage (ASHRAE Guideline 36, May 2020, section 5.16.12, as the Modelica Buildings
    library's FreezeProtection block documents it: at stage 3 the fans stop and the unit stays off until reset).
    The technician reads the same sentence on the work the event proposed, the manager on its finding."""
    from engineering.faults.freeze import STAGE_ACTIONS

    reason = html.unescape(_reason(_freeze_page(client, freeze_world)))
    said = (
        "The supply air fell to 0.5 °C at 02:00 CET on the night of 19–20 Jan 2026 and stayed below 3.3 °C for "
        "1 h 30 min: it reached freeze-protection stage 3 (below 3.3 °C for 15 min or below 1.0 °C for 5 min), the "
        f"last stage. At stage 3 of the guideline's freeze protection {STAGE_ACTIONS['stage 3']}. When the supply "
        "air was coldest: the supply fan was running (trend point AHU-07.SF-STS); the outdoor-air damper was "
        "commanded 25 % open (trend point AHU-07.OAD); the Heating coil valve was commanded 50 % open (trend point "
        "AHU-07.HCV). The unit is not ready for freeze protection until its freeze-protection test passes again"
    )
    assert said in reason
    assert "the supply and return fans stop" in reason and "until someone resets it" in reason
    assert reason.count("found in the building-automation trends") == 1
    fault = freeze_world["freeze"]
    fault.refresh_from_db()
    assert said in fault.corrective_work_order.reason  # what the technician's work says
    assert said in fault.finding.reason and "found in" not in fault.finding.reason.lower()  # the manager's finding


def test_the_freeze_fault_says_its_risk_where_no_number_can_be_given(client, freeze_world):
    from engineering.faults.freeze import FREEZE_RISK

    html = get(client, freeze_world["boss"], reverse("frontend:faults")).content.decode()
    assert FREEZE_RISK in html
    assert "risk of coil freeze damage" in _freeze_page(client, freeze_world)


def test_the_legend_tells_the_coil_valves_apart_and_names_points_short(client, world):
    html = get(client, world["boss"], reverse("frontend:fault", kwargs={"pk": world["fault"].pk})).content.decode()
    assert "Cooling coil valve" in html and "Heating coil valve" in html
    assert "Coil valve position command</text>" not in html
    assert "Supply fan speed" in html and "Outdoor-air damper position" in html and "…</text>" not in html
    # The commands chart's axis: round percent ticks, not the data's padded extremes.
    commands = re.search(r'data-chart="commands">(.*?)</figure>', html, re.S).group(1)
    assert re.findall(r'data-tick="([^"]+)"', commands) == ["0", "25", "50", "75", "100"]
