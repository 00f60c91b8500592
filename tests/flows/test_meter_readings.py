"""Run-hour readings that no meter could show are refused wherever they come in, in plain words.

Scenario: a unit's meter read 11,034 h; a month later someone enters 41,250 h
(about 1,000 h a day). The meter API, the meter CSV import and the phone's
checklist all refuse it, naming the value, the previous reading and its date,
and the most the meter could show; nothing is stored.
"""

import datetime as dt

import pytest
import time_machine

from inspections.models import Inspection
from scheduling.models import MeterReading
from tests.factories.inspections import FINISHED, make_visit, r, sync_form
from tests.factories.scheduling import make_supervisor

pytestmark = pytest.mark.django_db
METERS = "/api/scheduling/meter-readings/"
SYNC = "/api/inspections/sync/"
# Thirty days before the sync factory's finishing time: 720 h of clock time.
EARLIER = FINISHED - dt.timedelta(days=30)


def _push(client, label: str, hours: float, at: dt.datetime, **extra):
    return client.post(
        METERS, {"unit_label": label, "hours": hours, "taken_at": at.isoformat(), **extra}, format="json"
    )


@time_machine.travel(FINISHED + dt.timedelta(hours=2), tick=False)
def test_meter_api_refuses_a_jump_of_more_hours_than_have_passed(api_client):
    """41,250 h a month after 11,034 h is refused with the previous reading, its date and the most possible."""
    wo, _ = make_visit(tasks=["filter_check"])
    boss = make_supervisor(wo.organisation)
    api_client.force_authenticate(boss)
    label = wo.ahu.label_code
    assert _push(api_client, label, 11_034, EARLIER).status_code == 201
    bad = _push(api_client, label, 41_250, FINISHED)
    assert bad.status_code == 400, bad.content
    [message] = bad.json()["errors"]["hours"]
    # 720 h passed; 2 % of it is 14.4 h: at most 11,034 + 734.4 = 11,768.4 h (the rule: elapsed + max(2 %, 1 h)).
    assert "Run hours 41250 h is more than the meter can have run" in message
    assert "previous reading was 11034 h on 1 Feb 2025 10:30 CET" in message
    assert "720 h of clock time earlier" in message
    assert "at most 11768.4 h is possible" in message
    assert "meter replacement" in message
    assert "_" not in message  # no field names in the text a person reads
    assert MeterReading.objects.filter(ahu=wo.ahu).count() == 1
    # Within the elapsed time it is accepted; a replaced meter may show anything, marked as such.
    assert _push(api_client, label, 11_700, FINISHED).status_code == 201
    later = FINISHED + dt.timedelta(hours=1)
    assert _push(api_client, label, 41_250, later).status_code == 400
    assert _push(api_client, label, 41_250, later, is_reset=True).status_code == 201


@time_machine.travel(FINISHED, tick=False)
def test_meter_api_refuses_a_reading_from_the_future(api_client):
    """A reading dated a day after now is refused on its time, in plain words."""
    wo, _ = make_visit(tasks=["filter_check"])
    api_client.force_authenticate(make_supervisor(wo.organisation))
    bad = _push(api_client, wo.ahu.label_code, 100, FINISHED + dt.timedelta(days=1))
    assert bad.status_code == 400
    [message] = bad.json()["errors"]["taken_at"]
    assert "later than now" in message and "cannot come from the future" in message
    assert not MeterReading.objects.exists()


@time_machine.travel(FINISHED + dt.timedelta(hours=2), tick=False)
def test_meter_csv_import_refuses_the_jump_by_row(api_client):
    """The building-automation CSV names the row with the jump and stores nothing."""
    wo, _ = make_visit(tasks=["filter_check"])
    api_client.force_authenticate(make_supervisor(wo.organisation))
    label = wo.ahu.label_code
    text = f"unit_label,taken_at,hours\n{label},2025-02-01 10:30,11034\n{label},2025-03-03 10:30,41250\n"
    from scheduling.services import meter_readings_import_csv

    with pytest.raises(Exception) as exc:
        meter_readings_import_csv(organisation=wo.organisation, text=text)
    [message] = exc.value.message_dict["file"]
    assert message.startswith("row 3: hours: Run hours 41250 h is more than the meter can have run")
    assert not MeterReading.objects.exists()


@time_machine.travel(FINISHED + dt.timedelta(hours=2), tick=False)
def test_meter_csv_import_names_a_label_with_nul_by_row_and_stores_nothing():
    """A unit or component label holding NUL (PostgreSQL cannot hold it, even in a lookup) is no unit's label:
    the row is named with the value, and nothing is stored."""
    from django.core.exceptions import ValidationError

    from scheduling.services import meter_readings_import_csv

    wo, _ = make_visit(tasks=["filter_check"])
    label = wo.ahu.label_code
    text = (
        f"unit_label,taken_at,hours,component_label\na\x00b,2025-02-01 10:30,100,\n{label},2025-02-01 10:30,100,\x00\n"
    )
    with pytest.raises(ValidationError) as exc:
        meter_readings_import_csv(organisation=wo.organisation, text=text)
    messages = exc.value.message_dict["file"]
    assert messages[0].startswith("row 2: unit_label='a\\x00b' is not a unit of")
    assert messages[1].startswith("row 3: component_label='\\x00' is not a component of")
    assert not MeterReading.objects.exists()


@time_machine.travel(FINISHED + dt.timedelta(hours=2), tick=False)
def test_a_checklist_with_a_run_hour_jump_is_refused_with_a_field_error(api_client):
    """The phone's form with 41,250 h a month after 11,034 h is refused whole; the error is on the run-hour value."""
    wo, tech = make_visit(tasks=["filter_check"])
    boss = make_supervisor(wo.organisation)
    api_client.force_authenticate(boss)
    assert _push(api_client, wo.ahu.label_code, 11_034, EARLIER).status_code == 201
    pre, final = wo.ahu.components.get(name="Pre-filters"), wo.ahu.components.get(name="Final filters")
    readings = [r("visit.run_hours", 41_250)]
    for bank, dp in ((pre, 80), (final, 150)):
        readings += [
            r("filter_check.dp", dp, bank),
            r("filter_check.seated", "ok", bank),
            r("filter_check.media", "loaded", bank),
        ]
    api_client.force_authenticate(tech)
    res = api_client.post(SYNC, {"forms": [sync_form(wo, readings)]}, format="json")
    assert res.status_code == 200, res.content
    [result] = res.json()["results"]
    assert result["status"] == "refused"
    [message] = result["errors"]["readings[0].value"]
    assert message.startswith("Run-hour meter 41250 h is more than the meter can have run")
    assert "previous reading was 11034 h on 1 Feb 2025 10:30 CET" in message and "at most 11768.4 h" in message
    assert "not applicable" in message
    assert not Inspection.objects.exists()
    assert MeterReading.objects.filter(ahu=wo.ahu).count() == 1
    # Corrected to a possible value, the same form is stored and records the reading.
    readings[0] = r("visit.run_hours", 11_700)
    res = api_client.post(SYNC, {"forms": [sync_form(wo, readings)]}, format="json")
    [result] = res.json()["results"]
    assert result["status"] in ("stored", "flagged") and not result["errors"], result
    assert sorted(MeterReading.objects.filter(ahu=wo.ahu).values_list("hours", flat=True)) == [11_034, 11_700]
