"""A freeze event found in the trends says, for an HVAC reader, what happened: the lowest supply air and when on the
site's clock, which freeze-protection stage it reached and which it did not, and what the unit did when the air was
coldest — the supply fan, the outdoor-air damper, the heating valve — each with the trend point it was read from,
and plainly which part has no point mapped. The fault's page, the property manager's finding, the corrective work
and the unit history PDF say the same, in the reader's units.

The world: a unit logging every 5 minutes whose supply air dips on the night of 3–4 Dec 2026 (Amsterdam, CET):
4.0 °C at 04:05, 3.0 °C at 04:10, 2.8 °C at 04:15, 16 °C otherwise. Below 4.4 °C for 15 min and below 3.3 °C for
10 min: stage 1 (4.4 °C for 5 min) and stage 2 (3.3 °C for 5 min) are reached, stage 3 (3.3 °C for 15 min or
1.0 °C for 5 min) is not (stages as engineering.faults.freeze: ASHRAE Guideline 36 via the Modelica Buildings
library). The fan ran, the outdoor-air damper was commanded 20 % open and the heating valve shut; the unit's
electric preheater has no point mapped. The clock is set for each step.
"""

import datetime as dt
import re
import zoneinfo

import pytest
import time_machine
from django.urls import reverse

from accounts.models import Role, SiteGrant
from automation.fault_models import Fault
from automation.freeze_words import unit_parts
from automation.judging import unit_day_judge
from inspections import reasons
from inventory.models import Component
from scheduling.services import task_library_install
from tests.automation.trend_builders import map_points, put
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit

pytestmark = pytest.mark.django_db

ZONE = zoneinfo.ZoneInfo("Europe/Amsterdam")
DAY = dt.date(2026, 12, 4)
JUDGED = dt.datetime(2026, 12, 5, 2, tzinfo=dt.UTC)
READ = dt.datetime(2026, 12, 5, 9, tzinfo=dt.UTC)
DIP = {dt.time(4, 5): 4.0, dt.time(4, 10): 3.0, dt.time(4, 15): 2.8}

SAID_SI = (
    "The supply air fell to 2.8 °C at 04:15 CET on the night of 3–4 Dec 2026 and stayed below 3.3 °C for 10 min: "
    "it reached freeze-protection stage 2 (below 3.3 °C for 5 min) but not stage 3 (below 3.3 °C for 15 min or "
    "below 1.0 °C for 5 min)."
)
DID_SI = (
    "When the supply air was coldest: the supply fan was running (trend point AHU-F1.SF-STS); the outdoor-air "
    "damper was commanded 20 % open (trend point AHU-F1.OAD); the Heating coil valve was commanded shut (trend "
    "point AHU-F1.HCV); no command of the Electric preheater is mapped, so the trends cannot say what it did."
)


def flat(text: str) -> str:
    return " ".join(re.sub(r"<[^>]+>", " ", text).replace("&#x27;", "'").split())


@pytest.fixture
def world():
    org = OrganisationFactory(name="Frost Air")
    site = SiteFactory(organisation=org, name="Polder Works", time_zone="Europe/Amsterdam")
    ahu = make_full_unit(building=BuildingFactory(site=site, name="Hall"), tag="AHU-F1")
    Component.objects.create(
        ahu=ahu,
        kind="electric_preheater",
        name="Electric preheater",
        position=1,
        specs={"power_w": 12000, "stages": 2, "switch_on_c": -5},
    )
    task_library_install()
    points = map_points(ahu, names=["SAT", "OAT", "SF-STS", "SF-SPD", "OAD", "HCV"])
    start = dt.datetime.combine(DAY - dt.timedelta(days=1), dt.time(), tzinfo=ZONE)
    times = [start + dt.timedelta(minutes=5 * k) for k in range(2 * 24 * 12)]
    put(
        points["SAT"], [(t, DIP.get(t.timetz().replace(tzinfo=None), 16.0) if t.date() == DAY else 16.0) for t in times]
    )
    for name, value in {"OAT": -8.0, "SF-STS": 1.0, "SF-SPD": 60.0, "OAD": 20.0, "HCV": 0.0}.items():
        put(points[name], [(t, value) for t in times])
    with time_machine.travel(JUDGED, tick=False):
        unit_day_judge(ahu=ahu, day=DAY)
    fault = Fault.objects.get(ahu=ahu, code=Fault.FREEZE)
    boss = make_person(organisation=org, role=Role.SUPERVISOR, username="boss")
    pm = make_person(organisation=org, role=Role.PROPERTY_MANAGER, username="pm")
    SiteGrant.objects.create(user=pm, site=site)
    return {"org": org, "site": site, "ahu": ahu, "fault": fault, "boss": boss, "pm": pm}


def page(client, user, url, *, system="si") -> str:
    user.unit_system = system
    user.save(update_fields=["unit_system"])
    client.force_login(user)
    with time_machine.travel(READ, tick=False):
        res = client.get(url)
    assert res.status_code == 200
    return flat(res.content.decode())


def test_the_fault_page_says_when_how_low_which_stage_and_what_the_unit_did(client, world):
    fault = world["fault"]
    text = page(client, world["boss"], reverse("frontend:fault", kwargs={"pk": fault.pk}))
    assert SAID_SI in text
    assert DID_SI in text


def test_the_finding_and_the_corrective_work_say_the_same(client, world):
    fault = world["fault"]
    fault.refresh_from_db()
    text = page(client, world["pm"], reverse("frontend:manager_finding", kwargs={"pk": fault.finding_id}))
    assert SAID_SI in text and DID_SI in text
    assert SAID_SI in fault.corrective_work_order.reason and DID_SI in fault.corrective_work_order.reason


def test_a_us_reader_reads_the_temperatures_in_fahrenheit(client, world):
    fault = world["fault"]
    text = page(client, world["pm"], reverse("frontend:manager_finding", kwargs={"pk": fault.finding_id}), system="us")
    # 2.8 °C = 37.0 °F, 3.3 °C = 37.9 °F (°F = °C × 9/5 + 32).
    assert "The supply air fell to 37.0 °F at 04:15 CET on the night of 3–4 Dec 2026" in text
    assert "but not stage 3 (below 37.9 °F for 15 min" in text
    assert "the outdoor-air damper was commanded 20 % open" in text


def test_the_unit_history_pdf_says_it(world, django_capture_on_commit_callbacks):
    from reports.models import Report
    from reports.services import report_request
    from tests.reports.conftest import pdf_text

    with time_machine.travel(READ, tick=False), django_capture_on_commit_callbacks(execute=True):
        report = report_request(
            user=world["boss"],
            kind="unit_history",
            parameters={"unit": world["ahu"].pk, "start": "2026-12-01", "end": "2026-12-05"},
        )
    report.refresh_from_db()
    assert report.status == Report.Status.DONE, report.error
    text = " ".join(pdf_text(report).split())
    assert "at 04:15 CET on the night of 3–4 Dec 2026" in text
    assert "but not stage 3" in text
    assert "(trend point AHU-F1.OAD)" in text
    assert "no command of the Electric preheater is mapped" in text


def test_points_not_mapped_are_said_plainly():
    """A unit whose trends hold the supply air alone: the words say the trends cannot tell what the fan, the damper
    and the heating did, rather than nothing."""
    said = reasons.render(
        unit_parts({"fan_status": None, "fan_speed": None, "oa_damper": None, "heating": [], "heating_unmapped": []}),
        "si",
    )
    assert "no supply-fan status or speed point is mapped, so the trends cannot say whether it ran" in said
    assert "no outdoor-air damper command is mapped, so the trends cannot say where it was" in said
    assert "the unit has no heating or preheat part in the registry" in said
    gap = reasons.render(
        unit_parts(
            {
                "fan_status": {"point": "F.STS", "value": None},
                "fan_speed": {"point": "F.SPD", "value": 0.0},
                "oa_damper": {"point": "F.OAD", "value": None},
                "heating": [{"part": "Preheat coil", "point": "F.PHV", "value": 1.0}],
                "heating_unmapped": [],
            }
        ),
        "si",
    )
    assert "the supply fan was commanded off (trend point F.SPD)" in gap
    assert "the outdoor-air damper's trend point F.OAD has no sample from that time" in gap
    assert "the Preheat coil valve was commanded 100 % open (trend point F.PHV)" in gap


def test_the_words_say_whether_the_unit_did_what_the_stage_calls_for(client, world):
    """At stage 2 the guideline's freeze protection shuts the outdoor air off: a damper still commanded 20 % open
    when the air was coldest (after the stage was reached) is named as what the unit did not do, with what to
    check; a unit whose trends show the stage's response is said to have done it."""
    text = page(client, world["boss"], reverse("frontend:fault", kwargs={"pk": world["fault"].pk}))
    assert (
        "The unit did not do what stage 2 calls for: the outdoor-air damper was still 20 % open — check the "
        "freeze-protection sequence, its wiring and the low-limit thermostat before the next frost." in text
    ), text
    from automation.freeze_words import response_parts

    def said(stage, unit):
        return reasons.render(response_parts(stage, unit), "si")

    closed = {"fan_status": {"point": "F.STS", "value": 0.0}, "oa_damper": {"point": "F.OAD", "value": 0.0}}
    assert said("stage 3", closed) == ". The unit did what stage 3 calls for, as far as its trend points show"
    running = {"fan_status": {"point": "F.STS", "value": 1.0}, "oa_damper": {"point": "F.OAD", "value": 1.0}}
    assert said("stage 3", running) == (
        ". The unit did not do what stage 3 calls for: the supply fan kept running and the outdoor-air damper was "
        "still 100 % open — check the freeze-protection sequence, its wiring and the low-limit thermostat before "
        "the next frost"
    )
    # Stage 1 asks no fan stop and no damper closing (the damper goes to its minimum, which the trends do not
    # know): a running fan and an open damper are not held against it; heating left shut is.
    shut = {**running, "heating": [{"part": "Preheat coil", "point": "F.PHV", "value": 0.0}]}
    assert said("stage 1", shut) == (
        ". The unit did not do what stage 1 calls for: no heating or preheat was commanded — check the "
        "freeze-protection sequence, its wiring and the low-limit thermostat before the next frost"
    )
    assert said("stage 2", {"fan_status": None, "oa_damper": None}) == ""


def test_the_moment_keeps_each_heating_valve_as_it_was_when_the_air_first_fell(world):
    """What the heating did is judged against what it was doing before: the heating valve's command when the air
    first fell below the stage's temperature is kept beside its command at the coldest moment (shut at both here)."""
    windows = [w for w in world["fault"].windows if (w.get("unit") or {}).get("heating")]
    assert windows, world["fault"].windows
    for w in windows:
        [valve] = w["unit"]["heating"]
        assert (valve["point"], valve["value"], valve["before"]) == ("AHU-F1.HCV", 0.0, 0.0)


def test_a_stage_that_did_not_respond_or_cannot_be_shown_to_never_reads_as_done():
    """The unit is said to have done what a stage calls for only when every response the stage calls for was read
    and done. Stage 1 (ASHRAE Guideline 36-2021 5.16.12.1, as engineering.faults.freeze.STAGE_ACTIONS words it) turns
    the heating up: a valve left where it was before the stage is not a response, a valve opened further or fully
    open is; a valve whose earlier command is unknown shows nothing either way. Stage 3 stops the fan and closes the
    damper: a shut damper with no fan status or speed read does not show the stage was done. Commands as fractions;
    at or below the rules' 1 % command tolerance reads shut (G36_DEFAULTS.command_tolerance)."""
    from automation.freeze_words import response_parts

    def said(stage, unit):
        return reasons.render(response_parts(stage, unit), "si")

    def valve(value, before):
        return {"part": "Heating coil", "point": "F.HCV", "value": value, "before": before}

    done = ". The unit did what stage 1 calls for, as far as its trend points show"
    left = {"heating": [valve(0.3, 0.3)], "heating_unmapped": []}
    assert said("stage 1", left) == (
        ". The unit did not do what stage 1 calls for: the heating was not turned up (no heating or preheat valve "
        "opened further) — check the freeze-protection sequence, its wiring and the low-limit thermostat before the "
        "next frost"
    )
    assert said("stage 1", {"heating": [valve(0.8, 0.3)], "heating_unmapped": []}) == done
    assert said("stage 1", {"heating": [valve(1.0, None)], "heating_unmapped": []}) == done
    for unknown in (
        {"heating": [valve(0.3, None)], "heating_unmapped": []},  # a window kept before the earlier command was read
        {"heating": [valve(0.3, 0.3)], "heating_unmapped": ["Electric preheater"]},  # another heater not mapped
        {"heating": [valve(0.0, 0.0), valve(None, None)], "heating_unmapped": []},  # one valve not sampled
        {"heating": [], "heating_unmapped": []},
    ):
        assert said("stage 1", unknown) == "", unknown
    shut_no_fan = {"fan_status": None, "fan_speed": None, "oa_damper": {"point": "F.OAD", "value": 0.0}}
    assert said("stage 3", shut_no_fan) == ""
    shut_stopped = {**shut_no_fan, "fan_status": {"point": "F.STS", "value": 0.0}}
    assert said("stage 3", shut_stopped) == ". The unit did what stage 3 calls for, as far as its trend points show"
