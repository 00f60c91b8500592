"""The supervisor's board: a day for each visit beside its technician, and the load table that follows it."""

import datetime as dt
import re

import pytest
import time_machine
from django.contrib.messages import get_messages
from django.urls import reverse

from accounts.models import User
from scheduling.models import TaskDefinition, WorkOrder
from tests.factories.scheduling import add_task

from . import scenario as scenario_module
from .scenario import make_work

pytestmark = [pytest.mark.django_db, pytest.mark.usefixtures("clock")]  # dates made today are the clock's
WEDNESDAY = dt.date(2025, 3, 5)


@pytest.fixture
def scenario(db):
    with time_machine.travel(dt.datetime(2025, 3, 5, 10, tzinfo=dt.UTC), tick=False):
        world = scenario_module.build()
        # Tess has every skill: these assignments are saved at once, no missing-skill warning to confirm.
        User.objects.filter(pk=world.technician.pk).update(skills=TaskDefinition.Skill.values)
        world.technician.refresh_from_db()
        yield world


@pytest.fixture
def visit(scenario):
    """Unassigned work due Friday 7 March with a 45-minute filter change and a 10-minute filter check."""
    wo = make_work(ahu=scenario.unit_a, title="Belt check", due=dt.date(2025, 3, 7))
    add_task(wo, "filter_replace", scenario.unit_a.components.get(name="Final filters"))
    return wo


def hours_of(response, technician) -> dict:
    (row,) = [r for r in response.context["load"] if r["technician"] == technician]
    return {d["date"]: d["hours"] for d in row["days"]}


def test_board_offers_the_due_date_as_the_day(scenario, visit, login):
    """Each row's form has a day field for the visit, filled with its due date in ISO: a text field the server
    reads (YYYY-MM-DD or DD.MM.YYYY, whatever the browser's locale), never a native date field."""
    html = login(scenario.supervisor).get("/board/").content.decode()
    assert f'id="plan-{visit.public_id}" name="scheduled_for" value="2025-03-07"' in html
    field = html.split(f'id="plan-{visit.public_id}"')[0].rsplit("<input", 1)[1]
    assert 'type="text"' in field and 'placeholder="YYYY-MM-DD or DD.MM.YYYY"' in field
    assert f'<label for="plan-{visit.public_id}">' in html


def test_assigning_with_a_day_plans_it_and_the_load_follows(scenario, visit, login):
    """Assigning the Friday visit for Thursday puts its 55 minutes on Thursday in the load table, not Friday."""
    client = login(scenario.supervisor)
    client.post(
        reverse("frontend:assign", kwargs={"public_id": visit.public_id}),
        {"assignee": scenario.technician.pk, "version": visit.version, "scheduled_for": "2025-03-06"},
    )
    visit.refresh_from_db()
    assert (visit.assignee, visit.scheduled_for) == (scenario.technician, dt.date(2025, 3, 6))
    hours = hours_of(client.get("/board/"), scenario.technician)
    assert hours[dt.date(2025, 3, 6)] == pytest.approx(55 / 60, abs=0.01)
    assert hours[dt.date(2025, 3, 7)] == 0
    page = client.get("/board/").content.decode()
    assert 'value="2025-03-06"' in page and "planned 6 Mar" in page


def test_a_past_day_is_refused_and_nothing_is_saved(scenario, visit, login):
    """A day before today is refused beside the row's Day, naming the day; the work stays unassigned."""
    client = login(scenario.supervisor)
    response = client.post(
        reverse("frontend:assign", kwargs={"public_id": visit.public_id}),
        {"assignee": scenario.technician.pk, "version": visit.version, "scheduled_for": "2025-03-04"},
        follow=True,
    )
    row = response.content.decode().split(f'id="row-{visit.public_id}"')[1].split("</tr>")[0]
    text = row.split("data-day-refusal>")[1].split("</p>")[0]
    assert "2025-03-04" in text and "scheduled_for" not in text
    wo = WorkOrder.objects.get(pk=visit.pk)
    assert (wo.state, wo.assignee_id, wo.scheduled_for) == ("planned", None, None)


def test_a_typed_day_is_read_day_first_with_dots_and_a_slashed_one_is_refused_beside_the_field(scenario, visit, login):
    """06/03/2025 could be 6 March or 3 June: refused beside the row's Day, naming the field and the value, kept
    as typed, nothing saved. 06.03.2025 is Thursday 6 March and saved so (accounts.inputs.parse_day)."""
    client = login(scenario.supervisor)
    url = reverse("frontend:assign", kwargs={"public_id": visit.public_id})
    sent = {"assignee": scenario.technician.pk, "version": visit.version, "week": "2025-03-03"}
    response = client.post(url, {**sent, "scheduled_for": "06/03/2025"})
    assert response.status_code == 302 and response.url.endswith(f"#row-{visit.public_id}")
    assert WorkOrder.objects.get(pk=visit.pk).scheduled_for is None
    row = client.get(response.url).content.decode().split(f'id="row-{visit.public_id}"')[1].split("</tr>")[0]
    assert "Day: &#x27;06/03/2025&#x27; is not a date (with slashes it could be day or month first)" in row
    assert 'value="06/03/2025"' in row and 'aria-invalid="true"' in row
    wo = WorkOrder.objects.get(pk=visit.pk)
    assert (wo.state, wo.assignee_id, wo.scheduled_for) == ("planned", None, None)
    client.post(url, {**sent, "scheduled_for": "06.03.2025"})
    wo = WorkOrder.objects.get(pk=visit.pk)
    assert (wo.assignee_id, wo.scheduled_for) == (scenario.technician.pk, dt.date(2025, 3, 6))


def test_a_stale_form_is_a_message_not_an_error_page(scenario, visit, login):
    """A form read before someone else changed the work order says so, and changes nothing."""
    client = login(scenario.supervisor)
    response = client.post(
        reverse("frontend:assign", kwargs={"public_id": visit.public_id}),
        {"assignee": scenario.technician.pk, "version": visit.version + 5, "scheduled_for": "2025-03-06"},
    )
    assert response.status_code == 302
    text = " ".join(str(m) for m in get_messages(response.wsgi_request))
    assert "changed it meanwhile" in text
    assert WorkOrder.objects.get(pk=visit.pk).assignee_id is None


def test_a_large_week_shows_a_page_of_each_section_and_the_whole_count(client, django_user_model):
    """With more than a page of unassigned visits, the board shows 100, the full count, and a link to the rest."""
    import datetime as dt

    from django.utils import timezone

    from accounts.models import Role
    from frontend.views.board import BOARD_PAGE
    from scheduling.models import WorkOrder
    from tests.factories import OrganisationFactory, make_full_unit, make_person

    org = OrganisationFactory()
    unit = make_full_unit(building__site__organisation=org)
    supervisor = make_person(organisation=org, role=Role.SUPERVISOR)
    make_person(organisation=org, role=Role.TECHNICIAN)
    today = timezone.localdate()
    WorkOrder.objects.bulk_create(
        WorkOrder(organisation=org, ahu=unit, title=f"Visit {n}", due_date=today + dt.timedelta(days=1))
        for n in range(BOARD_PAGE + 5)
    )
    client.force_login(supervisor)
    page = client.get("/board/").content.decode()
    assert f"Due, not assigned ({BOARD_PAGE + 5})" in page
    assert f"Showing the first {BOARD_PAGE} of {BOARD_PAGE + 5}" in page
    assert page.count('data-work-order="') == BOARD_PAGE
    everything = client.get("/board/?all=due").content.decode()
    assert everything.count('data-work-order="') == BOARD_PAGE + 5


def test_the_day_offered_is_never_before_the_sites_own_today(scenario, login):
    """At 23:30 UTC it is already the next day in Amsterdam: a visit due that UTC day is offered for the
    site's today (the service refuses a day past there), and the technician's round is that day's."""
    late = dt.datetime(2025, 3, 5, 23, 30, tzinfo=dt.UTC)
    with time_machine.travel(late, tick=False):
        wo = make_work(ahu=scenario.unit_a, title="Late check", due=dt.date(2025, 3, 5))
        assert scenario.unit_a.building.site.time_zone == "Europe/Amsterdam"
        client = login(scenario.supervisor)
        html = client.get("/board/?week=2025-03-05").content.decode()
        assert f'id="plan-{wo.public_id}" name="scheduled_for" value="2025-03-06"' in html
        client.post(
            reverse("frontend:assign", kwargs={"public_id": wo.public_id}),
            {"assignee": scenario.technician.pk, "version": wo.version, "scheduled_for": "2025-03-06"},
        )
        wo.refresh_from_db()
        assert (wo.assignee, wo.scheduled_for) == (scenario.technician, dt.date(2025, 3, 6))
        page = login(scenario.technician).get("/today/")
        assert page.context["today"] == dt.date(2025, 3, 6)
        assert str(wo.public_id) in page.content.decode()


def test_a_day_planned_years_ahead_names_its_year_and_that_it_is_after_the_due_date(scenario, visit, login):
    """Planning the visit (due 7 Mar 2025, overdue from 9 Mar) for 1 Dec 2034 is kept, and the message and the board
    say '1 Dec 2034' with the year, and that it is after its due date, named as the due date (never the day it
    turned overdue called its overdue date); a day this year reads without the year.
    The board lists it in the week of 1 Dec 2034 (its planned day), no longer in the week it is due."""
    WorkOrder.objects.filter(pk=visit.pk).update(overdue_on=dt.date(2025, 3, 9))
    client = login(scenario.supervisor)
    with time_machine.travel(dt.datetime(2025, 3, 5, 10, tzinfo=dt.UTC), tick=False):
        url = reverse("frontend:assign", kwargs={"public_id": visit.public_id})
        form = {"assignee": scenario.technician.pk, "version": visit.version, "scheduled_for": "2034-12-01"}
        warned = client.post(url, form)  # after its due date: warned first, saved once confirmed
        assert "it will show overdue from 9 Mar" in " ".join(warned.context["warnings"])
        response = client.post(url, {**form, "confirm_warnings": "1"})
        said = [str(m) for m in get_messages(response.wsgi_request)]
        assert any("for 1 Dec 2034, after its due date 7 Mar 2025" in m for m in said), said
        assert not any("9 Mar" in m or "overdue date" in m for m in said), said
        visit.refresh_from_db()
        assert visit.scheduled_for == dt.date(2034, 12, 1)
        this_week = client.get("/board/?week=2025-03-03").content.decode()
        page = client.get("/board/?week=2034-12-01").content.decode()
    assert "planned 1 Dec 2034" in page, "the work shows in the week it is planned for"
    assert f'data-work-order="{visit.public_id}"' not in this_week


def test_work_with_someone_lacking_a_skill_it_needs_is_marked_naming_the_skill(scenario, login):
    """A row already assigned to a technician without a skill its tasks name (here the electric preheater's
    safety test, electrical) says so on the board, naming the person and the skill; a qualified one is not marked."""
    scenario.technician.skills = ["mechanical"]
    scenario.technician.save(update_fields=["skills"])
    wo = make_work(ahu=scenario.unit_a, assignee=scenario.technician, title="Heater test", due=dt.date(2025, 3, 7))
    add_task(wo, "preheater_freeze")
    assert wo.tasks.get(task_code="preheater_freeze").task.skill == "electrical"
    page = login(scenario.supervisor).get("/board/").content.decode()
    assert f"{scenario.technician} lacks: electrical" in page
    scenario.technician.skills = ["mechanical", "electrical"]
    scenario.technician.save(update_fields=["skills"])
    assert f"{scenario.technician} lacks:" not in login(scenario.supervisor).get("/board/").content.decode()


def test_plan_work_now_makes_the_new_units_visits_once_and_says_so(scenario, login):
    """A supervisor who has just added a customer's unit presses "Plan work now" on the board: the unit's
    preventive visits for the next 90 days are made at once and the message counts them; pressing it again makes
    nothing twice and says so. A technician may not press it (403, nothing made)."""
    from tests.factories.inventory import BuildingFactory, make_full_unit

    with time_machine.travel(dt.datetime(2025, 3, 5, 10, tzinfo=dt.UTC), tick=False):
        new_unit = make_full_unit(building=BuildingFactory(site=scenario.site_a, name="South block"), tag="AHU-02")
        assert not WorkOrder.objects.filter(ahu=new_unit).exists()
        technician = login(scenario.technician)
        assert technician.post(reverse("frontend:plan_now")).status_code == 403
        assert not WorkOrder.objects.filter(ahu=new_unit).exists()

        client = login(scenario.supervisor)
        page = client.post(reverse("frontend:plan_now"), {"week": "2025-03-03"}, follow=True)
        made = WorkOrder.objects.filter(ahu=new_unit)
        assert made.exists()
        said = [str(m) for m in get_messages(page.wsgi_request)]
        assert any("new visit" in m for m in said), said
        assert page.redirect_chain[-1][0].endswith("?week=2025-03-03")
        count = WorkOrder.objects.count()
        again = client.post(reverse("frontend:plan_now"), follow=True)
        assert WorkOrder.objects.count() == count
        assert any("nothing new was due" in str(m) for m in get_messages(again.wsgi_request))


def test_plan_work_now_names_the_new_visits_and_links_to_the_week_of_the_first(scenario, login):
    """The message names each new visit (unit with its building, title, due day), at most ten then "and N more",
    and links to the board week of the earliest one."""
    from frontend.views.planning import NAMED_VISITS, new_visits_words
    from tests.factories.inventory import BuildingFactory, make_full_unit

    with time_machine.travel(dt.datetime(2025, 3, 5, 10, tzinfo=dt.UTC), tick=False):
        new_unit = make_full_unit(building=BuildingFactory(site=scenario.site_a, name="South block"), tag="AHU-02")
        client = login(scenario.supervisor)
        page = client.post(reverse("frontend:plan_now"), {"week": "2025-03-03"}, follow=True)
        made = list(WorkOrder.objects.filter(ahu=new_unit).order_by("due_date", "pk"))
        said = [str(m) for m in get_messages(page.wsgi_request)]
        html = page.content.decode()
    named = next(m for m in said if m.startswith("New: "))
    first = made[0]
    day = f"{first.due_date.day} {first.due_date:%b %Y}"
    assert f"AHU-02 (South block) — {first.title}, due {day}" in named
    monday = first.due_date - dt.timedelta(days=first.due_date.weekday())
    assert f'href="/board/?week={monday.isoformat()}"' in html
    many = made * 6
    words = new_visits_words(many)
    assert words.count(" — ") == NAMED_VISITS and words.endswith(f"and {len(many) - NAMED_VISITS} more.")


def test_weekend_work_is_offered_the_friday_before_and_back_to_change_it_keeps_the_choice(scenario, login):
    """Work due Saturday 8 March is offered Friday 7 March (the board says why); assigning it for the Saturday to
    a technician it would overload is warned, and "Back to change it" brings the row back with the technician and
    the day chosen. A weekend due date alone is not an overload: every day has the person's capacity."""
    wo = make_work(ahu=scenario.unit_a, title="Weekend check", due=dt.date(2025, 3, 8))
    add_task(wo, "filter_replace", scenario.unit_a.components.get(name="Final filters"))
    scenario.technician.daily_capacity_hours = 0.5
    scenario.technician.save(update_fields=["daily_capacity_hours"])
    client = login(scenario.supervisor)
    with time_machine.travel(dt.datetime(2025, 3, 5, 10, tzinfo=dt.UTC), tick=False):
        response = client.get("/board/")
        html = response.content.decode()
        assert f'id="plan-{wo.public_id}" name="scheduled_for" value="2025-03-07"' in html
        assert "due on a Saturday or Sunday is the Friday before" in html
        (row,) = [r for r in response.context["load"] if r["technician"] == scenario.technician]
        capacity = {d["date"]: d["capacity_hours"] for d in row["days"]}
        assert capacity[dt.date(2025, 3, 8)] == capacity[dt.date(2025, 3, 7)] == 0.5
        confirm = client.post(
            reverse("frontend:assign", kwargs={"public_id": wo.public_id}),
            {"assignee": scenario.technician.pk, "version": wo.version, "scheduled_for": "2025-03-08", "week": ""},
        )
        page = confirm.content.decode()
        assert "Over capacity" in page and "over the capacity of 0.5 h a day" in page
        assert WorkOrder.objects.get(pk=wo.pk).assignee_id is None
        back = re.search(r'href="([^"]+)" data-back-to-change>Back to change it', page)[1].replace("&amp;", "&")
        again = client.get(back).content.decode()
    assert f'id="plan-{wo.public_id}" name="scheduled_for" value="2025-03-08"' in again
    select = again.split(f'id="assign-{wo.public_id}"')[1].split("</select>")[0]
    assert f'<option value="{scenario.technician.pk}" selected>' in select


def test_the_day_offered_for_weekend_work_already_past_its_friday_is_the_monday_after(scenario, login):
    """On Saturday 8 March, work due Sunday 9 March is offered Monday 10 March (its Friday is past)."""
    from scheduling.selectors import weekday_on_or_near

    assert weekday_on_or_near(dt.date(2025, 3, 9), today=dt.date(2025, 3, 8)) == dt.date(2025, 3, 10)
    assert weekday_on_or_near(dt.date(2025, 3, 9), today=dt.date(2025, 3, 7)) == dt.date(2025, 3, 7)
    assert weekday_on_or_near(dt.date(2025, 3, 6), today=dt.date(2025, 3, 5)) == dt.date(2025, 3, 6)
    with time_machine.travel(dt.datetime(2025, 3, 8, 10, tzinfo=dt.UTC), tick=False):
        wo = make_work(ahu=scenario.unit_a, title="Sunday check", due=dt.date(2025, 3, 9))
        html = login(scenario.supervisor).get("/board/?week=2025-03-03").content.decode()
    assert f'id="plan-{wo.public_id}" name="scheduled_for" value="2025-03-10"' in html


def test_a_past_day_for_a_full_day_is_refused_at_once_in_one_date_format(scenario, visit, login, api_client):
    """A past day typed for a technician whose day is full is refused straight away, in the words every plan
    refusal uses (days in ISO: "allowed: 2025-03-05 or later"), never first an over-capacity page naming the day
    in another form ("Tue 4 Mar") for a plan that is then refused: said beside the row's Day (the top message only
    points to it); the API answers the same 400, not a 409."""
    scenario.technician.daily_capacity_hours = 0.25
    scenario.technician.save(update_fields=["daily_capacity_hours"])
    client = login(scenario.supervisor)
    response = client.post(
        reverse("frontend:assign", kwargs={"public_id": visit.public_id}),
        {"assignee": scenario.technician.pk, "version": visit.version, "scheduled_for": "04.03.2025"},
    )
    assert response.status_code == 302, "no over-capacity page for a day that is refused"
    (top,) = [str(m) for m in get_messages(response.wsgi_request)]
    assert "over capacity" not in top and "refused beside it" in top
    row = client.get(response.url).content.decode().split(f'id="row-{visit.public_id}"')[1].split("</tr>")[0]
    text = row.split("data-day-refusal>")[1].split("</p>")[0]
    assert text.endswith("scheduled day 2025-03-04 is in the past at Harbour House; allowed: 2025-03-05 or later")
    assert not re.search(r"\d{1,2} (Jan|Feb|Mar|Apr|May|Jun|Jul|Aug|Sep|Oct|Nov|Dec)\b", text), text
    api_client.force_authenticate(scenario.supervisor)
    answer = api_client.post(
        f"/api/scheduling/work-orders/{visit.public_id}/assign/",
        {"assignee": scenario.technician.username, "version": visit.version, "scheduled_for": "2025-03-04"},
        format="json",
    )
    assert answer.status_code == 400
    assert answer.json()["errors"]["scheduled_for"] == [
        "scheduled day 2025-03-04 is in the past at Harbour House; allowed: 2025-03-05 or later"
    ]
    wo = WorkOrder.objects.get(pk=visit.pk)
    assert (wo.state, wo.assignee_id, wo.scheduled_for) == ("planned", None, None)
