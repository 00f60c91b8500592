"""Late work and safety where corrective work is proposed: one rule for "overdue", one wording of the due date,
the cautions beside the work before it is approved, and the faults' links to the work itself.

The world is the stuck outdoor-air damper of the building-automation pages (Guideline 36 FC6 seen on Monday
12 January 2026, its corrective work proposed, normal priority: 14 grace days). The clock is set for each step.
"""

import datetime as dt

import pytest
import time_machine
from django.urls import reverse
from django.utils.html import escape

from accounts.models import Role
from inspections import cautions
from inspections.selectors import repair_cautions
from scheduling.lateness import days_overdue
from scheduling.models import WorkOrder
from tests.factories.accounts import make_person
from tests.frontend.test_automation_pages import stuck_damper_world

pytestmark = pytest.mark.django_db

APPROVAL = dt.datetime(2026, 1, 14, 11, tzinfo=dt.UTC)  # Wednesday 14 January, two days after the fault's day
IN_GRACE = dt.datetime(2026, 1, 20, 11, tzinfo=dt.UTC)  # Tuesday of the next week: past due, inside its grace
LATE = dt.datetime(2026, 2, 13, 11, tzinfo=dt.UTC)  # Friday 13 February: past the grace window (from 29 January)


@pytest.fixture
def world(client):
    org, site, ahu, _points, fault = stuck_damper_world()
    boss = make_person(organisation=org, role=Role.SUPERVISOR, username="boss")
    client.force_login(boss)
    return {"org": org, "site": site, "ahu": ahu, "fault": fault, "boss": boss, "wo": fault.corrective_work_order}


def at(moment, client, url, **params):
    with time_machine.travel(moment, tick=False):
        return client.get(url, params)


def approve(client, wo):
    with time_machine.travel(APPROVAL, tick=False):
        page = client.post(reverse("frontend:corrective"), {"work_order": str(wo.public_id), "decision": "approve"})
    assert page.status_code == 302, page.content.decode()[:500]
    wo.refresh_from_db()
    return wo


def test_a_fault_links_to_its_own_proposed_work_on_the_corrective_page(client, world):
    wo = world["wo"]
    anchor = f"{reverse('frontend:corrective')}#wo-{wo.public_id}"
    for url in (reverse("frontend:faults"), reverse("frontend:fault", kwargs={"pk": world["fault"].pk})):
        html = at(APPROVAL, client, url).content.decode()
        assert f'href="{anchor}"' in html, url
    assert f'id="wo-{wo.public_id}"' in at(APPROVAL, client, reverse("frontend:corrective")).content.decode()


def test_the_cautions_show_where_the_work_is_proposed_and_looked_into(client, world):
    fault = world["fault"]
    assert fault.finding_id
    for url in (
        reverse("frontend:corrective"),
        reverse("frontend:fault", kwargs={"pk": fault.pk}),
        reverse("frontend:manager_finding", kwargs={"pk": fault.finding_id}),
    ):
        html = at(APPROVAL, client, url).content.decode()
        assert "data-cautions" in html, url
        assert escape(cautions.LOCKOUT) in html and escape(cautions.LOCAL_CODES) in html, url


def test_the_cautions_fit_the_part():
    fan = repair_cautions(component_kind="fan")
    assert cautions.LOCKOUT in fan and cautions.RUNNING_FAN in fan and cautions.HOT_COILS not in fan
    heater = repair_cautions(component_kind="electric_preheater")
    assert cautions.ELECTRIC in heater and cautions.LOCKOUT in heater
    coil = repair_cautions(component_kind="coil")
    assert cautions.HOT_COILS in coil and cautions.PRESSURISED_COILS in coil
    unit = repair_cautions(component_kind=None)
    assert cautions.LOCKOUT in unit and cautions.HOT_COILS in unit
    # The condition's own checklist adds its cautions; the local-codes-first line closes every box, once.
    proving = repair_cautions(component_kind="damper", condition_code="fan_not_proven")
    assert cautions.RUNNING_FAN in proving
    for box in (fan, heater, coil, unit, proving):
        assert box[-1] == cautions.LOCAL_CODES and box.count(cautions.LOCAL_CODES) == 1


def test_proposed_work_says_its_due_date_and_becomes_due_on_the_day_it_is_approved(client, world):
    wo = world["wo"]
    assert wo.due_date == dt.date(2026, 1, 12) and wo.priority == "normal"
    html = at(APPROVAL, client, reverse("frontend:corrective")).content.decode()
    assert "due 12 Jan 2026, in grace until 26 Jan 2026" in html
    assert "approved now, it is due 14 Jan 2026" in html
    wo = approve(client, wo)
    assert wo.due_date == dt.date(2026, 1, 14)
    assert wo.overdue_on == dt.date(2026, 1, 29)  # 14 grace days, overdue from the day after
    assert set(wo.tasks.values_list("due_date", flat=True)) <= {dt.date(2026, 1, 14)}


def test_late_work_stays_on_this_weeks_board_and_is_overdue_after_its_grace_on_page_and_api(client, world):
    wo = approve(client, world["wo"])
    key = str(wo.public_id)

    def sections(moment):
        page = at(moment, client, reverse("frontend:board"))
        assert page.status_code == 200
        on_page = {c["key"]: [str(r["id"]) for r in c["rows"]] for c in page.context["columns"]}
        api = at(moment, client, "/api/scheduling/board/").json()
        on_api = {name: [str(r["id"]) for r in api[name]] for name in ("overdue", "due", "assigned")}
        return page, on_page, on_api, api

    # Past due, still inside its grace window: on this week's board as due (not yet overdue), and said so.
    page, on_page, on_api, api = sections(IN_GRACE)
    assert key in on_page["due"] and key not in on_page["overdue"]
    assert key in on_api["due"] and key not in on_api["overdue"]
    assert api["counts"]["due"] >= 1 and sum(d["due"] for d in api["days"]) == api["counts"]["due"]
    assert "due 14 Jan 2026, in grace until 28 Jan 2026" in page.content.decode()
    # Past its grace: overdue on this week's board, page and API alike, and said so with the same words.
    page, on_page, on_api, _ = sections(LATE)
    assert key in on_page["overdue"] and key in on_api["overdue"]
    assert key not in on_page["due"] and key not in on_api["due"]
    words = "due 14 Jan 2026, grace to 28 Jan 2026, 15 days overdue (since 29 Jan 2026)"  # 13 Feb − 29 Jan = 15
    assert words in page.content.decode()
    with time_machine.travel(LATE, tick=False):
        assert WorkOrder.objects.get(pk=wo.pk).is_overdue
    # The finding's page and the site's page say the same.
    finding = at(LATE, client, reverse("frontend:manager_finding", kwargs={"pk": world["fault"].finding_id}))
    assert words in finding.content.decode()
    site = at(LATE, client, reverse("frontend:dashboard_site", kwargs={"pk": world["site"].pk}))
    assert site.status_code == 200
    assert words in site.content.decode()


def test_the_due_words_count_from_the_grace_window():
    wo = WorkOrder(due_date=dt.date(2026, 9, 4), overdue_on=dt.date(2026, 9, 19), state="planned")
    assert wo.due_words_on(dt.date(2026, 9, 4)) == "due 4 Sep 2026"
    assert wo.due_words_on(dt.date(2026, 9, 18)) == "due 4 Sep 2026, in grace until 18 Sep 2026"
    late = "due 4 Sep 2026, grace to 18 Sep 2026, "
    assert wo.due_words_on(dt.date(2026, 9, 19)) == late + "overdue since today (19 Sep 2026)"
    assert wo.due_words_on(dt.date(2026, 9, 20)) == late + "1 day overdue (since 19 Sep 2026)"
    assert wo.due_words_on(dt.date(2026, 12, 3)) == late + "75 days overdue (since 19 Sep 2026)"
    no_grace = WorkOrder(due_date=dt.date(2026, 11, 30), overdue_on=None, state="planned")
    assert no_grace.due_words_on(dt.date(2026, 12, 3)) == "due 30 Nov 2026, 2 days overdue (since 1 Dec 2026)"
    # The tryout's cases on 4 December: the count is what a reader gets by subtracting the "since" day.
    for due, since, days in (
        (dt.date(2026, 11, 4), dt.date(2026, 11, 6), 28),
        (dt.date(2026, 12, 1), dt.date(2026, 12, 3), 1),
    ):
        late = WorkOrder(due_date=due, overdue_on=since, state="assigned")
        today = dt.date(2026, 12, 4)
        assert late.is_overdue_on(today) and late.overdue_from == since
        assert days_overdue(since=late.overdue_from, today=today) == (today - since).days == days


# Amsterdam leaves summer time on Sunday 25 October 2026 (EU rule: last Sunday of October, common practice).
FIRST_LATE = dt.datetime(2026, 10, 21, 22, 30, tzinfo=dt.UTC)  # 00:30 CEST on Thursday 22 October at the site
AFTER_MONTH_END = dt.datetime(2026, 11, 1, 23, 30, tzinfo=dt.UTC)  # 00:30 CET on Monday 2 November (UTC: 1 Nov)


def test_every_page_counts_the_days_from_the_day_it_names_across_a_month_end_and_a_clock_change(client, world):
    """Due 20 Oct, grace ending 21 Oct: overdue since 22 Oct. Just after midnight on 2 November at the site (still
    1 November in UTC, after the clocks went back) every page says 11 days (2 Nov − 22 Oct); on 22 October itself
    it says "overdue since today". The board, the finding, the site page, a technician's today and the
    compliance figures of the PDF read the one count (scheduling.lateness)."""
    from reports.compliance.figures import compliance_figures

    wo = approve(client, world["wo"])
    tech = make_person(organisation=world["org"], role=Role.TECHNICIAN, username="ana")
    WorkOrder.objects.filter(pk=wo.pk).update(
        due_date=dt.date(2026, 10, 20),
        overdue_on=dt.date(2026, 10, 22),
        scheduled_for=None,
        assignee=tech,
        state=WorkOrder.State.ASSIGNED,
    )
    words = "due 20 Oct 2026, grace to 21 Oct 2026, 11 days overdue (since 22 Oct 2026)"
    pages = (
        reverse("frontend:board"),
        reverse("frontend:manager_finding", kwargs={"pk": world["fault"].finding_id}),
        reverse("frontend:dashboard_site", kwargs={"pk": world["site"].pk}),
    )
    for url in pages:
        page = at(AFTER_MONTH_END, client, url)
        assert page.status_code == 200, url
        assert words in page.content.decode(), url
        assert "overdue since today (22 Oct 2026)" in at(FIRST_LATE, client, url).content.decode(), url
    client.force_login(tech)
    assert words[0].upper() + words[1:] in at(AFTER_MONTH_END, client, reverse("frontend:today")).content.decode()
    with time_machine.travel(AFTER_MONTH_END, tick=False):
        f = compliance_figures(
            site_ids=[world["site"].pk], start=dt.date(2026, 10, 1), end=dt.date(2026, 10, 31), as_of=AFTER_MONTH_END
        )
    late = next(o for o in f.overdue if o["work_order"].pk == wo.pk)
    assert (late["since"], late["days_overdue"]) == (dt.date(2026, 10, 22), 11)
