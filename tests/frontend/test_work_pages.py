"""Work beyond the plan in the staff pages (frontend/views/work_pages.py), over HTTP, on the board world's clock:
Wednesday 5 March 2025, 10:00 UTC = 11:00 CET in Amsterdam (tests/flows/board_world.py).

- The unit list is grouped by site and names each unit with its building (two AHU-01s at Quayside Works).
- A call-out for Mill Block's AHU-01 by 14:00 today, given to Tess (6 h of tasks and a drive between two sites
  already), warns before anything is saved with the board's numbers and offers Omar; confirmed, it shows on the
  board's week with its time, on Tess's today page and in her calendar feed as an event ending at 14:00 CET.
- Every field refuses bad input at the field, naming the value and what is allowed; nothing is saved.
- A finding offers "Make a work order", prefilled, needing no approval; a site offers the frost check.
"""

import datetime as dt
import zoneinfo

import pytest
import time_machine
from django.contrib.messages import get_messages
from django.urls import reverse
from icalendar import Calendar

from inspections.models import Finding
from inspections.services.findings import findings_close_corrected
from inventory.models import AHU
from scheduling.calendar import feed_ics
from scheduling.models import WorkOrder
from scheduling.services.library import task_library_install
from scheduling.services.work_orders import work_order_assign, work_order_complete
from tests.factories.accounts import OrganisationFactory
from tests.factories.inventory import AHUFactory, BuildingFactory, ComponentFactory, SiteFactory
from tests.flows import board_world
from tests.reports import builders

pytestmark = pytest.mark.django_db
NEW = "/new-work/"
AMS = zoneinfo.ZoneInfo("Europe/Amsterdam")
# Tess: 360 min of tasks today at both sites (22.24 km apart, x 1.3 road detour at 40 km/h: common practice)
TESS_WITH_CALLOUT_H = (360 + 120) / 60 + 22.24 * 1.3 / 40  # 8.72 h against 7.5 h
OMAR_WITH_CALLOUT_H = (180 + 120) / 60  # 5.0 h against 7.0 h: Quayside only, no drive


@pytest.fixture
def world(db):
    with time_machine.travel(board_world.NOW, tick=False):
        yield board_world.build()


@pytest.fixture
def desk(client, world):
    client.force_login(world.supervisor)
    return client


def callout(world, **changes) -> dict:
    body = {
        "unit": str(world.mill_unit.pk),
        "kind": "call_out",
        "title": "Office on level 2 too warm",
        "description": "Facilities called at 10:50: supply air warm, fan noisy.",
        "priority": "urgent",
        "due_date": "2025-03-05",
        "due_time": "14:00",
        "task_name": "Find why the supply air is warm; check the belt and the valve",
        "task_minutes": "120",
        "task_skill": "mechanical",
        "assignee": str(world.tess.pk),
    }
    return {k: v for k, v in {**body, **changes}.items() if v is not None}


def said(response) -> str:
    return " ".join(str(m) for m in get_messages(response.wsgi_request))


def test_units_are_grouped_by_site_with_their_buildings(desk, world):
    html = desk.get(NEW).content.decode()
    assert '<optgroup label="Quayside Works">' in html
    assert "AHU-01 (Mill Block)" in html and "AHU-01 (Granary)" in html
    assert "Check freeze protection before tonight's frost: Orchard Park" in html


def test_the_form_offers_the_units_library_tasks_and_a_time_on_the_sites_clock(desk, world):
    html = desk.get(NEW, {"unit": world.mill_unit.pk}).content.decode()
    assert "AHU-01 (Mill Block)" in html and "Now at Quayside Works: 5 Mar 2025 11:00 CET" in html
    assert 'name="due_date" value="2025-03-05"' in html and 'name="due_time" value="13:00"' in html
    assert 'value="coil_deep_clean"' in html and "180 min" in html


def test_a_call_out_over_capacity_warns_first_then_shows_everywhere(desk, world):
    response = desk.post(NEW, callout(world))
    html = response.content.decode()
    assert response.status_code == 200 and "data-over-capacity" in html
    assert f"Tess Field on Wed 5 Mar would have {TESS_WITH_CALLOUT_H:.1f} h" in html
    assert "over the capacity of 7.5 h a day" in html
    assert f"Least loaded with the skills: Omar Vent, {OMAR_WITH_CALLOUT_H:.1f} h of 7.0 h" in html
    assert "due by 14:00 CET on 5 Mar" in html and "Nothing is saved yet." in html
    assert not WorkOrder.objects.filter(kind="call_out").exists()

    response = desk.post(NEW, callout(world, confirm="1"))
    assert response.status_code == 302 and response["Location"] == "/board/?week=2025-03-03"
    assert "Call-out made: AHU-01 (Mill Block) at Quayside Works — Office on level 2 too warm, due by 14:00 CET" in (
        said(response)
    )
    assert f"assigned to Tess Field, over capacity: {TESS_WITH_CALLOUT_H:.1f} h of 7.5 h" in said(response)
    wo = WorkOrder.objects.get(kind="call_out")
    assert (wo.assignee, wo.state, wo.priority, wo.scheduled_for) == (
        world.tess,
        "assigned",
        "urgent",
        dt.date(2025, 3, 5),
    )
    assert wo.due_by.astimezone(AMS).time() == dt.time(14, 0)

    board = desk.get("/board/?week=2025-03-03").content.decode()
    assert "Assigned (7)" in board and "Office on level 2 too warm" in board and "by 14:00 CET" in board
    assert '<span class="tag">call-out</span>' in board

    desk.force_login(world.tess)
    today = desk.get("/today/").content.decode()
    assert "Office on level 2 too warm" in today and "14:00 CET" in today and "Call-out" in today

    # The phone's today answer (API) carries the time too, as the work-order endpoint does.
    api = desk.get("/api/scheduling/today/?day=2025-03-05").json()
    (row,) = [wo for visit in api for wo in visit["work_orders"] if wo["kind"] == "call_out"]
    assert row["due_by"] == "2025-03-05T13:00:00Z" and row["tasks"][0]["estimated_minutes"] == 120
    assert desk.get(f"/api/scheduling/work-orders/{wo.public_id}/").json()["due_by"] == "2025-03-05T13:00:00Z"

    (event,) = [
        e for e in Calendar.from_ical(feed_ics(user=world.tess)).walk("VEVENT") if "too warm" in str(e["summary"])
    ]
    assert str(event["summary"]).startswith("Call-out, urgent: AHU-01:")
    assert event.decoded("dtend") == dt.datetime(2025, 3, 5, 14, 0, tzinfo=AMS)
    assert event.decoded("dtstart") == dt.datetime(2025, 3, 5, 12, 0, tzinfo=AMS)


def test_taking_the_suggestion_assigns_the_least_loaded(desk, world):
    response = desk.post(NEW, callout(world, assignee=str(world.omar.pk)))
    assert response.status_code == 302
    assert WorkOrder.objects.get(kind="call_out").assignee == world.omar


def test_a_technician_without_the_skill_is_warned_by_name(desk, world):
    html = desk.post(NEW, callout(world, assignee=str(world.pia.pk))).content.decode()
    assert "Pia Wire lacks the skill this work needs: mechanical." in html
    assert "Least loaded with the skills: Omar Vent" in html
    assert not WorkOrder.objects.filter(kind="call_out").exists()


def test_without_a_technician_it_waits_on_the_board(desk, world):
    response = desk.post(NEW, callout(world, assignee=""))
    assert "; assign it on the board" in said(response)
    wo = WorkOrder.objects.get(kind="call_out")
    assert wo.state == "planned" and wo.assignee is None


@pytest.mark.parametrize(
    "changes,words",
    [
        ({"unit": ""}, "Unit: none chosen"),
        ({"title": ""}, "Title is required"),
        ({"title": "x" * 10_000}, "Title: 10000 characters is too long; allowed: at most 200 characters"),
        ({"title": "warm\x00office"}, "Title: the text contains control characters"),
        ({"priority": "whenever"}, "Priority: &#x27;whenever&#x27; is not one of low, normal, high, urgent"),
        ({"due_time": "09:00"}, "Due: 5 Mar 2025 09:00 CET is in the past at Quayside Works"),
        ({"due_date": "2025-03-04"}, "is in the past at Quayside Works"),
        ({"due_time": "25:00"}, "Due time: &#x27;25:00&#x27; is not a time as HH:MM; allowed: 00:00 to 23:59"),
        ({"due_time": ""}, "Due time is required"),
        (
            {"due_date": "5/3/2025"},
            "Due day: &#x27;5/3/2025&#x27; is not a date (with slashes it could be day or month first); allowed: "
            "a date as YYYY-MM-DD or DD.MM.YYYY (31 January 2026: 2026-01-31 or 31.01.2026)",
        ),
        (
            {"task_minutes": "lots"},
            "Estimated minutes: &#x27;lots&#x27; is not a whole number; allowed: a whole number from 1 to 960",
        ),
        ({"task_minutes": "0"}, "Estimated minutes: 0 is out of range; allowed: a whole number from 1 to 960"),
        ({"task_skill": "juggling"}, "Skill: &#x27;juggling&#x27; is not one of mechanical"),
        ({"task_name": "", "task_minutes": ""}, "Tasks: none chosen"),
        ({"kind": "corrective"}, "Kind: corrective work is made from a finding"),
        ({"assignee": "999999"}, "Technician: no active technician &#x27;999999&#x27;"),
    ],
)
def test_bad_input_is_refused_at_its_field(desk, world, changes, words):
    response = desk.post(NEW, callout(world, **changes))
    html = response.content.decode()
    assert response.status_code == 200 and words in html, html[html.find("errorlist") - 200 :][:1500]
    assert "Nothing was saved" in html
    assert not WorkOrder.objects.filter(kind="call_out").exists()


@pytest.mark.parametrize(
    ("typed", "words"),
    [
        ("-1", "Estimated minutes: -1 is out of range; allowed: a whole number from 1 to 960"),
        ("961", "Estimated minutes: 961 is out of range; allowed: a whole number from 1 to 960"),
        ("12a", "Estimated minutes: &#x27;12a&#x27; is not a whole number; allowed: a whole number from 1 to 960"),
        ("2.5", "Estimated minutes: &#x27;2.5&#x27; is not a whole number; allowed: a whole number from 1 to 960"),
    ],
)
def test_minutes_outside_the_range_are_named_with_the_range(desk, world, typed, words):
    """Tryout: a supervisor typed -1 minutes on New work and read "'-1' is not a whole number": -1 is a whole number,
    the range is what it misses. The field, the value and the range are said; a non-number is told the range too."""
    html = desk.post(NEW, callout(world, task_minutes=typed)).content.decode()
    assert words in html, html[html.find("errorlist") - 200 :][:1500]
    assert "-1&#x27; is not a whole number" not in html
    assert not WorkOrder.objects.filter(kind="call_out").exists()


def test_a_due_day_typed_day_first_with_dots_is_that_day(desk, world):
    """Tryout (issue 19): 05.03.2025 is 5 March 2025, as 2025-03-05 is."""
    desk.post(NEW, callout(world, due_date="05.03.2025", assignee=""))
    wo = WorkOrder.objects.get(kind="call_out")
    assert wo.due_by.astimezone(AMS).date() == dt.date(2025, 3, 5)


def test_every_refusal_is_said_at_once(desk, world):
    """A form with several slips names them all, the form's and the service's, not one per try."""
    body = callout(
        world, title="x" * 10_000, priority="asap", due_date="2026-02-30", due_time="7pm", task_minutes="1e3"
    )
    html = desk.post(NEW, body).content.decode()
    for words in (
        "Title: 10000 characters is too long",
        "Priority: &#x27;asap&#x27; is not one of",
        "Due day: &#x27;2026-02-30&#x27; is not a date; allowed: a date as YYYY-MM-DD or DD.MM.YYYY",
        "Due time: &#x27;7pm&#x27; is not a time as HH:MM",
        "Estimated minutes: &#x27;1e3&#x27; is not a whole number",
    ):
        assert words in html
    assert not WorkOrder.objects.filter(kind="call_out").exists()


def test_continue_without_a_unit_says_so(desk, world):
    html = desk.get(NEW, {"unit": ""}).content.decode()
    assert "Unit: none chosen; allowed: one of the units listed, by site and building" in html


def test_a_retired_unit_is_refused(desk, world):
    AHU.objects.filter(pk=world.mill_unit.pk).update(status=AHU.Status.RETIRED)
    html = desk.post(NEW, callout(world)).content.decode()
    assert "Unit: AHU-01 (Mill Block) is retired" in html
    assert not WorkOrder.objects.filter(kind="call_out").exists()


def test_a_deactivated_technician_is_not_offered_nor_taken(desk, world):
    world.tess.is_active = False
    world.tess.save()
    assert "Tess Field" not in desk.get(NEW, {"unit": world.mill_unit.pk}).content.decode()
    html = desk.post(NEW, callout(world, confirm="1")).content.decode()
    assert f"Technician: no active technician &#x27;{world.tess.pk}&#x27;" in html
    assert not WorkOrder.objects.filter(kind="call_out").exists()


def test_another_organisations_unit_or_site_is_not_found(desk, world):
    theirs = AHUFactory(building=BuildingFactory(site=SiteFactory(organisation=OrganisationFactory())))
    assert desk.get(NEW, {"unit": theirs.pk}).status_code == 404
    assert desk.post(NEW, callout(world, unit=str(theirs.pk))).status_code == 404
    assert desk.post(reverse("frontend:work_frost", args=[theirs.building.site_id])).status_code == 404
    assert not WorkOrder.objects.filter(ahu=theirs).exists()


def test_technicians_and_managers_may_not_make_work(client, world):
    client.force_login(world.tess)
    assert client.get(NEW).status_code == 403
    assert client.post(NEW, callout(world)).status_code == 403


def test_a_finding_offers_a_prefilled_work_order_that_needs_no_approval(desk, world):
    wo = WorkOrder.objects.filter(ahu=world.mill_unit).first()
    insp = builders.inspection(wo, world.tess, finished="2025-03-04")
    part = ComponentFactory(ahu=world.mill_unit, name="Final filters")
    ev = builders.evaluation(
        insp, "filter_check", "dp", component=part, verdict="fail", reason="pressure drop 300 Pa, final 250 Pa"
    )
    finding = builders.finding(insp, ev, severity="high", title="Final filters loaded", opened="2025-03-04")
    assert f'href="/new-work/?finding={finding.pk}"' in desk.get("/findings/").content.decode()
    html = desk.get(NEW, {"finding": finding.pk}).content.decode()
    assert "Work order for a finding" in html and 'value="Final filters loaded"' in html
    assert "on Final filters" in html and '<option value="high" selected>' in html
    body = callout(world, finding=str(finding.pk), kind=None, title="Final filters loaded", assignee="")
    response = desk.post(NEW, body)
    assert response.status_code == 302, response.content.decode()[:3000]
    made = WorkOrder.objects.get(source_ref__startswith=f"finding {finding.pk}")
    assert (made.kind, made.approval, made.component) == ("corrective", "approved", part)
    assert made.state_words == "planned"
    # It is the finding's corrective work now: the page says its state, and no second one is offered or taken.
    assert Finding.objects.get(pk=finding.pk).corrective_work_order == made
    findings_page = desk.get("/findings/").content.decode()
    assert "Corrective work: approved · planned" in findings_page and "?finding=" not in findings_page
    html = desk.post(NEW, body).content.decode()
    assert "already has open corrective work, “Final filters loaded” (planned)" in html
    assert WorkOrder.objects.filter(kind="corrective").count() == 1
    # Done: completing it closes the finding as corrected.
    work_order_assign(work_order=made, assignee=world.omar, by=world.supervisor)
    done = work_order_complete(work_order=made, by=world.omar)
    findings_close_corrected(work_order=done, by=world.supervisor)
    assert Finding.objects.get(pk=finding.pk).state == "closed"


def test_the_frost_check_from_a_site_says_what_it_made(desk, world):
    task_library_install()
    ComponentFactory(
        ahu=world.granary_unit, kind="electric_preheater", name="Preheater",
        specs={"power_w": 24000, "stages": 2, "switch_on_c": 3},
    )  # fmt: skip
    url = reverse("frontend:work_frost", args=[world.quayside.pk])
    response = desk.post(url)
    assert response.status_code == 302 and response["Location"] == "/board/?week=2025-03-03"
    words = said(response)
    assert "Frost check at Quayside Works: 1 urgent work order made, due by 18:2" in words
    assert "CET today (sunset there): AHU-01 (Granary)." in words
    again = said(desk.post(url))
    assert "Already holding an open freeze-protection check, so none added: AHU-01 (Granary)" in again
    assert WorkOrder.objects.filter(kind="ad_hoc").count() == 1
    nothing = said(desk.post(reverse("frontend:work_frost", args=[world.orchard.pk])))
    assert "no in-service unit there has an electric preheater or a preheat water coil" in nothing


def test_the_technicians_form_shows_the_safety_box_of_the_chosen_tasks(desk, world):
    """A call-out with a task in words opens on the phone with the general lockout box; the frost check with the
    freeze-protection task's own cautions (mains-voltage preheaters), as on preventive work."""
    from inspections.cautions import ELECTRIC, LOCKOUT
    from inspections.services import checklist_library_install

    task_library_install()
    checklist_library_install()
    desk.post(NEW, callout(world, confirm="1"))
    callout_wo = WorkOrder.objects.get(kind="call_out")
    ComponentFactory(
        ahu=world.granary_unit, kind="electric_preheater", name="Preheater",
        specs={"power_w": 24000, "stages": 2, "switch_on_c": 3},
    )  # fmt: skip
    desk.post(reverse("frontend:work_frost", args=[world.quayside.pk]))
    frost = WorkOrder.objects.get(kind="ad_hoc")
    WorkOrder.objects.filter(pk=frost.pk).update(assignee=world.tess, state="assigned")
    desk.force_login(world.tess)
    page = desk.get(reverse("frontend:checklist", args=[callout_wo.public_id])).content.decode()
    assert "Office on level 2 too warm" in page and LOCKOUT[:40] in page
    page = desk.get(reverse("frontend:checklist", args=[frost.public_id])).content.decode()
    assert "Check freeze protection before tonight" in page and ELECTRIC[:40] in page


def test_back_to_change_it_from_the_confirm_page_keeps_what_was_typed(desk, world):
    """The over-capacity page offers "Back to change it": the form comes back with the words, the day, the task
    and the technician as typed, and nothing is saved."""
    import re

    html = desk.post(NEW, callout(world)).content.decode()
    back_form = html.split("data-back-to-change>")[1].split("</form>")[0]
    assert "Back to change it" in back_form
    fields = re.findall(r'<input type="hidden" name="([^"]+)" value="([^"]*)">', back_form)
    data: dict[str, list[str]] = {}
    for k, v in fields:
        data.setdefault(k, []).append(v)
    assert data["back"] == ["1"] and data["assignee"] == [str(world.tess.pk)] and "confirm" not in data
    page = desk.post(NEW, data)
    form = page.content.decode()
    assert page.status_code == 200 and 'name="title"' in form
    assert 'value="Office on level 2 too warm"' in form and 'value="14:00"' in form and 'value="120"' in form
    assert f'<option value="{world.tess.pk}" selected' in form
    assert "data-over-capacity" not in form
    assert not WorkOrder.objects.filter(kind="call_out").exists()


def test_a_call_outs_due_time_shows_on_its_own_page(desk, world):
    """The work order's page (the technician's form, the supervisor's view) says the call-out's time on the site's
    clock beside its day, as the board does; a planned visit with only a due day says no time."""
    desk.post(NEW, callout(world, confirm="1"))
    wo = WorkOrder.objects.get(kind="call_out")
    for person in (world.tess, world.supervisor):
        desk.force_login(person)
        html = desk.get(reverse("frontend:checklist", kwargs={"public_id": wo.public_id})).content.decode()
        assert "due 5 Mar 2025 by <strong data-due-by>14:00 CET</strong>" in html, person
    planned = WorkOrder.objects.filter(due_by=None).exclude(kind="call_out").first()
    html = desk.get(reverse("frontend:checklist", kwargs={"public_id": planned.public_id})).content.decode()
    assert "data-due-by" not in html


def test_the_due_day_offered_on_a_saturday_follows_the_boards_rule(desk, world):
    """Saturday 8 March 2025, 11:00 CET: an urgent call-out is offered today, 13:00 (two hours on, on the hour), as
    the board offers urgent work due on the site's today, weekend or not; a high-priority one (the default) the
    Monday after at noon, the board's weekday rule (scheduling.selectors.offered_day, one function)."""
    unit = world.mill_unit.pk
    with time_machine.travel(dt.datetime(2025, 3, 8, 10, tzinfo=dt.UTC), tick=False):
        urgent = desk.get(NEW, {"unit": unit, "priority": "urgent"}).content.decode()
        high = desk.get(NEW, {"unit": unit}).content.decode()
    assert 'name="due_date" value="2025-03-08"' in urgent and 'name="due_time" value="13:00"' in urgent
    assert '<option value="urgent" selected>' in urgent
    assert 'name="due_date" value="2025-03-10"' in high and 'name="due_time" value="12:00"' in high
    assert "urgent work due today stays today, weekend or not" in high
