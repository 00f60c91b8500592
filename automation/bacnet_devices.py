"""Writes to a site's list of BACnet devices (``BacnetDevice``): where the poller reaches each device and how often.

Check, then do: ``bacnet_device_check`` returns clean values or raises ``ValidationError`` naming each field, its
value and what is allowed; the actions write clean values in one transaction with an audit event. Points name
their device by instance (``automation.services``); the poller reads the list (``automation.polling``).
"""

from __future__ import annotations

import ipaddress
from typing import Any

from django.core.exceptions import ValidationError
from django.db import transaction

from accounts.inputs import FieldErrors, check_integer, shown
from accounts.models import User
from inventory.models import Site

from .models import BACNET_DEVICE_MAX, BacnetDevice

DEVICE_FIELDS = ("device_instance", "address", "poll_seconds")
BACNET_PORT = 47808  # BACnet/IP's registered UDP port, 0xBAC0 (ASHRAE 135 Annex J; from memory)
POLL_SECONDS = (10, 86_400)
_ADDRESS_ALLOWED = (
    "an IPv4 address with an optional UDP port, e.g. 192.168.10.21 or 192.168.10.21:47808 (port 1 to 65535)"
)


def bacnet_address_clean(raw: Any) -> str | None:
    """``host[:port]`` as ``host:port`` (port 47808 when left out), or None when it is not one."""
    if not isinstance(raw, str):
        return None
    host, _, port_text = raw.strip().partition(":")
    try:
        host = str(ipaddress.IPv4Address(host))
    except ValueError:
        return None
    if not port_text:
        return f"{host}:{BACNET_PORT}"
    if not port_text.isdigit() or not 1 <= int(port_text) <= 65_535:
        return None
    return f"{host}:{int(port_text)}"


def bacnet_device_check(*, site: Site, values: dict[str, Any], device: BacnetDevice | None = None) -> dict[str, Any]:
    """Clean values for a new device (all of ``DEVICE_FIELDS``) or the fields that change, or ``ValidationError``."""
    errors = FieldErrors()
    for key in sorted(set(values) - set(DEVICE_FIELDS)):
        errors.add(key, f"{key} is not a BACnet device field; allowed: {', '.join(DEVICE_FIELDS)}")
    current = {name: getattr(device, name) for name in DEVICE_FIELDS} if device is not None else {}
    merged = {**dict.fromkeys(DEVICE_FIELDS), **current, **{k: v for k, v in values.items() if k in DEVICE_FIELDS}}
    if merged["poll_seconds"] is None:
        merged["poll_seconds"] = 900
    clean: dict[str, Any] = {}
    clean["device_instance"] = check_integer(
        merged["device_instance"],
        key="device_instance",
        label="BACnet device instance",
        maximum=BACNET_DEVICE_MAX,
        errors=errors,
        required=True,
    )
    address = bacnet_address_clean(merged["address"])
    if address is None:
        errors.add(
            "address", f"BACnet/IP address {shown(merged['address'])} cannot be reached; allowed: {_ADDRESS_ALLOWED}"
        )
    clean["address"] = address
    clean["poll_seconds"] = check_integer(
        merged["poll_seconds"],
        key="poll_seconds",
        label="Poll interval",
        minimum=POLL_SECONDS[0],
        maximum=POLL_SECONDS[1],
        unit="s",
        errors=errors,
        required=True,
    )
    if "device_instance" not in errors:
        same = BacnetDevice.objects.filter(site=site, device_instance=clean["device_instance"])
        if device is not None:
            same = same.exclude(pk=device.pk)
        if same.exists():
            errors.add(
                "device_instance",
                f"BACnet device instance {clean['device_instance']} is already in the list of {site.name}; "
                "allowed: an instance the site's list does not have",
            )
    if errors:
        raise ValidationError(dict(errors))
    return clean if device is None else {k: clean[k] for k in DEVICE_FIELDS if k in values}


def _audit(by: User | None, device: BacnetDevice, action: str, changes: dict[str, Any]) -> None:
    if by is None:
        return
    from accounts.services import audit_record

    audit_record(actor=by, obj=device, action=action, changes=changes, organisation_id=device.site.organisation_id)


@transaction.atomic
def bacnet_device_create(*, site: Site, by: User | None = None, **values: Any) -> BacnetDevice:
    """Add a BACnet device to the site's list (polled at once, then every ``poll_seconds``)."""
    clean = bacnet_device_check(site=site, values=values)
    device = BacnetDevice.objects.create(site=site, **clean)
    _audit(by, device, "bacnet_device_create", clean)
    return device


@transaction.atomic
def bacnet_device_update(*, device: BacnetDevice, by: User | None = None, **values: Any) -> BacnetDevice:
    """Change a device's instance, address or poll interval; a new address is tried at the next poll."""
    clean = bacnet_device_check(site=device.site, values=values, device=device)
    for name, value in clean.items():
        setattr(device, name, value)
    if "address" in clean:
        device.read_multiple = None  # another device may answer there
        clean_fields = [*clean, "read_multiple"]
    else:
        clean_fields = list(clean)
    device.save(update_fields=clean_fields or None)
    _audit(by, device, "bacnet_device_update", clean)
    return device


@transaction.atomic
def bacnet_device_delete(*, device: BacnetDevice, by: User | None = None) -> None:
    """Remove a device from the site's list; its points stay (and say they cannot be reached)."""
    _audit(by, device, "bacnet_device_delete", {"device_instance": device.device_instance, "address": device.address})
    device.delete()
