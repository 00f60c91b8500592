"""The shipped task library and supervisors' changes to it."""

import pytest
from django.core.exceptions import ValidationError

from scheduling.library import LIBRARY
from scheduling.models import TaskCategory, TaskDefinition
from scheduling.selectors import effective_tasks
from scheduling.services import task_definition_create, task_definition_override, task_library_install
from tests.factories.accounts import OrganisationFactory

pytestmark = pytest.mark.django_db

CODES = {
    "filter_check",
    "filter_replace",
    "belt_drive",
    "fan_bearings",
    "fan_proving",
    "coil_clean",
    "drain_pan",
    "cooling_season_check",
    "damper_actuator",
    "preheater_freeze",
    "sensor_calibration",
    "heat_recovery",
    "intake_screen",
    "humidifier",
    "controls_check",
    "ventilation_check",
    "coil_valve_leak",
}


def test_library_installs_every_agreed_code_once():
    """Installing the library twice gives each agreed task code exactly once, with its checklist code."""
    task_library_install()
    task_library_install()
    rows = TaskDefinition.objects.filter(organisation__isnull=True)
    assert {t.code for t in rows} == CODES
    assert rows.count() == len(CODES)
    for t in rows:
        assert t.checklist_code == t.code
        assert t.category in TaskCategory.values
        assert t.source, f"{t.code} says nowhere where its frequency comes from"


def test_every_task_names_its_source_honestly():
    """Each default frequency is marked as from the standard (from memory) or as common practice."""
    for item in LIBRARY:
        assert "from memory" in item["source"] or "Common practice" in item["source"], item["code"]


def test_fan_and_heater_tasks_carry_lockout_cautions():
    """Work inside fan and heater sections starts with lockout/tagout and the precedence line."""
    task_library_install()
    for code in ("filter_replace", "belt_drive", "fan_bearings", "coil_clean", "preheater_freeze"):
        notes = TaskDefinition.objects.get(code=code, organisation__isnull=True).safety_notes
        assert "Lock out and tag out" in notes
        assert "take precedence" in notes


def test_the_leak_by_test_warns_against_shutting_a_coil_valve_in_cold_outdoor_air():
    """The leak-by test holds a coil's valve shut with the fan running; with outdoor air below about 5 °C (the
    preheat threshold, common practice) that can freeze a preheat or any water coil: its notes say so first."""
    task_library_install()
    notes = TaskDefinition.objects.get(code="coil_valve_leak", organisation__isnull=True).safety_notes
    assert notes.startswith("Freeze risk: do not shut a preheat coil's valve (or any water coil's)")
    assert "below about 5 °C" in notes and "outdoor-air damper is closed or the unit runs on recirculation" in notes
    assert "frost thermostat" in notes
    assert "Lock out and tag out" in notes and "take precedence" in notes


def test_override_changes_frequency_for_one_organisation_only():
    """A supervisor's new frequency applies to their organisation; others keep the library value."""
    task_library_install()
    mine, other = OrganisationFactory(), OrganisationFactory()
    task_definition_override(organisation=mine, code="belt_drive", interval_value=2)
    assert effective_tasks(organisation=mine)["belt_drive"].interval_value == 2
    assert effective_tasks(organisation=other)["belt_drive"].interval_value == 3


def test_own_task_needs_a_valid_trigger():
    """An organisation's own interval task without an interval is refused, naming the field."""
    org = OrganisationFactory()
    with pytest.raises(ValidationError) as exc:
        task_definition_create(
            organisation=org,
            code="roof_walk",
            name="Roof walk",
            category="intake_screen",
            trigger="interval",
            interval_unit="months",
        )
    assert "interval_value" in exc.value.message_dict
    task = task_definition_create(
        organisation=org,
        code="roof_walk",
        name="Roof walk",
        category="intake_screen",
        trigger="interval",
        interval_value=1,
        interval_unit="months",
    )
    assert effective_tasks(organisation=org)["roof_walk"] == task


@pytest.mark.parametrize(("reason", "words"), [("belt\x00gone", '"\\x00"'), ("x" * 201, "at most 200 characters")])
def test_switching_a_task_off_refuses_a_reason_with_nul_or_too_long(reason, words):
    """A unit's task switched off with a reason holding NUL (PostgreSQL cannot store it) or longer than the
    column is refused naming the reason and what is allowed; no setting is stored."""
    from scheduling.models import UnitTaskSetting
    from scheduling.services import unit_task_set
    from tests.factories.inventory import AHUFactory

    ahu = AHUFactory()
    with pytest.raises(ValidationError) as exc:
        unit_task_set(ahu=ahu, task_code="filter_check", enabled=False, reason=reason)
    [message] = exc.value.message_dict["reason"]
    assert message.startswith("Reason") and words in message
    assert not UnitTaskSetting.objects.exists()
