"""A site's list of BACnet devices: checked (each refusal names the field, the value and what is allowed), audited."""

import pytest
from django.core.exceptions import ValidationError

from accounts.models import AuditEvent
from automation.bacnet_devices import bacnet_device_create, bacnet_device_delete, bacnet_device_update
from automation.models import BacnetDevice


def test_a_device_is_listed_with_the_usual_port_and_audited(plant):
    """An address without a port gets BACnet/IP's 47808 (ASHRAE 135 Annex J, from memory); the poll interval
    defaults to 15 minutes; the change is in the audit trail."""
    device = bacnet_device_create(
        site=plant.site, by=plant.people.supervisor, device_instance=1001, address=" 192.168.10.21 "
    )
    assert device.address == "192.168.10.21:47808" and device.poll_seconds == 900
    assert AuditEvent.objects.filter(action="bacnet_device_create", organisation=plant.org_a).exists()


def test_every_problem_is_named_at_once_and_nothing_is_saved(plant):
    """A host name, a poll every second and an instance past the 22-bit range are refused together."""
    with pytest.raises(ValidationError) as caught:
        bacnet_device_create(site=plant.site, device_instance=4_194_303, address="controller.local", poll_seconds=1)
    errors = caught.value.message_dict
    assert set(errors) == {"device_instance", "address", "poll_seconds"}
    assert "'controller.local'" in errors["address"][0] and "192.168.10.21:47808" in errors["address"][0]
    assert "1 is out of range; allowed: a whole number from 10 to 86400 s" in errors["poll_seconds"][0]
    assert "4194303" in errors["device_instance"][0] and "4194302" in errors["device_instance"][0]
    assert not BacnetDevice.objects.exists()


def test_an_instance_is_listed_once_per_site(plant):
    """The same instance twice on one site is refused; another site may have its own device of that instance."""
    bacnet_device_create(site=plant.site, device_instance=1001, address="10.0.0.5")
    with pytest.raises(ValidationError) as caught:
        bacnet_device_create(site=plant.site, device_instance=1001, address="10.0.0.6")
    assert "already in the list of Harbour Offices" in caught.value.message_dict["device_instance"][0]
    bacnet_device_create(site=plant.foreign_site, device_instance=1001, address="10.0.0.5")


def test_a_new_address_is_tried_afresh_and_a_bad_port_refused(plant):
    """Moving a device forgets what was known of its services; port 70000 is refused."""
    device = bacnet_device_create(site=plant.site, device_instance=1001, address="10.0.0.5")
    BacnetDevice.objects.filter(pk=device.pk).update(read_multiple=False)
    device.refresh_from_db()
    device = bacnet_device_update(device=device, address="10.0.0.7:47809")
    device.refresh_from_db()
    assert device.address == "10.0.0.7:47809" and device.read_multiple is None
    with pytest.raises(ValidationError) as caught:
        bacnet_device_update(device=device, address="10.0.0.7:70000")
    assert "port 1 to 65535" in caught.value.message_dict["address"][0]
    bacnet_device_delete(device=device, by=plant.people.supervisor)
    assert not BacnetDevice.objects.exists()
