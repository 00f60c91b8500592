"""BACnet/IP client: the present values of many objects per device, converted to the points' SI units.

Built on bacpypes3 (https://bacpypes3.readthedocs.io). No Django here: ``automation.polling`` says what to read and
stores what comes back. One call of ``read_devices`` opens the poller's own BACnet application on the configured
interface, reads every device at once (a device that does not answer costs its timeout, not everyone's), and
closes it again.

Per device: ReadPropertyMultiple in batches, where the device takes it; a device that rejects the service (or
whose answer we already know is a rejection) is read one ReadProperty at a time. Analog objects are read with
their ``units`` property and converted by ``engineering.units`` (pint) where the device names a unit; a device
that says ``no-units`` is taken to speak the point's own SI unit. Binary objects give 1 (active) or 0 (inactive),
multi-state objects their state number.

Nothing here raises for one device or one object: each answer carries its error in words, and the caller marks
the points stale with it.
"""

from __future__ import annotations

import asyncio
import math
from collections.abc import Hashable, Iterable
from dataclasses import dataclass, field
from typing import Any

from bacpypes3.apdu import AbortPDU, ErrorRejectAbortNack, RejectPDU
from bacpypes3.app import Application
from bacpypes3.basetypes import BinaryPV, ErrorType
from bacpypes3.local.device import DeviceObject
from bacpypes3.local.networkport import NetworkPortObject
from bacpypes3.pdu import Address
from bacpypes3.primitivedata import ObjectIdentifier
from pint.errors import DimensionalityError

from engineering.units import ureg

# Objects per ReadPropertyMultiple request: two properties each stay well inside the 480-octet smallest
# maximum APDU most controllers accept (ASHRAE 135, from memory), so no segmentation is needed.
BATCH = 12
# Devices read at the same time.
CONCURRENCY = 16
# The vendor identifier the poller's own device object gives (999 is the one bacpypes3's samples use for a
# device without a registered vendor; from memory).
VENDOR_ID = 999

# A BACnet engineering unit (bacpypes3's hyphenated name) → pint unit. ``no-units`` is missing on purpose.
BACNET_UNITS: dict[str, str] = {
    "degrees-celsius": "degC",
    "degrees-fahrenheit": "degF",
    "degrees-kelvin": "kelvin",
    "pascals": "pascal",
    "kilopascals": "kilopascal",
    "hectopascals": "hectopascal",
    "millibars": "millibar",
    "bars": "bar",
    "inches-of-water": "inch_H2O",
    "millimeters-of-water": "millimeter_H2O",
    "centimeters-of-water": "centimeter_H2O",
    "pounds-force-per-square-inch": "psi",
    "percent": "percent",
    "parts-per-million": "ppm",
    "cubic-meters-per-second": "m**3/s",
    "cubic-meters-per-minute": "m**3/min",
    "cubic-meters-per-hour": "m**3/h",
    "liters-per-second": "L/s",
    "liters-per-minute": "L/min",
    "liters-per-hour": "L/h",
    "cubic-feet-per-minute": "cfm",
    "cubic-feet-per-second": "ft**3/s",
}
# A point's SI unit (``automation.vocabulary.PointUnit`` value) → pint unit.
POINT_UNITS: dict[str, str] = {
    "DEG_C": "degC",
    "PA": "pascal",
    "PERCENT": "percent",
    "PPM": "ppm",
    "M3-PER-SEC": "m**3/s",
    "UNITLESS": "dimensionless",
}
_NO_UNITS = "no-units"


@dataclass(frozen=True)
class ObjectRead:
    """One object to read: its type (``analog-input`` …), instance and the SI unit its point keeps."""

    object_type: str
    instance: int
    unit: str

    @property
    def key(self) -> tuple[str, int]:
        return (self.object_type, self.instance)

    @property
    def analog(self) -> bool:
        return self.object_type.startswith("analog-")

    def __str__(self) -> str:
        return f"{self.object_type} {self.instance}"


@dataclass(frozen=True)
class DeviceRead:
    """A device to read: a key of the caller's, its instance, its BACnet/IP address and the objects wanted.
    ``read_multiple`` is what is known of ReadPropertyMultiple (None: not yet known, try it)."""

    key: Hashable
    device_instance: int
    address: str
    objects: tuple[ObjectRead, ...]
    read_multiple: bool | None = None


@dataclass
class ObjectValue:
    """An object's present value in its point's SI unit, or why there is none."""

    value: float | None = None
    error: str = ""


@dataclass
class DeviceAnswer:
    """What one device gave: a value or an error per object, or one error for all (it did not answer)."""

    key: Hashable
    values: dict[tuple[str, int], ObjectValue] = field(default_factory=dict)
    error: str = ""
    read_multiple: bool | None = None


class _NoAnswer(Exception):
    pass


class _MultipleRefused(Exception):
    pass


def to_si(value: Any, *, bacnet_unit: str | None, unit: str) -> float:
    """A present value in the device's engineering unit → the point's SI unit (``unit``, a PointUnit value).

    ``ValueError`` says why not: a unit Plenum does not convert, a unit of another quantity, not a finite number."""
    number = float(value)
    if not math.isfinite(number):
        raise ValueError(f"the device gave {number}, not a finite number")
    target = POINT_UNITS.get(unit)
    if target is None:
        raise ValueError(f"the point's unit {unit!r} is not one the poller converts to")
    if bacnet_unit in (None, "", _NO_UNITS):
        return number
    source = BACNET_UNITS.get(bacnet_unit)
    if source is None:
        raise ValueError(f"the device gives its value in {bacnet_unit}, which the poller does not convert to {unit}")
    try:
        return float(ureg.Quantity(number, source).to(target).magnitude)
    except DimensionalityError:
        raise ValueError(f"the device gives its value in {bacnet_unit}, not a unit of the point's {unit}") from None


def _error_words(error: Any) -> str:
    """An error, reject or abort (bacpypes3's objects) as words: 'object: unknown-object'."""
    if isinstance(error, ErrorType) or hasattr(error, "errorCode"):
        return f"{getattr(error, 'errorClass', '')}: {getattr(error, 'errorCode', '')}".strip(": ")
    if isinstance(error, RejectPDU):
        return f"rejected: {error.apduAbortRejectReason}"
    if isinstance(error, AbortPDU):
        return f"aborted: {error.apduAbortRejectReason}"
    return str(error) or type(error).__name__


def _refuses_service(error: Any) -> bool:
    """The device does not do ReadPropertyMultiple (rejects or aborts it, or says the service is unknown)."""
    if isinstance(error, RejectPDU | AbortPDU):
        return True
    return str(getattr(error, "errorCode", "")) in {"service-request-denied", "unrecognized-service"}


def _value(obj: ObjectRead, present: Any, units: Any) -> ObjectValue:
    if isinstance(present, ErrorType):
        return ObjectValue(error=f"the device has no readable {obj} ({_error_words(present)})")
    if isinstance(units, ErrorType):
        units = None
    try:
        if isinstance(present, BinaryPV):
            return ObjectValue(value=1.0 if str(present) == "active" else 0.0)
        if present is None:
            return ObjectValue(error=f"the device gave no present value for {obj}")
        return ObjectValue(value=to_si(present, bacnet_unit=str(units) if units is not None else None, unit=obj.unit))
    except (TypeError, ValueError) as exc:
        return ObjectValue(error=f"{obj}: {exc}")


async def _request(coro: Any, timeout_s: float) -> Any:
    """One confirmed request: its answer, an error object, or ``_NoAnswer`` after ``timeout_s``."""
    try:
        return await asyncio.wait_for(coro, timeout_s)
    except TimeoutError:
        raise _NoAnswer from None
    except ErrorRejectAbortNack as exc:
        return exc


async def _read_multiple(
    app: Application, address: Address, objects: list[ObjectRead], timeout_s: float
) -> dict[tuple[str, int], ObjectValue]:
    values: dict[tuple[str, int], ObjectValue] = {}
    for start in range(0, len(objects), BATCH):
        batch = objects[start : start + BATCH]
        specs: list[Any] = []
        for obj in batch:
            specs += [
                ObjectIdentifier(f"{obj.object_type},{obj.instance}"),
                ["present-value", "units"] if obj.analog else ["present-value"],
            ]
        answer = await _request(app.read_property_multiple(address, specs), timeout_s)
        if _refuses_service(answer):
            raise _MultipleRefused
        if not isinstance(answer, list):
            # Some devices refuse a whole request for one object they lack: read that batch one by one, so only
            # the missing object's point goes stale.
            values.update(await _read_single(app, address, batch, timeout_s))
            continue
        found: dict[tuple[str, int], dict[str, Any]] = {}
        for object_id, prop, _index, value in answer:
            found.setdefault((str(object_id[0]), int(object_id[1])), {})[str(prop)] = value
        for obj in batch:
            props = found.get(obj.key, {})
            values[obj.key] = _value(obj, props.get("present-value"), props.get("units"))
    return values


async def _read_single(
    app: Application, address: Address, objects: list[ObjectRead], timeout_s: float
) -> dict[tuple[str, int], ObjectValue]:
    values: dict[tuple[str, int], ObjectValue] = {}
    for obj in objects:
        object_id = ObjectIdentifier(f"{obj.object_type},{obj.instance}")
        present = await _request(app.read_property(address, object_id, "present-value"), timeout_s)
        if isinstance(present, ErrorRejectAbortNack):
            values[obj.key] = ObjectValue(error=f"the device has no readable {obj} ({_error_words(present)})")
            continue
        units = None
        if obj.analog:
            units = await _request(app.read_property(address, object_id, "units"), timeout_s)
            if isinstance(units, ErrorRejectAbortNack):
                units = None
        values[obj.key] = _value(obj, present, units)
    return values


async def _read_device(app: Application, device: DeviceRead, timeout_s: float) -> DeviceAnswer:
    answer = DeviceAnswer(key=device.key, read_multiple=device.read_multiple)
    try:
        address = Address(device.address)
    except ValueError as exc:
        answer.error = f"BACnet/IP address {device.address!r} cannot be read ({exc}); allowed: host:port"
        return answer
    objects = list(device.objects)
    try:
        if device.read_multiple is not False:
            try:
                answer.values = await _read_multiple(app, address, objects, timeout_s)
                answer.read_multiple = True
                return answer
            except _MultipleRefused:
                answer.read_multiple = False
        answer.values = await _read_single(app, address, objects, timeout_s)
    except _NoAnswer:
        answer.values = {}
        answer.error = (
            f"BACnet device {device.device_instance} at {device.address} did not answer within {timeout_s:g} s"
        )
    return answer


async def _open(interface: str, device_instance: int, timeout_s: float) -> Application:
    app = Application.from_object_list(
        [
            DeviceObject(
                objectIdentifier=("device", device_instance),
                objectName="Plenum poller",
                vendorIdentifier=VENDOR_ID,
                # The poller's own timeout governs; one try per request.
                apduTimeout=int(timeout_s * 1000) + 1000,
                numberOfApduRetries=0,
            ),
            NetworkPortObject(interface, objectIdentifier=("network-port", 1), objectName="NetworkPort-1"),
        ]
    )
    # bacpypes3 retries binding its socket for ever; give up after the timeout instead and say why.
    for link in app.link_layers.values():
        ready = getattr(getattr(link, "server", None), "_local_transport_ready", None)
        if ready is not None:
            try:
                await asyncio.wait_for(ready.wait(), timeout_s)
            except TimeoutError:
                app.close()
                raise OSError(f"the BACnet interface {interface} could not be opened on this host") from None
    return app


async def _read_all(
    devices: list[DeviceRead], *, interface: str, device_instance: int, timeout_s: float
) -> list[DeviceAnswer]:
    try:
        app = await _open(interface, device_instance, timeout_s)
    except (OSError, ValueError) as exc:
        return [DeviceAnswer(key=d.key, error=f"Poller: {exc}", read_multiple=d.read_multiple) for d in devices]
    gate = asyncio.Semaphore(CONCURRENCY)

    async def one(device: DeviceRead) -> DeviceAnswer:
        async with gate:
            return await _read_device(app, device, timeout_s)

    try:
        return list(await asyncio.gather(*(one(d) for d in devices)))
    finally:
        app.close()


def read_devices(
    devices: Iterable[DeviceRead], *, interface: str, device_instance: int, timeout_s: float
) -> list[DeviceAnswer]:
    """Read every device's objects through the poller's interface (``host/prefix:port``); one answer per device,
    in the order given. Runs its own event loop: call it from synchronous code (a Celery task, a command)."""
    wanted = list(devices)
    if not wanted:
        return []
    return asyncio.run(_read_all(wanted, interface=interface, device_instance=device_instance, timeout_s=timeout_s))
