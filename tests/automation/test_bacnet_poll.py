"""BACnet/IP polling against devices simulated with bacpypes3 on 127.0.0.1 (ports the system picks, so parallel
runs never meet): values stored as trend samples in SI units; a silent or stopped device, an unknown object, a
device without ReadPropertyMultiple; no run fails. No network beyond the loopback address."""

from __future__ import annotations

import asyncio
import datetime as dt
import io
import socket
import threading

import pytest
import time_machine
from bacpypes3.app import Application
from bacpypes3.errors import ExecutionError
from bacpypes3.local.analog import AnalogInputObject, AnalogValueObject
from bacpypes3.local.binary import BinaryValueObject
from bacpypes3.local.device import DeviceObject
from bacpypes3.local.networkport import NetworkPortObject
from django.core.management import CommandError, call_command

from automation.bacnet import to_si
from automation.bacnet_devices import bacnet_device_create
from automation.models import BacnetDevice, Point, PointPoll
from automation.polling import bacnet_poll
from automation.services import point_update
from automation.tasks import bacnet_poll as bacnet_poll_task

NOW = dt.datetime(2026, 1, 14, 9, 30, tzinfo=dt.UTC)
# The clock ticks from NOW (asyncio's timeouts run on the monotonic clock, which a stopped clock would stop too); a
# poll stamps its samples with its start in whole seconds, so they read NOW exactly.
TIMEOUT_S = 1.0


class _NoReadMultiple(Application):
    """A device that does not implement ReadPropertyMultiple: it rejects the service (unrecognized)."""

    do_ReadPropertyMultipleRequest = None


class _RefusesWholeRequest(Application):
    """A device that answers a ReadPropertyMultiple naming an object it lacks with one error for the whole request."""

    async def do_ReadPropertyMultipleRequest(self, apdu):
        raise ExecutionError(errorClass="object", errorCode="unknownObject")


class SimulatedDevice:
    """A BACnet/IP device (bacpypes3) on 127.0.0.1 at a port the system picks, in its own thread and event loop."""

    def __init__(self, instance: int, make_objects, *, read_multiple: bool = True, app_class=None):
        self.instance = instance
        self.make_objects = make_objects  # bacpypes3 objects are made inside the device's own event loop
        self.app_class = app_class or (Application if read_multiple else _NoReadMultiple)
        self.port: int | None = None
        self._ready = threading.Event()
        self._loop = asyncio.new_event_loop()
        self._thread = threading.Thread(target=self._run, daemon=True)

    @property
    def address(self) -> str:
        return f"127.0.0.1:{self.port}"

    def _run(self) -> None:
        asyncio.set_event_loop(self._loop)
        self._loop.run_until_complete(self._open())
        self._ready.set()
        self._loop.run_forever()
        self._loop.close()

    async def _open(self) -> None:
        device = DeviceObject(
            objectIdentifier=("device", self.instance), objectName=f"sim-{self.instance}", vendorIdentifier=999
        )
        port = NetworkPortObject("127.0.0.1/32:0", objectIdentifier=("network-port", 1), objectName="NetworkPort-1")
        self.app = self.app_class.from_object_list([device, port, *self.make_objects()])
        server = next(iter(self.app.link_layers.values())).server
        await asyncio.wait_for(server._local_transport_ready.wait(), 5)
        self.port = server.local_transport.get_extra_info("sockname")[1]

    def start(self) -> SimulatedDevice:
        self._thread.start()
        assert self._ready.wait(10), "the simulated device did not open its port"
        return self

    def stop(self) -> None:
        if self._thread.is_alive():
            self._loop.call_soon_threadsafe(self.app.close)
            self._loop.call_soon_threadsafe(self._loop.stop)
            self._thread.join(5)


def ahu_objects() -> list:
    """The objects behind the point map of tests/automation/conftest.py (device 1001), in the units a US
    controller might be set to."""
    return [
        AnalogInputObject(
            objectIdentifier=("analog-input", 1), objectName="SAT", presentValue=12.5, units="degreesCelsius"
        ),
        AnalogInputObject(
            objectIdentifier=("analog-input", 2), objectName="MAT", presentValue=55.4, units="degreesFahrenheit"
        ),
        AnalogInputObject(objectIdentifier=("analog-input", 3), objectName="RAT", presentValue=21.0, units="noUnits"),
        AnalogInputObject(
            objectIdentifier=("analog-input", 4), objectName="OAT", presentValue=-3.0, units="degreesCelsius"
        ),
        AnalogInputObject(
            objectIdentifier=("analog-input", 5), objectName="FILT-DP", presentValue=0.5, units="inchesOfWater"
        ),
        AnalogValueObject(
            objectIdentifier=("analog-value", 1), objectName="SF-SPD", presentValue=72.0, units="percent"
        ),
        BinaryValueObject(objectIdentifier=("binary-value", 1), objectName="SF-STS", presentValue="active"),
        AnalogValueObject(objectIdentifier=("analog-value", 2), objectName="OAD", presentValue=20.0, units="percent"),
    ]


def _readdress(points: dict) -> None:
    """Fan speed and damper on analog values, fan status on a binary value; the heating valve's analog output 3
    is an object the device does not have."""
    point_update(point=points["AHU1.SF-SPD"], bacnet_object_type="analog-value", bacnet_object_instance=1)
    point_update(point=points["AHU1.SF-STS"], bacnet_object_type="binary-value", bacnet_object_instance=1)
    point_update(point=points["AHU1.OAD-CMD"], bacnet_object_type="analog-value", bacnet_object_instance=2)


def _silent_port():
    """A UDP socket on 127.0.0.1 that never answers (bound, so no other test gets its port meanwhile)."""
    sock = socket.socket(socket.AF_INET, socket.SOCK_DGRAM)
    sock.bind(("127.0.0.1", 0))
    return sock


@pytest.fixture
def poller(settings):
    settings.PLENUM_BACNET_INTERFACE = "127.0.0.1/32:0"
    settings.PLENUM_BACNET_DEVICE_INSTANCE = 4_194_000
    settings.PLENUM_BACNET_TIMEOUT_SECONDS = TIMEOUT_S
    return settings


@pytest.fixture
def device():
    sim = SimulatedDevice(1001, ahu_objects).start()
    yield sim
    sim.stop()


def _poll(**kwargs):
    with time_machine.travel(NOW, tick=True):
        return bacnet_poll(**kwargs)


def _fresh(name: str, plant) -> Point:
    return Point.objects.get(ahu=plant.ahu, name=name)


def test_the_poller_reads_the_devices_points_and_stores_them_in_si(plant, poller, device):
    """Each mapped point of the simulated device is read (ReadPropertyMultiple) and stored at the poll's time in
    its SI unit: °F and in. w.c. converted, 'no units' taken as the point's unit, a binary value as 1."""
    _readdress(plant.points)
    bacnet_device_create(site=plant.site, device_instance=1001, address=device.address)

    result = _poll(site_id=plant.site.pk)

    assert result.devices == 1 and result.silent == 0
    sat = _fresh("AHU1.SAT", plant)
    assert sat.last_value == pytest.approx(12.5) and sat.last_value_at == NOW and not sat.stale
    assert sat.trend_days.get().samples() == [(NOW, pytest.approx(12.5))]
    # 55.4 °F = 13.0 °C: (55.4 − 32) × 5/9 (the Fahrenheit scale's definition; common practice)
    assert _fresh("AHU1.MAT", plant).last_value == pytest.approx(13.0, abs=1e-5)
    assert _fresh("AHU1.RAT", plant).last_value == pytest.approx(21.0)
    # 0.5 in. w.c. = 124.54 Pa: 1 in. w.c. = 249.0889 Pa (conventional inch of water, engineering/units.py)
    assert _fresh("AHU1.FILT-DP", plant).last_value == pytest.approx(124.544, abs=1e-3)
    assert _fresh("AHU1.SF-SPD", plant).last_value == pytest.approx(72.0)
    assert _fresh("AHU1.SF-STS", plant).last_value == 1.0
    assert _fresh("AHU1.OAD-CMD", plant).last_value == pytest.approx(20.0)
    bacnet_device = BacnetDevice.objects.get(site=plant.site)
    assert bacnet_device.read_multiple is True and bacnet_device.answered_at == NOW and bacnet_device.error == ""


def test_an_unknown_object_makes_that_point_stale_and_the_others_are_stored(plant, poller, device):
    """The heating valve names analog-output 3, which the device does not have: that point is stale with the
    device's own reason; every other point of the device is stored."""
    _readdress(plant.points)
    bacnet_device_create(site=plant.site, device_instance=1001, address=device.address)

    result = _poll(site_id=plant.site.pk)

    valve = _fresh("AHU1.HCV", plant)
    assert valve.stale and valve.last_value is None
    assert "analog-output 3" in result.stale[valve.pk] and "unknown-object" in result.stale[valve.pk]
    assert PointPoll.objects.get(point=valve).reason == result.stale[valve.pk]
    assert set(result.stale) == {valve.pk}
    assert result.values == 8


def test_a_device_that_does_not_answer_marks_its_points_stale_and_others_are_still_stored(plant, poller, device):
    """Organisation B's device has an address where nothing answers: the run completes within its timeout, B's
    points are stale with the reason, and A's device is read and stored as usual."""
    _readdress(plant.points)
    bacnet_device_create(site=plant.site, device_instance=1001, address=device.address)
    silent = _silent_port()
    try:
        address = f"127.0.0.1:{silent.getsockname()[1]}"
        bacnet_device_create(site=plant.foreign_site, device_instance=1001, address=address)
        result = _poll()
    finally:
        silent.close()

    assert result.devices == 2 and result.silent == 1
    foreign = Point.objects.filter(ahu=plant.foreign_ahu, bacnet_device_instance=1001)
    assert foreign.count() == 9 and all(p.stale for p in foreign)
    reason = PointPoll.objects.get(point=plant.foreign_points["AHU1.SAT"]).reason
    assert reason == f"BACnet device 1001 at {address} did not answer within 1 s"
    assert BacnetDevice.objects.get(site=plant.foreign_site).error == reason
    assert _fresh("AHU1.SAT", plant).last_value == pytest.approx(12.5)
    assert not _fresh("AHU1.SAT", plant).stale


def test_a_stopped_device_makes_its_points_stale_until_it_answers_again(plant, poller, device):
    """A device read once and then stopped: the next due poll marks its points stale (the last value kept); the
    points are fresh again once a device answers at the address."""
    _readdress(plant.points)
    bacnet_device = bacnet_device_create(site=plant.site, device_instance=1001, address=device.address, poll_seconds=60)
    _poll(site_id=plant.site.pk)
    device.stop()

    with time_machine.travel(NOW + dt.timedelta(minutes=1), tick=True):
        result = bacnet_poll(site_id=plant.site.pk)
    sat = _fresh("AHU1.SAT", plant)
    assert result.silent == 1 and sat.stale and sat.last_value == pytest.approx(12.5) and sat.last_value_at == NOW
    assert "did not answer" in PointPoll.objects.get(point=sat).reason

    again = SimulatedDevice(1001, ahu_objects).start()
    try:
        BacnetDevice.objects.filter(pk=bacnet_device.pk).update(address=again.address)
        with time_machine.travel(NOW + dt.timedelta(minutes=2), tick=True):
            bacnet_poll(site_id=plant.site.pk)
    finally:
        again.stop()
    sat = _fresh("AHU1.SAT", plant)
    assert not sat.stale and sat.last_value_at == NOW + dt.timedelta(minutes=2)
    assert PointPoll.objects.get(point=sat).reason == ""
    assert len(sat.trend_days.get().samples()) == 2


def test_a_device_without_read_multiple_is_read_one_property_at_a_time(plant, poller):
    """A device that rejects ReadPropertyMultiple is read with ReadProperty; the poller remembers it."""
    _readdress(plant.points)
    sim = SimulatedDevice(1001, ahu_objects, read_multiple=False).start()
    try:
        bacnet_device_create(site=plant.site, device_instance=1001, address=sim.address)
        result = _poll(site_id=plant.site.pk)
    finally:
        sim.stop()

    assert _fresh("AHU1.MAT", plant).last_value == pytest.approx(13.0, abs=1e-5)
    assert _fresh("AHU1.SF-STS", plant).last_value == 1.0
    assert set(result.stale) == {plant.points["AHU1.HCV"].pk}
    assert BacnetDevice.objects.get(site=plant.site).read_multiple is False


def test_a_whole_request_refused_for_one_object_is_read_one_by_one(plant, poller):
    """A device that refuses the whole ReadPropertyMultiple because one object is missing: the batch is read with
    ReadProperty, so only the heating valve (the missing object) is stale."""
    _readdress(plant.points)
    sim = SimulatedDevice(1001, ahu_objects, app_class=_RefusesWholeRequest).start()
    try:
        bacnet_device_create(site=plant.site, device_instance=1001, address=sim.address)
        result = _poll(site_id=plant.site.pk)
    finally:
        sim.stop()
    assert set(result.stale) == {plant.points["AHU1.HCV"].pk} and result.values == 8
    assert _fresh("AHU1.FILT-DP", plant).last_value == pytest.approx(124.544, abs=1e-3)


def test_only_devices_that_are_due_are_polled(plant, poller, device):
    """A device polled a minute ago with a 15-minute interval is left alone; its interval passed, it is read."""
    bacnet_device = bacnet_device_create(site=plant.site, device_instance=1001, address=device.address)
    BacnetDevice.objects.filter(pk=bacnet_device.pk).update(polled_at=NOW - dt.timedelta(minutes=1))
    assert _poll(site_id=plant.site.pk).devices == 0
    BacnetDevice.objects.filter(pk=bacnet_device.pk).update(polled_at=NOW - dt.timedelta(minutes=15))
    assert _poll(site_id=plant.site.pk).devices == 1


def test_points_of_a_device_the_site_does_not_list_are_stale_with_the_reason(plant, poller):
    """No device 1001 in the site's list: its points cannot be reached, and say so."""
    result = _poll(site_id=plant.site.pk)

    sat = _fresh("AHU1.SAT", plant)
    assert sat.stale and "not in the site's list of devices" in result.stale[sat.pk]
    assert not Point.objects.get(pk=plant.foreign_points["AHU1.SAT"].pk).stale


def test_polling_is_off_until_an_interface_is_configured(plant, settings, device):
    """With no BACnet interface configured the beat's task does nothing."""
    settings.PLENUM_BACNET_INTERFACE = ""
    bacnet_device_create(site=plant.site, device_instance=1001, address=device.address)
    with time_machine.travel(NOW, tick=True):
        assert bacnet_poll_task.delay().get()["off"] is True
    assert not _fresh("AHU1.SAT", plant).trend_days.exists()


def test_the_task_polls_through_the_service(plant, poller, device):
    """The Celery task runs a poll and says what it did."""
    _readdress(plant.points)
    bacnet_device_create(site=plant.site, device_instance=1001, address=device.address)
    with time_machine.travel(NOW, tick=True):
        summary = bacnet_poll_task.delay(plant.site.pk).get()
    assert summary == {"off": False, "devices": 1, "silent": 0, "values": 8, "stale": 1}


def test_a_sensors_fault_code_is_not_stored(plant, poller):
    """An outdoor air sensor giving -999 °C (a controller's usual fault code; common practice) is stale with the
    range it is outside of, as the trend import would refuse it; the other points are stored."""

    def objects():
        made = ahu_objects()
        made[3].presentValue = -999.0
        return made

    _readdress(plant.points)
    sim = SimulatedDevice(1001, objects).start()
    try:
        bacnet_device_create(site=plant.site, device_instance=1001, address=sim.address)
        result = _poll(site_id=plant.site.pk)
    finally:
        sim.stop()
    oat = plant.points["AHU1.OAT"]
    assert result.stale[oat.pk] == (
        "the device gave -999 °C, out of range for an outdoor air temperature sensor; "
        "allowed: a number from -60 to 60 °C"
    )
    assert _fresh("AHU1.OAT", plant).stale and _fresh("AHU1.SAT", plant).last_value == pytest.approx(12.5)


def test_the_command_polls_every_device_when_asked_and_names_stale_points(plant, poller, device):
    """``manage.py bacnet_poll harbour --every`` reads a device polled a minute ago and lists each stale point with
    its reason; with polling off it says which setting turns it on."""
    _readdress(plant.points)
    listed = bacnet_device_create(site=plant.site, device_instance=1001, address=device.address)
    BacnetDevice.objects.filter(pk=listed.pk).update(polled_at=NOW - dt.timedelta(minutes=1))
    out = io.StringIO()
    with time_machine.travel(NOW, tick=True):
        call_command("bacnet_poll", "harbour", "--every", stdout=out)
    assert out.getvalue().startswith("1 devices read (0 did not answer), 8 values stored, 1 points stale")
    assert "AHU1.HCV: the device has no readable analog-output 3 (object: unknown-object)" in out.getvalue()
    poller.PLENUM_BACNET_INTERFACE = ""
    with pytest.raises(CommandError, match="PLENUM_BACNET_INTERFACE"):
        call_command("bacnet_poll")


def test_units_the_poller_cannot_convert_are_refused_in_words():
    """A temperature in pascals, or a unit the poller has no conversion for, gives a reason, not a number."""
    with pytest.raises(ValueError, match="not a unit of the point's DEG_C"):
        to_si(12.0, bacnet_unit="pascals", unit="DEG_C")
    with pytest.raises(ValueError, match="does not convert"):
        to_si(12.0, bacnet_unit="kilowatts", unit="PA")
    with pytest.raises(ValueError, match="not a finite number"):
        to_si(float("nan"), bacnet_unit="pascals", unit="PA")
    # 1000 Pa = 1 kPa (SI prefix; common practice)
    assert to_si(1.0, bacnet_unit="kilopascals", unit="PA") == pytest.approx(1000.0)
