"""Nothing a careless or hostile input can break: one input policy on every way in, and jobs that skip a bad row.

Walked as the supervisor and the building-automation client would: the unit edit form, the registry and
scheduling APIs, the meter CSV, the calendar feed and the board, from a controlled clock (3 March 2025, so
the plan window is 2000-01-01 to 2035-03-03). Rows stored before the policy are made with
``queryset.update``, which bypasses every check.
"""

import datetime as dt
import html
import io

import pytest
import time_machine
from django.core.management import call_command
from icalendar import Calendar
from rest_framework.test import APIClient

from accounts.models import AuditEvent
from inventory.models import AHU, Component
from scheduling.models import MeterReading, TaskDefinition, WorkOrder
from scheduling.services import calendar_feed_issue, task_library_install
from scheduling.services.meters import meter_readings_import_csv
from tests.frontend import scenario as scenario_module

# A number typed with an exponent (accounts.typed_numbers.exponent_words), before the field's range.
PLAIN = "is not a plain number; type digits with an optional decimal point or comma"

pytestmark = pytest.mark.django_db
NOW = dt.datetime(2025, 3, 3, 9, 0, tzinfo=dt.UTC)


@pytest.fixture
def world(db):
    with time_machine.travel(NOW, tick=False):
        task_library_install()
        yield scenario_module.build()


@pytest.fixture
def api(world):
    client = APIClient()
    client.force_authenticate(world.supervisor)
    return client


def _text(response) -> str:
    return html.unescape(response.content.decode())


def _unit_form(ahu: AHU, **changes) -> dict:
    """The unit form as it opens (airflow in L/s, the person's units), with ``changes`` typed over it."""
    from frontend.views.registry_units import unit_form_initial

    data = {
        k: "1" if v is True else "" if v in (None, False) else str(v)
        for k, v in unit_form_initial(ahu=ahu, system="si").items()
    }
    return {**data, **changes}


@pytest.mark.parametrize(
    ("typed", "said"),
    [
        ("nan", "'nan' is not a finite number"),
        ("inf", "'inf' is not a finite number"),
        # Typed with an exponent: refused as typed with the range, never read as a number (accounts.typed_numbers).
        (
            "1e308",
            f"“1e308” {PLAIN}, allowed: a number from 10 to 100000 L/s",
        ),
        ("1000000000", "1000000000 L/s is out"),
    ],
)
def test_the_unit_form_refuses_nan_inf_and_1e308_naming_field_value_and_range(world, client, typed, said):
    """'nan', 'inf' and 1e308 typed as the design airflow are refused beside the field, with the range; nothing
    is saved and the organisation's unit list still answers."""
    client.force_login(world.supervisor)
    ahu = world.unit_a
    before = ahu.design_supply_airflow_m3s
    with time_machine.travel(NOW, tick=False):
        r = client.post(f"/registry/unit/{ahu.pk}/edit/", _unit_form(ahu, design_supply_airflow_m3s=typed))
    assert r.status_code == 200
    assert f"Design supply airflow: {said}" in _text(r)
    assert "allowed: a number from 10 to 100000 L/s" in _text(r)
    ahu.refresh_from_db()
    assert ahu.design_supply_airflow_m3s == before
    api = APIClient()
    api.force_authenticate(world.supervisor)
    assert api.get("/api/inventory/ahus/").status_code == 200


@pytest.mark.parametrize(
    ("field", "value"),
    [("floor_area_m2", "nan"), ("floor_area_m2", "inf"), ("floor_area_m2", 1e308), ("design_min_oa_fraction", "nan")],
)
def test_the_registry_api_refuses_non_finite_and_huge_numbers(world, api, field, value):
    """The registry API answers 400 with the field's error naming the value and what is allowed; no 500 after."""
    with time_machine.travel(NOW, tick=False):
        r = api.patch(f"/api/inventory/ahus/{world.unit_a.pk}/", {field: value}, format="json")
    assert r.status_code == 400, r.content
    message = " ".join(r.json()["errors"][field])
    assert "allowed" in message or "less than or equal" in message
    assert str(value).lower().replace("1e+308", "1e308") in message.lower().replace("1e+308", "1e308")
    assert api.get("/api/inventory/ahus/").status_code == 200


def test_a_service_start_in_9999_is_refused_through_the_api(world, api):
    """A service start of 9999-12-31 is refused: 'outside 1950–2035', with the allowed dates."""
    with time_machine.travel(NOW, tick=False):
        r = api.patch(f"/api/inventory/ahus/{world.unit_a.pk}/", {"service_start": "9999-12-31"}, format="json")
    assert r.status_code == 400
    assert r.json()["errors"]["service_start"] == [
        "Service start 9999-12-31 is out of range; allowed: 1950-01-01 to 2035-03-03"
    ]


def test_an_interval_of_a_million_is_refused(world, api):
    """A task interval of 1,000,000 months is refused with the most allowed (120 months, ten years)."""
    code = TaskDefinition.objects.filter(trigger="interval", interval_unit="months").values_list("code", flat=True)[0]
    r = api.patch(f"/api/scheduling/tasks/{code}/", {"interval_value": 1_000_000}, format="json")
    assert r.status_code == 400
    assert r.json()["errors"]["interval_value"] == [
        "Interval: 1000000 months is out of range; allowed: 1 to 120 months (ten years)"
    ]
    assert not TaskDefinition.objects.filter(organisation=world.org, code=code).exists()


def test_a_visit_planned_for_9999_breaks_neither_the_calendar_nor_the_board(world, client, api):
    """A visit stored as planned for 9999-12-31 is left out of the technician's feed and named on the board;
    the week of 9999-12-27 shows this week's board (page) or a clear 400 (API), never a 500."""
    WorkOrder.objects.filter(pk=world.work_a.pk).update(scheduled_for=dt.date(9999, 12, 31))
    feed = calendar_feed_issue(user=world.technician)
    with time_machine.travel(NOW, tick=False):
        r = client.get(f"/calendar/{feed.token}.ics")
        assert r.status_code == 200
        uids = {str(e["uid"]) for e in Calendar.from_ical(r.content).walk("VEVENT")}
        assert f"{world.work_a.public_id}@plenum" not in uids
        client.force_login(world.supervisor)
        page = client.get("/board/?week=9999-12-27")
        assert page.status_code == 200
        assert (
            f"skipped: AHU-01 at Harbour House, {world.work_a.title}: planned for 9999-12-31 is out of range; "
            "allowed: 2000-01-01 to " in _text(page)
        )
        board = api.get("/api/scheduling/board/?week=9999-12-27")
        assert board.status_code == 400
        assert "week 9999-12-27 is out of range; allowed: 2000-01-01 to " in board.json()["errors"]["week"][0]


def test_a_time_without_a_zone_is_the_sites_time_in_the_api_and_the_csv(world, api):
    """At a site in Helsinki (UTC+2 in March) '2025-03-01 08:00' is 06:00 UTC whether pushed through the API or
    imported from the CSV."""
    site = world.site_a
    site.time_zone = "Europe/Helsinki"
    site.save(update_fields=["time_zone"])
    label = world.unit_a.label_code
    with time_machine.travel(NOW, tick=False):
        r = api.post(
            "/api/scheduling/meter-readings/",
            {"unit_label": label, "hours": 100, "taken_at": "2025-03-01 08:00"},
            format="json",
        )
        assert r.status_code == 201, r.content
        meter_readings_import_csv(
            organisation=world.org, text=f"unit_label,taken_at,hours\n{label},2025-03-02 08:00,124\n"
        )
    times = sorted(MeterReading.objects.filter(ahu=world.unit_a).values_list("taken_at", flat=True))
    assert times == [dt.datetime(2025, 3, 1, 6, tzinfo=dt.UTC), dt.datetime(2025, 3, 2, 6, tzinfo=dt.UTC)]


@pytest.mark.parametrize(
    ("payload", "field", "said"),
    [
        ({"hours": 1e308, "taken_at": "2025-03-01T08:00Z"}, "hours", "allowed: a number from 0 to 1000000 h"),
        ({"hours": 10, "taken_at": "0001-01-01T00:00Z"}, "taken_at", "is before 2000"),
        ({"hours": 10, "taken_at": "9999-12-31T23:59Z"}, "taken_at", "is later than now"),
    ],
)
def test_impossible_meter_readings_are_refused(world, api, payload, field, said):
    """1e308 run-hours, a reading dated year 1 or year 9999 are refused with the field and what is allowed."""
    with time_machine.travel(NOW, tick=False):
        r = api.post(
            "/api/scheduling/meter-readings/", {"unit_label": world.unit_a.label_code, **payload}, format="json"
        )
    assert r.status_code == 400, r.content
    assert said in " ".join(r.json()["errors"][field])


def test_the_component_form_refuses_nan_and_1e308_in_the_persons_units(db, client):
    """A US-units supervisor typing 'nan' or 1e308 as a filter's clean pressure drop is told the range in
    in. w.c. (5–500 Pa is 0.0201–2.01 in. w.c.: 1 in. w.c. = 248.84 Pa, from memory)."""
    with time_machine.travel(NOW, tick=False):
        world = scenario_module.build(unit_system="us")
        world.supervisor.unit_system = "us"
        world.supervisor.save(update_fields=["unit_system"])
        comp = Component.objects.filter(ahu=world.unit_a, kind="filter_bank").first()
        client.force_login(world.supervisor)
        for typed, said in (
            ("nan", "'nan' is not a finite number"),
            (
                "1e308",
                f"“1e308” {PLAIN}, allowed: a number from 0.0200",
            ),
            ("99999", "99999 in. w.c. is out of range"),
        ):
            post = {"name": comp.name, **{f"spec_{k}": "" for k in comp.specs}, "spec_clean_dp_pa": typed}
            r = client.post(f"/registry/component/{comp.pk}/edit/", post)
            assert r.status_code == 400  # refused: the form again, the message beside the field
            text = _text(r)
            assert f"Clean (initial) pressure drop: {said}" in text
            assert "allowed: a number from 0.0200" in text and "in. w.c." in text


def test_check_data_finds_poisoned_rows_and_repairs_only_what_may_be_emptied(world):
    """check_data lists a unit starting 9999-12-31 with an infinite floor area, a visit planned for 9999-12-31
    and a rule of 1,000,000 months; --repair empties the two dates and the number (audited) and leaves the rule
    for a person to correct."""
    AHU.objects.filter(pk=world.unit_a.pk).update(service_start=dt.date(9999, 12, 31), floor_area_m2=float("inf"))
    WorkOrder.objects.filter(pk=world.work_a.pk).update(scheduled_for=dt.date(9999, 12, 31))
    task = TaskDefinition.objects.filter(trigger="interval").first()
    TaskDefinition.objects.filter(pk=task.pk).update(interval_value=1_000_000)
    out = io.StringIO()
    with time_machine.travel(NOW, tick=False):
        call_command("check_data", stdout=out)
    report = out.getvalue()
    said = "Service start 9999-12-31 is out of range; allowed: 1950-01-01 to 2035-03-03"
    assert f"problem: AHU-01 at Harbour House: {said}" in report
    assert f"problem: AHU-01 at Harbour House, {world.work_a.title}: planned for 9999-12-31" in report
    assert f"{task.name}: Interval: 1000000" in report
    assert "problem: AHU-01 at Harbour House: Floor area served: inf is not a finite number" in report
    assert "0 repaired" in report
    assert AHU.objects.get(pk=world.unit_a.pk).service_start == dt.date(9999, 12, 31)
    out = io.StringIO()
    with time_machine.travel(NOW, tick=False):
        call_command("check_data", "--repair", stdout=out)
    assert "repaired: AHU-01 at Harbour House: service start 9999-12-31 cleared" in out.getvalue()
    assert AHU.objects.get(pk=world.unit_a.pk).service_start is None
    assert AHU.objects.get(pk=world.unit_a.pk).floor_area_m2 is None
    assert WorkOrder.objects.get(pk=world.work_a.pk).scheduled_for is None
    assert TaskDefinition.objects.get(pk=task.pk).interval_value == 1_000_000
    assert AuditEvent.objects.filter(action="data_repair").count() == 2


def test_a_unit_stored_with_an_infinite_number_does_not_break_the_unit_list(world, api):
    """A floor area stored as infinity (before the policy) reads as empty in the unit list, which answers 200."""
    AHU.objects.filter(pk=world.unit_a.pk).update(floor_area_m2=float("inf"))
    r = api.get("/api/inventory/ahus/")
    assert r.status_code == 200
    rows = r.json()["results"] if isinstance(r.json(), dict) else r.json()
    assert [row["floor_area_m2"] for row in rows if row["id"] == world.unit_a.pk] == [None]


def test_a_nul_in_an_organisation_slug_is_refused(world, api):
    """An organisation slug with NUL in it is refused naming the field, before the database sees it."""
    r = api.post(
        "/api/inventory/sites/",
        {"organisation": "bright\x00water", "code": "X1", "name": "X", "latitude": 60, "longitude": 24},
        format="json",
    )
    assert r.status_code == 400
    assert "control characters (such as NUL)" in " ".join(r.json()["errors"]["organisation"])


def test_a_report_period_ending_in_9999_is_refused_and_a_visit_due_then_is_never_late():
    """A report asked up to 9999-12-31 is refused with the allowed dates; a visit stored as due 9999-12-31 has
    no deadline to miss (no date sum past the calendar)."""
    from django.core.exceptions import ValidationError

    from reports.compliance import Occurrence
    from reports.documents import period

    with time_machine.travel(NOW, tick=False), pytest.raises(ValidationError) as refused:
        period({"end": "9999-12-31"}, default_start=dt.date(2025, 1, 1), default_end=dt.date(2025, 3, 3))
    assert refused.value.message_dict["end"] == [
        "To: 31 Dec 9999 is outside the days allowed, 1 Jan 2000 to 3 Mar 2035"
    ]
    occ = Occurrence(category="c", due_date=dt.date(9999, 12, 31), grace_days=7, completed_on=None)
    assert occ.deadline == dt.date.max


def test_a_filter_forecast_past_the_calendar_has_no_date():
    """A run-hour rate so small that the change would fall after year 9999 gives no date, not an error."""
    from engineering.filters import FilterPoint, filter_forecast

    points = [
        FilterPoint(run_hours=h, dp_pa=100 + h / 10, airflow_m3s=2.0, when=dt.date(2025, 1, 1) + dt.timedelta(days=d))
        for d, h in enumerate((0, 100, 200, 300, 400))
    ]
    fc = filter_forecast(points=points, design_airflow_m3s=2.0, final_dp_pa=250.0, hours_per_day=1e-9)
    assert fc.run_hours_at_final == pytest.approx(1500, rel=0.01)
    assert fc.date_at_final is None


def test_the_admin_form_refuses_a_task_interval_of_a_million_as_the_api_does(world):
    """The admin's form runs the model's check, which is the services' bound: 1,000,000 weeks is refused."""
    task = TaskDefinition.objects.filter(trigger="interval").first()
    task.interval_value, task.interval_unit = 1_000_000, "weeks"
    from django.core.exceptions import ValidationError

    with pytest.raises(ValidationError) as refused:
        task.full_clean(exclude=["organisation"])
    assert refused.value.message_dict["interval_value"] == [
        "Interval: 1000000 weeks is out of range; allowed: 1 to 521 weeks (ten years)"
    ]


@pytest.mark.parametrize("raw", ["1e309", "1.5", "99999999999999999999999"])
def test_an_id_no_row_can_have_is_refused_naming_the_field(world, api, raw):
    """A unit's building given as 1e309 (infinity once parsed), 1.5 or past the database's integer range is a
    400 on that field, not a database error."""
    body = '{"building": ID, "tag": "AHU-99", "design_supply_airflow_m3s": 1, "design_min_oa_fraction": 0.2}'
    body = body.replace("ID", raw)
    r = api.post("/api/inventory/ahus/", body, content_type="application/json")
    assert r.status_code == 400, r.content
    said = " ".join(r.json()["errors"]["building"])
    assert "is not a whole number" in said or "out of range" in said


def test_the_technicians_day_refuses_a_start_of_nan_degrees(world):
    """The day's route from lat=nan is a 400 naming latitude and its range, not an answer with no JSON in it."""
    client = APIClient()
    client.force_authenticate(world.technician)
    with time_machine.travel(NOW, tick=False):
        r = client.get("/api/scheduling/today/?lat=nan&lon=24.9")
        ok = client.get("/api/scheduling/today/?lat=60.2&lon=24.9")
    assert r.status_code == 400
    assert r.json()["errors"]["lat"] == ["Latitude: 'nan' is not a finite number; allowed: a number from -90 to 90 °"]
    assert ok.status_code == 200
