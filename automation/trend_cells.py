"""A trend file's cells: the units its values are in, the point a name means, a value, a time.

Read by ``automation.trend_files`` (the import) and by the point map page, the Brick model and the poller (a
point's header, a value's plausible range in words). ``automation.trends`` says the file's rules.
"""

from __future__ import annotations

import datetime as dt
import zoneinfo
from collections import defaultdict
from typing import Any

from django.utils.dateparse import parse_datetime

from accounts.inputs import FieldErrors, check_reading_time, parse_number
from accounts.typed_numbers import comma_readings
from engineering.units import SYSTEMS, UnitSystem, from_display, sensible_bound, to_display, unit_label
from inventory.csv_io import ImportFailed, RowError, binary_problem
from inventory.csv_io.file_format import visible
from inventory.models import Site

from .models import Point
from .vocabulary import UNIT_QUANTITY, PointUnit, plausible_range, point_class_phrase

LAYOUTS = ("wide", "long")
LONG_COLUMNS = ("timestamp", "point", "value")
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


def trend_request_check(layout: Any, units: Any, text: str) -> None:
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


def qualified_name(point: Point) -> str:
    return f"{point.ahu.label_code}/{point.name}"


def point_headers(points) -> dict[int, str]:
    """The exact column header (wide) or point cell (long) a trend file uses for each of a site's points (all of
    them, with ``ahu`` loaded): the point's name where no other unit of the site has a point of that name, else
    ``<unit label code>/<point name>``. The one rule the import, the point map page and the Brick model share."""
    points = list(points)
    names: dict[str, int] = defaultdict(int)
    for point in points:
        names[point.name] += 1
    return {p.pk: p.name if names[p.name] == 1 else qualified_name(p) for p in points}


class SitePoints:
    """The site's points by the names a file may use for them."""

    def __init__(self, site: Site, system: str = "si"):
        self.system = system  # the units of the file's values
        self.by_name: dict[str, list[Point]] = defaultdict(list)
        self.by_code_name: dict[str, Point] = {}
        by_tag_name: dict[str, list[Point]] = defaultdict(list)
        for point in Point.objects.filter(ahu__building__site=site).select_related("ahu__building"):
            self.by_name[point.name].append(point)
            self.by_code_name[qualified_name(point)] = point
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
                f"{qualified_name(p)} ({p.ahu.tag} in {p.ahu.building.name})"
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


def cell_value(raw: str, point: Point, system: str = "si") -> tuple[float | None, str]:
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
    if number is None and (readings := comma_readings(text)):
        return None, f"could be {readings[0]} or {readings[1]}: write {readings[0]} or {readings[1]}"
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


class FileClock:
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
