"""The BACnet poll job: read the mapped points of every device whose poll interval has passed, store their values
as trend samples, and mark a point stale with the reason when it brought no value.

A site's BACnet devices are listed in ``BacnetDevice`` (instance, BACnet/IP address, poll interval); a point
names its device by instance (``Point.bacnet_device_instance``) within its site. Each run (Celery beat, each
minute):

1. claims the devices that are due (never polled, or polled at least ``poll_seconds`` ago, less a little slack
   for the beat's own jitter) with a conditional update, so two overlapping runs never read a device twice;
2. reads them all at once through ``automation.bacnet`` (outside any transaction: the network is slow);
3. stores, in one transaction: each value as a trend sample at the run's start (``TrendDay``) and as the
   point's last value; for a point with no value, ``stale`` and the reason (``PointPoll``); for each device,
   when it answered or why not.

Nothing makes the job fail: a device that does not answer, an object it does not have, a unit the poller cannot
convert, an address that cannot be read are each recorded on the points they touch, and every other device and
point is still stored. Points with a BACnet address whose device is not in the site's list are marked stale too.
With ``PLENUM_BACNET_INTERFACE`` empty the job does nothing.
"""

from __future__ import annotations

import datetime as dt
from collections import defaultdict
from dataclasses import dataclass, field
from typing import Any

from django.conf import settings
from django.db import transaction
from django.db.models import Exists, OuterRef, Q
from django.utils import timezone

from . import bacnet
from .models import BacnetDevice, Point, PointPoll

# The one store of samples (day buckets merged, a sample at a stored second replaced, the point's last value and
# its stale flag set), shared with the trend import.
from .trend_cells import plausible_words
from .trend_store import trend_samples_store
from .vocabulary import PointUnit, plausible_range, point_class_phrase

# A device is due this much before its interval has quite passed: beat runs each minute, and a poll that started
# a second late should not wait a whole further minute.
SLACK = dt.timedelta(seconds=20)


@dataclass
class PollResult:
    """What one run did: devices read and silent, samples stored, points marked stale (id → reason)."""

    off: bool = False
    devices: int = 0
    silent: int = 0
    values: int = 0
    stale: dict[int, str] = field(default_factory=dict)


def bacnet_devices_due(*, now: dt.datetime, site_id: int | None = None, every: bool = False) -> list[BacnetDevice]:
    """Devices never polled, or whose poll interval has passed by ``now`` (``every``: all of them)."""
    devices = BacnetDevice.objects.select_related("site")
    if site_id is not None:
        devices = devices.filter(site_id=site_id)
    if every:
        return list(devices)
    return [
        d for d in devices if d.polled_at is None or now - d.polled_at >= dt.timedelta(seconds=d.poll_seconds) - SLACK
    ]


def _object(point: Point) -> tuple[str, int]:
    """The point's BACnet object (type, instance); a point with a device has the whole address (a check
    constraint of ``Point``)."""
    return (point.bacnet_object_type, int(point.bacnet_object_instance or 0))


def _claim(device: BacnetDevice, now: dt.datetime) -> bool:
    """Mark the device polled now, unless another run did since it was read (then that run reads it)."""
    same = Q(polled_at__isnull=True) if device.polled_at is None else Q(polled_at=device.polled_at)
    return BacnetDevice.objects.filter(same, pk=device.pk).update(polled_at=now) == 1


def _points_by_device(devices: list[BacnetDevice]) -> dict[int, list[Point]]:
    wanted = {(d.site_id, d.device_instance): d.pk for d in devices}
    points = Point.objects.filter(
        ahu__building__site_id__in={s for s, _i in wanted}, bacnet_device_instance__in={i for _s, i in wanted}
    ).select_related("ahu__building")
    found: dict[int, list[Point]] = defaultdict(list)
    for point in points.order_by("pk"):
        key = (point.ahu.building.site_id, point.bacnet_device_instance)
        if key in wanted:
            found[wanted[key]].append(point)
    return found


def _unlisted_points(site_id: int | None) -> list[Point]:
    """Points with a BACnet address whose device the site does not list (so no address to reach it)."""
    listed = BacnetDevice.objects.filter(
        site_id=OuterRef("ahu__building__site_id"), device_instance=OuterRef("bacnet_device_instance")
    )
    points = Point.objects.filter(bacnet_device_instance__isnull=False).exclude(Exists(listed))
    if site_id is not None:
        points = points.filter(ahu__building__site_id=site_id)
    return list(points.select_related("poll"))


def bacnet_poll(*, site_id: int | None = None, every: bool = False) -> PollResult:
    """Poll the devices that are due (of one site, or all; ``every``: due or not, as when commissioning) and store
    what they gave; see the module docstring."""
    interface = settings.PLENUM_BACNET_INTERFACE
    if not interface:
        return PollResult(off=True)
    started = timezone.now()
    result = PollResult()
    devices = [d for d in bacnet_devices_due(now=started, site_id=site_id, every=every) if _claim(d, started)]
    points = _points_by_device(devices)
    reads = [
        bacnet.DeviceRead(
            key=d.pk,
            device_instance=d.device_instance,
            address=d.address,
            read_multiple=d.read_multiple,
            objects=tuple(dict.fromkeys(bacnet.ObjectRead(*_object(p), p.unit) for p in points[d.pk])),
        )
        for d in devices
        if points.get(d.pk)
    ]
    answers = bacnet.read_devices(
        reads,
        interface=interface,
        device_instance=settings.PLENUM_BACNET_DEVICE_INSTANCE,
        timeout_s=settings.PLENUM_BACNET_TIMEOUT_SECONDS,
    )
    # One time stamp for the whole run (its start, whole seconds): the samples of one poll line up across points.
    read_at = started.replace(microsecond=0)
    by_key = {a.key: a for a in answers}
    with transaction.atomic():
        values: dict[int, float] = {}
        for device in devices:
            answer = by_key.get(device.pk)
            _device_answered(device, answer, read_at)
            if answer is None:
                continue
            result.devices += 1
            result.silent += bool(answer.error)
            for point in points[device.pk]:
                got = answer.values.get(_object(point))
                if answer.error:
                    result.stale[point.pk] = answer.error
                elif got is None or got.value is None:
                    result.stale[point.pk] = (got.error if got else "") or "the device gave no value for it"
                else:
                    refused = _implausible(point, got.value)
                    if refused:
                        result.stale[point.pk] = refused
                    else:
                        values[point.pk] = got.value
        for point in _unlisted_points(site_id):
            reason = (
                f"BACnet device {point.bacnet_device_instance} is not in the site's list of devices; "
                "add it with its BACnet/IP address"
            )
            known = getattr(point, "poll", None)
            if not (point.stale and known is not None and known.reason == reason):
                result.stale[point.pk] = reason
        stored = trend_samples_store({pk: {read_at: value} for pk, value in values.items()})
        result.values = stored.values
        _record(read=set(values), stale=result.stale, at=read_at)
    return result


def _implausible(point: Point, value: float) -> str:
    """Why a value is not stored (outside what a point of its class may plausibly hold, as the trend import refuses
    it: a sensor's fault code such as -999, a wrong unit), or an empty string."""
    low, high = plausible_range(point.brick_class, point.unit)
    if low <= value <= high:
        return ""
    return (
        f"the device gave {value:g} {PointUnit(point.unit).label}, out of range for "
        f"{point_class_phrase(point.brick_class)}; allowed: {plausible_words(point)}"
    )


def _device_answered(device: BacnetDevice, answer: bacnet.DeviceAnswer | None, at: dt.datetime) -> None:
    fields: dict[str, Any] = {"error": (answer.error if answer else "")[:300]}
    if answer is not None:
        fields["read_multiple"] = answer.read_multiple
        if not answer.error:
            fields["answered_at"] = at
    BacnetDevice.objects.filter(pk=device.pk).update(**fields)


def _record(*, read: set[int], stale: dict[int, str], at: dt.datetime) -> None:
    """Each point's last poll (and why it brought nothing); stale points flagged (the store makes read points
    fresh again)."""
    PointPoll.objects.bulk_create(
        [PointPoll(point_id=pk, polled_at=at, reason="") for pk in read]
        + [PointPoll(point_id=pk, polled_at=at, reason=reason[:300]) for pk, reason in stale.items()],
        update_conflicts=True,
        unique_fields=["point"],
        update_fields=["polled_at", "reason"],
    )
    if stale:
        Point.objects.filter(pk__in=stale).update(stale=True)
