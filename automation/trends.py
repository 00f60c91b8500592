"""Trend samples: the CSV import in the two layouts automation systems export, storing and purging day buckets.

Layouts (the first row is the header; any interval, gaps allowed: an empty cell is no sample):

- ``wide``: one row per timestamp, the first column the time, then a column per point
  (``timestamp,AHU1.SAT,AHU1.FILT-DP`` / ``2026-01-05 08:00,16.8,142``);
- ``long``: one row per timestamp, point and value, columns ``timestamp``, ``point``, ``value``.

A point is named as the automation system names it (``Point.name``); where two units of the site have a point
of that name, ``<unit label code>/<point name>`` says which (``U7KQ2MP/AHU-02.OAT``; the label code is unique, a
unit's tag need not be), and ``<unit tag>/<point name>`` still works where the tag tells the units apart.
``point_headers`` gives the exact header of every point of a site, for the point map page and the Brick model.
A time without a zone is the site's (``accounts.inputs.check_reading_time``: not before 2000, not in the
future); in the hour that a clock change repeats, the first pass of a time is read as the earlier hour and the
second pass as the later one, and the result counts those rows (``TrendImportResult.words`` says so). Values
are numbers in the units the importer states for the file (``units``: ``si``, the point's SI unit — °C, Pa, m³/s;
or ``us`` — °F, in. w.c., cfm), converted to SI by the point's class through ``engineering.units.from_display``
and then held to a plausible range (``vocabulary.plausible_range``); percent, ppm and on/off points read the same
in both. On/off points take 1/0, on/off, true/false or active/inactive.

All or nothing, like the registry's CSV import (``inventory.csv_io``): every bad row or cell is listed with its
line, column, value and what is allowed, and then nothing is stored. A sample at a time already stored for the
point replaces it, so importing the same file twice changes nothing.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import itertools
import logging
import zoneinfo
from collections import defaultdict
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
from django.db import connection, transaction
from django.utils import timezone
from django.utils.dateparse import parse_datetime

from accounts.inputs import FieldErrors, check_reading_time, parse_number
from accounts.models import User
from engineering.units import SYSTEMS, UnitSystem, from_display, sensible_bound, to_display, unit_label
from inventory.csv_io import (
    BYTE_ORDER_MARK,
    ImportFailed,
    RowError,
    binary_problem,
    control_character_errors,
    data_rows,
)
from inventory.csv_io.file_format import visible
from inventory.models import Site

from .models import Point, TrendDay, TrendImportJob, trend_retention
from .vocabulary import UNIT_QUANTITY, PointUnit, plausible_range, point_class_phrase

logger = logging.getLogger(__name__)

LAYOUTS = ("wide", "long")
LONG_COLUMNS = ("timestamp", "point", "value")
# A file of this many rows or more goes to a background job (a web worker is killed after about 30 s).
BACKGROUND_ROWS = 20_000
CHUNK = 500
_ON = {"1", "on", "true", "active", "yes", "run", "running"}
_OFF = {"0", "off", "false", "inactive", "no", "stop", "stopped"}
# The units a file's values may be in: a person's unit systems.
UNIT_SYSTEMS = SYSTEMS


def _system_units(system: str) -> list[str]:
    """The units of the converted point classes in ``system``, in the order of ``UNIT_QUANTITY``."""
    return [
        PointUnit(unit).label if system == UnitSystem.SI else unit_label(quantity=quantity, system=system)
        for unit, quantity in UNIT_QUANTITY.items()
    ]


def units_choice_label(system: str) -> str:
    """A choice of the file's units as the form and the API name it: "SI (°C, Pa, m³/s …)"."""
    return f"{system.upper()} ({', '.join(_system_units(system))} …)"


def units_words(system: str) -> list[str]:
    """What a file's values are in when read as ``system``, one phrase a point class: "temperatures in °F"…"""
    names = {"temperature": "temperatures", "pressure": "pressures", "airflow": "airflows"}
    return [
        f"{names.get(quantity, quantity)} in {label}"
        for quantity, label in zip(UNIT_QUANTITY.values(), _system_units(system), strict=True)
    ]


UNITS_UNCHANGED = "percentages (%), CO₂ (ppm) and on/off status (1 or 0) read the same in both"


def units_problem(value: Any) -> str:
    """Why ``value`` is not a unit system a file may be in, with what is allowed ("" when it is one)."""
    if value in UNIT_SYSTEMS:
        return ""
    allowed = " or ".join(f"{s} — {units_choice_label(s)}" for s in UNIT_SYSTEMS)
    return f"is not a unit system of trend values; allowed: {allowed}"


def _check_request(layout: Any, units: Any, text: str) -> None:
    """Refuse, all at once, what makes reading the file's rows pointless: a layout or units not offered, a file that
    is no text at all (``inventory.csv_io.binary_problem``: a workbook, an image, binary data)."""
    problems = []
    if layout not in LAYOUTS:
        problems.append(RowError(0, "layout", str(layout)[:40], f"is not a layout; allowed: {', '.join(LAYOUTS)}"))
    problem = units_problem(units)
    if problem:
        problems.append(RowError(0, "units", str(units)[:40], problem))
    head = text[:4096]
    binary = binary_problem(head.encode("utf-8", "replace")) if "\x00" in head else ""
    if binary:
        problems.append(RowError(1, "", visible(head[:8]), binary))
    if problems:
        raise ImportFailed(problems)


@dataclass
class TrendImportResult:
    rows: int = 0
    values: int = 0
    points: int = 0
    first: dt.datetime | None = None
    last: dt.datetime | None = None
    # Rows whose local time (no offset given) fell in the hour a clock change repeats: read as the earlier
    # pass (before the change) and as the later one (after it).
    repeated_earlier: int = 0
    repeated_later: int = 0

    def as_dict(self) -> dict[str, Any]:
        return {
            "rows": self.rows,
            "values": self.values,
            "points": self.points,
            "first": self.first.isoformat() if self.first else None,
            "last": self.last.isoformat() if self.last else None,
            "repeated_earlier": self.repeated_earlier,
            "repeated_later": self.repeated_later,
        }

    def words(self) -> str:
        """The outcome in a sentence or two, for the page's message and a job's detail."""
        text = (
            f"Imported {_count(self.values, 'value')} of {_count(self.points, 'point')} "
            f"from {_count(self.rows, 'row')}."
        )
        repeated = self.repeated_earlier + self.repeated_later
        if repeated:
            text += (
                f" {_count(repeated, 'row')} fell in the hour repeated when the clocks went back: "
                f"{self.repeated_earlier} read as the first pass of that hour (before the change), "
                f"{self.repeated_later} as the second pass (after it), in the order of the file."
            )
        return text


def _count(n: int, noun: str) -> str:
    return f"{n} {noun}" if n == 1 else f"{n} {noun}s"


# ---------------------------------------------------------------------------
# Cells
# ---------------------------------------------------------------------------
def _qualified(point: Point) -> str:
    return f"{point.ahu.label_code}/{point.name}"


def point_headers(points) -> dict[int, str]:
    """The exact column header (wide) or point cell (long) a trend file uses for each of a site's points (all of
    them, with ``ahu`` loaded): the point's name where no other unit of the site has a point of that name, else
    ``<unit label code>/<point name>``. The one rule the import, the point map page and the Brick model share."""
    points = list(points)
    names: dict[str, int] = defaultdict(int)
    for point in points:
        names[point.name] += 1
    return {p.pk: p.name if names[p.name] == 1 else _qualified(p) for p in points}


class _Points:
    """The site's points by the names a file may use for them."""

    def __init__(self, site: Site, system: str = "si"):
        self.system = system  # the units of the file's values
        self.by_name: dict[str, list[Point]] = defaultdict(list)
        self.by_code_name: dict[str, Point] = {}
        by_tag_name: dict[str, list[Point]] = defaultdict(list)
        for point in Point.objects.filter(ahu__building__site=site).select_related("ahu__building"):
            self.by_name[point.name].append(point)
            self.by_code_name[_qualified(point)] = point
            by_tag_name[f"{point.ahu.tag}/{point.name}"].append(point)
        # A tag names a unit only where no other unit of the site with a point of that name shares it.
        self.by_tag_name = {key: found[0] for key, found in by_tag_name.items() if len(found) == 1}

    def find(self, raw: str) -> tuple[Point | None, str]:
        name = raw.strip()
        found = self.by_name.get(name, [])
        if len(found) == 1:
            return found[0], ""
        if name in self.by_code_name:
            return self.by_code_name[name], ""
        if name in self.by_tag_name:
            return self.by_tag_name[name], ""
        if found:
            choices = ", ".join(
                f"{_qualified(p)} ({p.ahu.tag} in {p.ahu.building.name})"
                for p in sorted(found, key=lambda p: (p.ahu.building.name, p.ahu.tag, p.ahu.label_code))
            )
            return None, (
                "more than one unit has a point of this name; allowed: the unit's label code, a slash and the "
                f"point name, one of {choices}"
            )
        return None, "no point of the site has this name; allowed: a point name of the site's point map"


def plausible_words(point: Point, system: str = "si") -> str:
    """What a cell of ``point`` may hold, in the file's units (``system``): SI, "a number from -60 to 60 °C";
    US, in the US unit and then the SI range in brackets, "a number from -76 to 140 °F (-60 to 60 °C)"."""
    low, high = plausible_range(point.brick_class, point.unit)
    si = f"{low:g} to {high:g} {PointUnit(point.unit).label}"
    quantity = UNIT_QUANTITY.get(point.unit)
    if system != UnitSystem.US or quantity is None:
        return f"a number from {si}"
    shown = [to_display(value=x, quantity=quantity, system=system) for x in (low, high)]
    low_us, high_us = (
        sensible_bound(shown[0], upper=False, figures=3),
        sensible_bound(shown[1], upper=True, figures=3),
    )
    return f"a number from {low_us:g} to {high_us:g} {unit_label(quantity=quantity, system=system)} ({si})"


def _value(raw: str, point: Point, system: str = "si") -> tuple[float | None, str]:
    """The cell, a value in the file's units (``system``), as a value in the point's SI unit, or the reason it
    is refused (naming the allowed range in the file's units)."""
    text = raw.strip()
    if point.unit == PointUnit.UNITLESS:
        word = text.lower()
        if word in _ON:
            return 1.0, ""
        if word in _OFF:
            return 0.0, ""
        # A number read as on/off: 1.0 and 0.0 as BAS trend logs write them.
        number = parse_number(text)
        if number in (0.0, 1.0):
            return number, ""
        return None, "is not on or off; allowed: 1 or 0, on or off, true or false, active or inactive"
    number = parse_number(text)
    low, high = plausible_range(point.brick_class, point.unit)
    allowed = plausible_words(point, system)
    if number is None:
        return None, f"is not a number; allowed: {allowed}"
    quantity = UNIT_QUANTITY.get(point.unit)
    slack = 0.0
    if system == UnitSystem.US and quantity is not None:
        number = from_display(value=number, quantity=quantity, system=system)
        # A bound the error shows in US units is allowed: 140 °F converts to 60.00000000000006 °C.
        slack = 1e-9 * max(abs(low), abs(high), 1.0)
    if not low - slack <= number <= high + slack:
        return None, f"is out of range for {point_class_phrase(point.brick_class)}; allowed: {allowed}"
    return number, ""


class _Clock:
    """Reads the time cells of one file in the site's zone. A local time that comes again for the same series
    (the whole row in the wide layout, one point in the long one) in the hour a clock change repeats is read
    the second time as the later of the two."""

    def __init__(self, site: Site, now: dt.datetime):
        self.zone = site.time_zone
        self.now = now
        self.seen: set[tuple[str, str]] = set()
        self.last_raw: dict[str, str] = {}
        self.repeated_earlier = 0
        self.repeated_later = 0

    def read(self, raw: str, *, line: int, column: str, errors: list[RowError], series: str = "") -> dt.datetime | None:
        problems = FieldErrors()
        when = check_reading_time(raw, key=column, label="Time", tz=self.zone, now=self.now, errors=problems)
        if when is None:
            errors.extend(RowError(line, column, raw, m) for m in problems.get(column, []))
            return None
        naive = raw.strip()
        later = when.replace(fold=1)
        if later.utcoffset() != when.replace(fold=0).utcoffset():  # a local time the clock change repeats
            if naive != self.last_raw.get(series) and (series, naive) in self.seen and when.fold == 0:
                when = later
            if when.utcoffset() == later.utcoffset():
                self.repeated_later += 1
            else:
                self.repeated_earlier += 1
        self.seen.add((series, naive))
        self.last_raw[series] = naive
        return when.astimezone(dt.UTC)


# ---------------------------------------------------------------------------
# Import
# ---------------------------------------------------------------------------
Samples = dict[int, dict[dt.datetime, float]]  # point id -> time (UTC) -> value


def time_words(when: dt.datetime, raw: str, zone: str) -> str:
    """A time of a trend file as a message says it: as the file wrote it (``raw``, read as ``when``), with the site's
    zone, and the site's clock time where the file gave another offset; in the hour a clock change repeats, which
    pass of it."""
    text = raw.strip()
    local = when.astimezone(zoneinfo.ZoneInfo(zone))
    try:
        written = parse_datetime(text.replace(" ", "T", 1))
    except ValueError:
        written = None
    pattern = "%Y-%m-%d %H:%M:%S" if local.second or local.microsecond else "%Y-%m-%d %H:%M"
    aware = written is not None and written.tzinfo is not None
    said = f"{text}, {local:{pattern}} {zone} time" if aware else f"{text}, {zone} time"
    if local.replace(fold=1).utcoffset() != local.replace(fold=0).utcoffset():
        said += f", the {'second' if local.fold else 'first'} pass of the hour the clocks went back"
    return said


def _put(
    samples: Samples,
    lines: dict,
    point: Point,
    when: dt.datetime,
    value: float,
    *,
    line: int,
    column: str,
    raw: str,
    raw_time: str,
    clock: _Clock,
    errors: list[RowError],
) -> None:
    earlier = lines.get((point.pk, when))
    if earlier is not None and samples[point.pk][when] != value:
        errors.append(
            RowError(
                line,
                column,
                raw,
                f"a second value for {point.name} at {time_words(when, raw_time, clock.zone)} "
                f"(the first is on line {earlier}); allowed: one value a time",
            )
        )
        return
    samples[point.pk][when] = value
    lines[(point.pk, when)] = line


WIDE_HEADER = "the time column, then one column per point of the site's point map (timestamp,AHU1.SAT,AHU1.FILT-DP)"


def _wide_header(header: list[str], points: _Points, errors: list[RowError]) -> list[Point | None]:
    """The point of each column of a wide file's header (None for the time column and for a column refused); every
    problem of the header listed in ``errors``, and the rows are read all the same."""
    if [h.strip().lower() for h in header] == list(LONG_COLUMNS):
        errors.append(
            RowError(
                1,
                "",
                ",".join(header),
                f"is the long layout's header; allowed: a wide file's header, {WIDE_HEADER}, or the long layout "
                "chosen for this file",
            )
        )
        return [None] * len(header)
    if len(header) < 2 or not any(cell.strip() for cell in header[1:]):
        errors.append(
            RowError(1, "", ",".join(header)[:80], f"names no point column; allowed: a header of {WIDE_HEADER}")
        )
    columns: list[Point | None] = [None]
    for raw in header[1:]:
        point, problem = points.find(raw)
        if problem:
            errors.append(RowError(1, raw, raw, problem))
        columns.append(point)
    return columns


def _read_wide(
    reader, points: _Points, clock: _Clock, samples: Samples, errors: list[RowError], progress: Callable[[int], None]
) -> int:
    header = next(reader, None) or []
    columns = _wide_header(header, points, errors)
    width = len(header) if len(header) >= 2 else None  # a header that names no point: the time cells still read
    time_column = (header[0].strip() if header else "") or "timestamp"
    lines: dict = {}
    rows = 0
    for record in reader:
        if not any(cell.strip() for cell in record):
            continue
        rows += 1
        line = reader.line_num
        if width is not None and len(record) != width:
            errors.append(
                RowError(
                    line,
                    "",
                    ",".join(record)[:80],
                    f"has {len(record)} cells; allowed: {width}, one per column of the header",
                )
            )
            continue
        when = clock.read(record[0], line=line, column=time_column, errors=errors)
        for index in range(1, width or 1):
            raw = record[index]
            point = columns[index]
            if not raw.strip() or point is None:  # a column the header refused: named there
                continue
            value, problem = _value(raw, point, points.system)
            if problem:
                errors.append(RowError(line, header[index], raw, problem))
            elif when is not None:
                _put(
                    samples,
                    lines,
                    point,
                    when,
                    value,
                    line=line,
                    column=header[index],
                    raw=raw,
                    raw_time=record[0],
                    clock=clock,
                    errors=errors,
                )
        progress(rows)
    return rows


def _long_header(header: list[str], points: _Points, errors: list[RowError]) -> bool:
    """Whether a long file's header is a wide file's (its columns name points of the site); the header's problem,
    if any, listed in ``errors``. The rows are read all the same: those of a wide header for their times, the
    others in the long layout's order."""
    if [h.strip().lower() for h in header] == list(LONG_COLUMNS):
        return False
    named = [h.strip() for h in header[1:] if h.strip() and points.find(h)[0] is not None]
    hint = (
        f"; its columns name points ({', '.join(named[:3])}{' …' if len(named) > 3 else ''}), as a wide file's do: "
        "choose the wide layout for this file"
        if named
        else ""
    )
    errors.append(
        RowError(
            1,
            "",
            ",".join(header)[:80],
            f"is not the long layout's header; allowed: {','.join(LONG_COLUMNS)} (one row per time, point and value)"
            + hint,
        )
    )
    return bool(named)


def _read_long(
    reader, points: _Points, clock: _Clock, samples: Samples, errors: list[RowError], progress: Callable[[int], None]
) -> int:
    header = next(reader, None) or []
    wide = _long_header(header, points, errors)
    lines: dict = {}
    rows = 0
    found: dict[str, tuple[Point | None, str]] = {}
    for record in reader:
        if not any(cell.strip() for cell in record):
            continue
        rows += 1
        line = reader.line_num
        if wide and len(record) == len(header):
            # A row of the wide file the header says this is: the header's problem is named, the time still read.
            clock.read(record[0], line=line, column="timestamp", errors=errors)
            continue
        if len(record) != 3:
            errors.append(
                RowError(
                    line, "", ",".join(record)[:80], f"has {len(record)} cells; allowed: 3 (timestamp, point, value)"
                )
            )
            continue
        raw_time, raw_point, raw = record
        when = clock.read(raw_time, line=line, column="timestamp", errors=errors, series=raw_point.strip())
        if raw_point not in found:
            found[raw_point] = points.find(raw_point)
        point, problem = found[raw_point]
        if problem:
            errors.append(RowError(line, "point", raw_point, problem))
            continue
        if not raw.strip():
            errors.append(
                RowError(
                    line, "value", raw, "is empty; allowed: the point's value (leave the row out when there is none)"
                )
            )
            continue
        value, problem = _value(raw, point, points.system)
        if problem:
            errors.append(RowError(line, "value", raw, problem))
        elif when is not None:
            _put(
                samples,
                lines,
                point,
                when,
                value,
                line=line,
                column="value",
                raw=raw,
                raw_time=raw_time,
                clock=clock,
                errors=errors,
            )
        progress(rows)
    return rows


def trend_import(
    *,
    site: Site,
    text: str,
    layout: str,
    units: str = UnitSystem.SI,
    by: User | None = None,
    now: dt.datetime | None = None,
    progress: Callable[[int, int], None] | None = None,
    finish: Callable[[TrendImportResult], None] | None = None,
) -> TrendImportResult:
    """Import a trend CSV of ``layout`` for ``site``'s points, its values in ``units`` (``si`` or ``us``; the
    importer states them, pages and the API ask): every value or none.

    Raises ``ImportFailed`` listing every bad row and cell. ``finish(result)`` runs inside the write's
    transaction (a job records its outcome with the values it stored, or neither)."""
    _check_request(layout, units, text)
    # A cell holding a control character is named as such (and not again as a bad value); the other checks run.
    refused = control_character_errors(text)
    text = text.removeprefix(BYTE_ORDER_MARK)
    total = data_rows(text)
    reader = csv.reader(io.StringIO(text, newline=""))
    points = _Points(site, units)
    clock = _Clock(site, now or timezone.now())
    samples: Samples = defaultdict(dict)
    errors: list[RowError] = []

    def rows_done(done: int) -> None:
        if progress is not None and done % 1000 == 0:
            progress(done, total)

    read = _read_wide if layout == "wide" else _read_long
    try:
        rows = read(reader, points, clock, samples, errors, rows_done)
    except csv.Error as exc:
        errors.append(RowError(reader.line_num, "", "", f"this line cannot be read as CSV: {exc}"))
        rows = None
    if rows == 0:
        errors.append(
            RowError(2, "", "", "the file has a header but no rows of values; allowed: one or more rows below it")
        )
    if refused:
        named = {(e.line, e.column) for e in refused}
        errors = sorted(refused + [e for e in errors if (e.line, e.column) not in named], key=lambda e: e.line)
    if errors or rows is None:
        raise ImportFailed(errors)
    result = TrendImportResult(rows=rows, repeated_earlier=clock.repeated_earlier, repeated_later=clock.repeated_later)
    with transaction.atomic():
        trend_samples_store(samples, result)
        if by is not None:
            from accounts.services import audit_record

            audit_record(
                actor=by,
                obj=site,
                action="trend_import",
                organisation=site.organisation,
                changes={"layout": layout, "units": units, **result.as_dict()},
            )
        if finish is not None:
            finish(result)
    return result


def trend_samples_store(samples: Samples, result: TrendImportResult | None = None) -> TrendImportResult:
    """Merge ``{point id: {aware time: value}}`` into the points' day buckets (one locked read and one batched
    write per chunk of buckets) and move each point's last value (one statement); a sample at a time already
    stored replaces it. For every writer of samples (the CSV import, the BACnet poller); call it inside the
    writer's transaction. Values must be clean already (``_value`` checks a CSV cell).

    The samples become three flat arrays (point, time, value) once, and the buckets are cut from them with numpy:
    no Python object per sample beyond the caller's own."""
    result = result if result is not None else TrendImportResult()
    flat = _flatten(samples, result)
    if flat is None:
        result.points = len(samples)
        return result
    by_bucket = _buckets(flat)
    keys = sorted(by_bucket)
    for start in range(0, len(keys), CHUNK):
        _buckets_merge(keys[start : start + CHUNK], by_bucket)
    _points_freshen(flat)
    result.points = len(samples)
    return result


_DAY_S = 86_400
_EPOCH_ORDINAL = dt.date(1970, 1, 1).toordinal()
Bucket = tuple[np.ndarray, np.ndarray]  # seconds after midnight UTC (uint32), values (float64), in time order


@dataclass(frozen=True)
class _Flat:
    """Every sample of one store call in the order given: point ids, epoch seconds, values, and the times as
    given (the caller's datetimes, for a point's last value and a result's first and last)."""

    point_ids: np.ndarray  # int64, one per sample
    stamps: np.ndarray  # float64 epoch seconds
    values: np.ndarray  # float64
    times: list[dt.datetime]


def _flatten(samples: Samples, result: TrendImportResult) -> _Flat | None:
    """The samples as flat arrays (in C loops: no Python frame per sample); counts them into ``result``."""
    counts = [len(v) for v in samples.values()]
    total = sum(counts)
    if total == 0:
        return None
    times = list(itertools.chain.from_iterable(samples.values()))
    stamps = np.fromiter(map(dt.datetime.timestamp, times), dtype=np.float64, count=total)
    values = np.fromiter(
        itertools.chain.from_iterable(map(dict.values, samples.values())), dtype=np.float64, count=total
    )
    point_ids = np.repeat(np.fromiter(samples.keys(), dtype=np.int64, count=len(counts)), counts)
    result.values += total
    # The earliest and latest time given (the first given of equal ones), as the caller gave it.
    first, last = times[int(np.argmin(stamps))], times[int(np.argmax(stamps))]
    result.first = first if result.first is None or first < result.first else result.first
    result.last = last if result.last is None or last > result.last else result.last
    return _Flat(point_ids=point_ids, stamps=stamps, values=values, times=times)


def _buckets(flat: _Flat) -> dict[tuple[int, dt.date], Bucket]:
    """The samples by (point id, UTC day), sorted by time. Two times of a point within one second keep the later
    given (the buckets hold whole seconds)."""
    numbers, secs = np.divmod(np.floor(flat.stamps).astype(np.int64), _DAY_S)
    pids = flat.point_ids
    order = np.lexsort((secs, numbers, pids))  # stable: of equal seconds the later given stays last
    pids, numbers, secs, vals = pids[order], numbers[order], secs[order], flat.values[order]
    same_bucket = (pids[1:] == pids[:-1]) & (numbers[1:] == numbers[:-1])
    keep = np.append(~same_bucket | (secs[1:] != secs[:-1]), True)
    pids, numbers, secs, vals = pids[keep], numbers[keep], secs[keep].astype(np.uint32), vals[keep]
    cuts = np.flatnonzero((pids[1:] != pids[:-1]) | (numbers[1:] != numbers[:-1])) + 1
    starts = np.concatenate(([0], cuts)).tolist()
    ends = np.concatenate((cuts, [pids.size])).tolist()
    days = {n: dt.date.fromordinal(_EPOCH_ORDINAL + n) for n in np.unique(numbers).tolist()}
    keys = zip(pids[starts].tolist(), numbers[starts].tolist(), strict=True)
    return {(pid, days[n]): (secs[lo:hi], vals[lo:hi]) for (pid, n), lo, hi in zip(keys, starts, ends, strict=True)}


def _merged(stored_secs: bytes, stored_vals: bytes, secs: np.ndarray, vals: np.ndarray) -> Bucket:
    """A stored bucket with new samples: a new sample at a stored second replaces it; in time order."""
    all_secs = np.concatenate((np.frombuffer(bytes(stored_secs), dtype=np.uint32), secs))
    all_vals = np.concatenate((np.frombuffer(bytes(stored_vals), dtype=np.float64), vals))
    order = np.argsort(all_secs, kind="stable")  # the new after the stored of an equal second
    all_secs, all_vals = all_secs[order], all_vals[order]
    keep = np.append(all_secs[1:] != all_secs[:-1], True)
    return all_secs[keep], all_vals[keep]


def _buckets_merge(chunk: list[tuple[int, dt.date]], by_bucket: dict[tuple[int, dt.date], Bucket]) -> None:
    """Write one chunk of buckets: new ones inserted (PostgreSQL: binary ``COPY``), stored ones merged (a sample
    at a stored time replaces it). The stored ones are read locked, as rows, not model objects."""
    stored = {
        (point_id, day): (pk, secs, vals)
        for pk, point_id, day, secs, vals in TrendDay.objects.select_for_update()
        .filter(point_id__in={p for p, _d in chunk}, day__in={d for _p, d in chunk})
        .order_by("pk")
        .values_list("pk", "point_id", "day", "seconds", "values")
    }
    new, changed = [], []
    for key in chunk:
        secs, vals = by_bucket[key]
        row = stored.get(key)
        if row is None:
            new.append((key[0], key[1], int(secs.size), secs.tobytes(), vals.tobytes()))
            continue
        pk, stored_secs, stored_vals = row
        secs, vals = _merged(stored_secs, stored_vals, secs, vals)
        changed.append((int(secs.size), secs.tobytes(), vals.tobytes(), pk))
    ops = connection.ops
    table = ops.quote_name(TrendDay._meta.db_table)
    count, seconds, values = ops.quote_name("count"), ops.quote_name("seconds"), ops.quote_name("values")
    columns = f"point_id, day, {count}, {seconds}, {values}"
    with connection.cursor() as cursor:
        if new and connection.vendor == "postgresql":
            with cursor.copy(f"COPY {table} ({columns}) FROM STDIN WITH (FORMAT binary)") as copy:
                copy.set_types(["int8", "date", "int4", "bytea", "bytea"])
                for row in new:
                    copy.write_row(row)
        elif new:
            cursor.executemany(
                f"INSERT INTO {table} ({columns}) VALUES (%s, %s, %s, %s, %s)",  # noqa: S608 (the model's table)
                [(p, ops.adapt_datefield_value(d), n, s, v) for p, d, n, s, v in new],
            )
        if changed:
            cursor.executemany(
                f"UPDATE {table} SET {count} = %s, {seconds} = %s, {values} = %s WHERE id = %s",  # noqa: S608
                changed,
            )


def _points_freshen(flat: _Flat) -> None:
    """Each point's last value, where its latest sample is at or after the one it holds; not stale. On
    PostgreSQL one statement for every point (``unnest`` of three arrays), elsewhere one batched statement."""
    order = np.lexsort((flat.stamps, flat.point_ids))
    pids = flat.point_ids[order]
    latest = order[np.append(pids[1:] != pids[:-1], True)]  # each point's latest sample, by point id
    ids, vals = flat.point_ids[latest].tolist(), flat.values[latest].tolist()
    times = [flat.times[i] for i in latest.tolist()]
    table = connection.ops.quote_name(Point._meta.db_table)
    with connection.cursor() as cursor:
        if connection.vendor == "postgresql":
            cursor.execute(
                f"UPDATE {table} AS p SET last_value = v.value, last_value_at = v.at, stale = false "  # noqa: S608
                "FROM unnest(%s::bigint[], %s::double precision[], %s::timestamptz[]) AS v(id, value, at) "
                "WHERE p.id = v.id AND (p.last_value_at IS NULL OR p.last_value_at <= v.at)",
                [ids, vals, times],
            )
            return
        sql = (
            f"UPDATE {table} SET last_value = %s, last_value_at = %s, stale = %s "  # noqa: S608 (the model's table)
            "WHERE id = %s AND (last_value_at IS NULL OR last_value_at <= %s)"
        )
        adapt = connection.ops.adapt_datetimefield_value
        rows = [(v, at, False, pk, at) for pk, v, at in zip(ids, vals, map(adapt, times), strict=True)]
        for start in range(0, len(rows), CHUNK):
            cursor.executemany(sql, rows[start : start + CHUNK])


_store = trend_samples_store  # the name the poller first used


def trend_samples(*, point: Point, since: dt.datetime, until: dt.datetime) -> list[tuple[dt.datetime, float]]:
    """A point's samples from ``since`` up to ``until`` (UTC-aware), in time order."""
    out = []
    for bucket in TrendDay.objects.filter(point=point, day__gte=since.date(), day__lte=until.date()).order_by("day"):
        out.extend((when, value) for when, value in bucket.samples() if since <= when <= until)
    return out


# ---------------------------------------------------------------------------
# Background jobs and retention
# ---------------------------------------------------------------------------
FINISHED = {TrendImportJob.Status.DONE, TrendImportJob.Status.REFUSED, TrendImportJob.Status.FAILED}


def trend_import_runs_in_background(*, text: str) -> bool:
    return data_rows(text, at_most=BACKGROUND_ROWS) >= BACKGROUND_ROWS


@transaction.atomic
def trend_import_job_create(
    *, site: Site, text: str, layout: str, units: str = UnitSystem.SI, by: User | None, file_name: str = ""
) -> TrendImportJob:
    """Store the file as a queued job, with the units of its values, and queue its run after commit (the caller
    checked ``by`` manages ``site``)."""
    _check_request(layout, units, text)
    # The file is stored before it is checked, and PostgreSQL cannot store NUL in text: refused at once.
    refused = control_character_errors(text)
    if refused:
        raise ImportFailed(refused)
    job = TrendImportJob.objects.create(
        organisation=site.organisation,
        site=site,
        layout=layout,
        units=units,
        requested_by=by if getattr(by, "is_authenticated", False) else None,
        file_name=file_name[:200],
        source=text,
        rows_total=data_rows(text),
    )
    job_id = job.pk
    transaction.on_commit(lambda: _enqueue(job_id))
    return job


def _enqueue(job_id: int) -> None:
    from .tasks import trend_import_job_run as task

    task.delay(job_id)


def trend_import_job_run(*, job_id: int) -> TrendImportJob:
    """Check every row of the job's file, then store every value or none. A finished job is left as it is."""
    job = TrendImportJob.objects.select_related("site__organisation", "requested_by").get(pk=job_id)
    if job.status in FINISHED:
        return job
    TrendImportJob.objects.filter(pk=job_id).update(status=TrendImportJob.Status.CHECKING)

    def finish(result: TrendImportResult) -> None:
        _finished(
            job_id,
            status=TrendImportJob.Status.DONE,
            values_stored=result.values,
            detail=result.words(),
        )

    try:
        trend_import(
            site=job.site, text=job.source, layout=job.layout, units=job.units, by=job.requested_by, finish=finish
        )
    except ImportFailed as exc:
        _finished(
            job_id, status=TrendImportJob.Status.REFUSED, errors=[e.as_dict() for e in exc.errors], detail=str(exc)
        )
    except Exception:  # whatever went wrong must end up on the job, not vanish in a worker
        logger.exception("trend import job %s failed", job.public_id)
        _finished(
            job_id,
            status=TrendImportJob.Status.FAILED,
            detail="the import stopped on an unexpected error; nothing was imported. Try again or ask an admin.",
        )
    return TrendImportJob.objects.get(pk=job_id)


def _finished(job_id: int, *, status: str, **fields: Any) -> None:
    TrendImportJob.objects.filter(pk=job_id).update(status=status, source="", finished_at=timezone.now(), **fields)


@transaction.atomic
def trend_purge(*, now: dt.datetime | None = None) -> int:
    """Delete day buckets older than ``PLENUM_TREND_RETENTION_DAYS``; returns how many were deleted."""
    # A UTC date on purpose: buckets are UTC days (TrendDay.day), whatever the site's zone.
    cutoff = ((now or timezone.now()) - trend_retention()).date()
    deleted, _ = TrendDay.objects.filter(day__lt=cutoff).delete()
    return deleted
