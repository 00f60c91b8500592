"""What the due-date engine works on: light rows of the in-service units and their parts, an occurrence, and what a
run did (``GenerationResult``).
"""

from __future__ import annotations

import datetime as dt
import json
import zoneinfo
from dataclasses import dataclass, field

from django.db import connections
from django.db.models import TextField
from django.db.models.functions import Cast

from inventory.models import Component, Site

from ..models import TaskDefinition, WorkOrder
from .dates import local_date

MOVABLE_STATES = frozenset({WorkOrder.State.PLANNED, WorkOrder.State.ASSIGNED})
Trigger = TaskDefinition.Trigger


@dataclass
class GenerationResult:
    created: int = 0
    moved: int = 0
    unchanged: int = 0
    work_orders_created: int = 0
    lines: list[str] = field(default_factory=list)
    # Units and rules left out of this run, one line each in plain words ("AHU-03 at Site X: service start
    # 9999-12-31 is out of range; allowed: 2000-01-01 to 2036-…"); the rest of the organisation's work is generated.
    skipped: list[str] = field(default_factory=list)


class _Part:
    """A component as the engine needs it (what ``targets`` reads: kind, specs).

    The specs stay JSON text until a rule reads them: most components are matched on their kind alone,
    and decoding every component's JSON was most of the registry read on a large portfolio."""

    __slots__ = ("_specs", "_text", "kind", "pk", "position")

    def __init__(self, pk: int, kind: str, text: str | None, position: int) -> None:
        self.pk, self.kind, self._text, self.position, self._specs = pk, kind, text, position, None

    @property
    def specs(self) -> dict:
        if self._specs is None:
            self._specs = (json.loads(self._text) if self._text else None) or {}
        return self._specs


@dataclass(slots=True)
class UnitRow:
    """An in-service AHU as the engine needs it."""

    pk: int
    tag: str
    site_id: int
    full_outdoor_air: bool
    anchor: dt.date
    parts: list[_Part] = field(default_factory=list)
    by_kind: dict[str, list[_Part]] = field(default_factory=dict)


@dataclass(slots=True)
class Occ:
    unit: UnitRow
    task: TaskDefinition
    ck: int  # component id, 0 for the unit itself
    due: dt.date
    key: str
    movable: bool
    clamped: bool = False  # the natural date was already past, so it is due today

    @property
    def ident(self) -> tuple:
        return (self.unit.pk, self.task.code, self.ck, self.key)


def plain_rows(values_qs) -> list[tuple]:
    """The rows of a ``values_list`` query as the database driver returns them, without Django's per-value
    converters: on the meter history (over 100,000 readings on a large portfolio) making each reading's time
    aware one by one took half the read. Callers make datetimes aware and booleans ``bool`` themselves."""
    sql, params = values_qs.query.sql_with_params()
    with connections[values_qs.db].cursor() as cursor:
        cursor.execute(sql, params)
        return cursor.fetchall()


def unit_rows(ahus_qs) -> tuple[list[UnitRow], dict[int, Site]]:
    """Light rows of the in-service units and their components, plus the sites they are on (3 queries)."""
    rows = list(
        ahus_qs.values_list("pk", "tag", "building__site_id", "full_outdoor_air", "service_start", "created_at")
    )
    sites = {s.pk: s for s in Site.objects.filter(pk__in={r[2] for r in rows})}
    units: dict[int, UnitRow] = {}
    zones: dict[int, zoneinfo.ZoneInfo] = {}
    for pk, tag, site_id, full_oa, service_start, created_at in rows:
        if site_id not in zones:
            zones[site_id] = zoneinfo.ZoneInfo(sites[site_id].time_zone)
        units[pk] = UnitRow(pk, tag, site_id, full_oa, service_start or local_date(created_at, zones[site_id]))
    parts = (
        Component.objects.filter(ahu_id__in=ahus_qs.values("pk"), retired_on__isnull=True)  # retired: no new work
        .order_by("ahu_id", "position", "id")
        .annotate(specs_text=Cast("specs", TextField()))
        .values_list("ahu_id", "pk", "kind", "specs_text")
    )
    for ahu_id, pk, kind, text in plain_rows(parts):
        unit = units.get(ahu_id)
        if unit is None:
            continue
        part = _Part(pk, kind, text, len(unit.parts))
        unit.parts.append(part)
        unit.by_kind.setdefault(kind, []).append(part)
    return list(units.values()), sites
