"""Points: mapping a unit's automation points, with refusals that name the field, the value and what is allowed."""

import pytest
from django.core.exceptions import ValidationError
from django.db import IntegrityError

from accounts.models import AuditEvent
from automation.models import Point
from automation.services import point_create, point_delete, point_update
from inventory.services import component_delete
from tests.automation.conftest import part


def _refusal(call, **kwargs) -> dict:
    with pytest.raises(ValidationError) as caught:
        call(**kwargs)
    return caught.value.message_dict


def test_a_point_takes_its_classes_si_unit_and_is_audited(plant):
    """A point created without a unit gets its Brick class's SI unit; the change is in the audit trail."""
    point = point_create(
        ahu=plant.ahu,
        by=plant.people.supervisor,
        name="AHU1.PREHEAT-T",
        brick_class="Preheat_Supply_Air_Temperature_Sensor",
    )
    assert point.unit == "DEG_C"
    assert point.site == plant.site
    assert AuditEvent.objects.filter(action="point_create", object_id=str(point.pk), organisation=plant.org_a).exists()


def test_every_problem_is_named_at_once(plant):
    """A point with an unknown class, a half BACnet address and a control character in its name is refused with
    each field named, its value and what is allowed; nothing is saved."""
    errors = _refusal(
        point_create,
        ahu=plant.ahu,
        name="bad\x00name",
        brick_class="Supply_Air_Temp",
        bacnet_device_instance=5,
    )
    assert set(errors) == {"name", "brick_class", "bacnet_object_type", "bacnet_object_instance"}
    assert (
        "'Supply_Air_Temp'" in errors["brick_class"][0] and "Supply_Air_Temperature_Sensor" in errors["brick_class"][0]
    )
    assert "all three parts" in errors["bacnet_object_type"][0]
    assert not Point.objects.filter(brick_class="Supply_Air_Temp").exists()


def test_unit_must_be_the_classes_unit(plant):
    """A filter pressure drop in °C is refused, naming the unit allowed."""
    errors = _refusal(
        point_create,
        ahu=plant.ahu,
        name="AHU1.FILT2",
        brick_class="Filter_Differential_Pressure_Sensor",
        unit="DEG_C",
        component=part(plant.ahu, "Pre-filters"),
    )
    assert errors == {
        "unit": ["Unit 'DEG_C' is not the unit of a Filter_Differential_Pressure_Sensor; allowed: PA (Pa)"]
    }


def test_a_fans_point_needs_a_fan(plant):
    """A fan status must name a fan of the unit: none, a filter bank or another unit's fan are refused."""
    errors = _refusal(point_create, ahu=plant.ahu, name="X1", brick_class="Fan_Status")
    assert "a component of kind fan" in errors["component"][0]
    errors = _refusal(
        point_create, ahu=plant.ahu, name="X2", brick_class="Fan_Status", component=part(plant.ahu, "Final filters")
    )
    assert "'Final filters' is a filter_bank" in errors["component"][0]
    errors = _refusal(
        point_create,
        ahu=plant.ahu,
        name="X3",
        brick_class="Fan_Status",
        component=part(plant.foreign_ahu, "Supply fan"),
    )
    assert "another unit" in errors["component"][0]


def test_names_and_bacnet_addresses_are_unique(plant):
    """A second point of the same name on a unit, or at a BACnet address already mapped on the site, is refused."""
    errors = _refusal(point_create, ahu=plant.ahu, name="AHU1.SAT", brick_class="Supply_Air_Temperature_Sensor")
    assert "already used on AHU-01" in errors["name"][0]
    errors = _refusal(
        point_create,
        ahu=plant.ahu,
        name="AHU1.SAT2",
        brick_class="Supply_Air_Temperature_Sensor",
        bacnet_device_instance=1001,
        bacnet_object_type="analog-input",
        bacnet_object_instance=1,
    )
    assert "1001/analog-input/1 is already the point 'AHU1.SAT'" in errors["bacnet_object_instance"][0]


def test_bacnet_numbers_are_in_range(plant):
    """BACnet instances are 22-bit: 4194303 is refused for a device, a negative object instance always."""
    errors = _refusal(
        point_create,
        ahu=plant.ahu,
        name="AHU1.RH",
        brick_class="Return_Air_Temperature_Sensor",
        bacnet_device_instance=4_194_303,
        bacnet_object_type="analog-value",
        bacnet_object_instance=-1,
    )
    assert "from 0 to 4194302" in errors["bacnet_device_instance"][0]
    assert "-1" in errors["bacnet_object_instance"][0]


def test_the_database_refuses_half_an_address(plant):
    """The database itself keeps a BACnet address whole or empty (a write that skips the services)."""
    point = plant.points["AHU1.SAT"]
    with pytest.raises(IntegrityError):
        Point.objects.filter(pk=point.pk).update(bacnet_object_type="")


def test_update_and_delete(plant):
    """A point is renamed and readdressed; removed, it is gone with an audit event; its part is then free to go."""
    point = plant.points["AHU1.CCV"]
    point_update(
        point=point,
        by=plant.people.supervisor,
        name="AHU1.CCV-CMD",
        bacnet_device_instance=1001,
        bacnet_object_type="analog-output",
        bacnet_object_instance=9,
    )
    point.refresh_from_db()
    assert (point.name, point.bacnet_object_instance, point.unit) == ("AHU1.CCV-CMD", 9, "PERCENT")
    coil = point.component
    with pytest.raises(ValidationError) as caught:
        component_delete(component=coil)
    assert "points" in str(caught.value)
    point_id = point.pk
    point_delete(point=point, by=plant.people.supervisor)
    assert not Point.objects.filter(pk=point_id).exists()
    assert AuditEvent.objects.filter(action="point_delete", object_id=str(point_id)).exists()
    component_delete(component=coil)


def test_update_checks_the_merged_point(plant):
    """Changing only the class checks it against the unit already stored: a speed command in ppm is refused."""
    point = plant.points["AHU1.CO2"]
    errors = _refusal(point_update, point=point, brick_class="Fan_Speed_Command")
    assert set(errors) == {"unit", "component"}
