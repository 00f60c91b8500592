"""Reading a trend file's rows in its layout (``automation.trends`` says the rules): every problem of the file
found at once, a bad header included, each with its line, column or point, value and what is allowed.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
from collections import defaultdict
from collections.abc import Callable

from django.utils import timezone

from inventory.csv_io import BYTE_ORDER_MARK, ImportFailed, RowError, control_character_errors, data_rows
from inventory.models import Site

from .models import Point
from .trend_cells import LONG_COLUMNS, FileClock, SitePoints, cell_value, time_words
from .trend_store import Samples, TrendImportResult


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
    clock: FileClock,
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


def _wide_header(header: list[str], points: SitePoints, errors: list[RowError]) -> list[Point | None]:
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
    reader,
    points: SitePoints,
    clock: FileClock,
    samples: Samples,
    errors: list[RowError],
    progress: Callable[[int], None],
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
            value, problem = cell_value(raw, point, points.system)
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


def _long_header(header: list[str], points: SitePoints, errors: list[RowError]) -> bool:
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
    reader,
    points: SitePoints,
    clock: FileClock,
    samples: Samples,
    errors: list[RowError],
    progress: Callable[[int], None],
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
        value, problem = cell_value(raw, point, points.system)
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


DELIMITERS = (",", ";", "\t")


def file_delimiter(text: str) -> str:
    """The header line's separator: a comma, or the semicolon (or tab) that European building-automation and
    spreadsheet exports use where the comma is the decimal mark ("14,0"; values read it as 14.0)."""
    header = next((line for line in text.splitlines() if line.strip()), "")
    counts = {d: header.count(d) for d in DELIMITERS}
    best = max(DELIMITERS, key=lambda d: counts[d])
    return best if counts[best] > counts[","] else ","


def trend_file_read(
    *,
    site: Site,
    text: str,
    layout: str,
    units: str,
    now: dt.datetime | None = None,
    progress: Callable[[int, int], None] | None = None,
) -> tuple[Samples, TrendImportResult]:
    """Every value of a trend file of ``layout`` (checked by ``trend_cells.trend_request_check``) for ``site``'s
    points, in SI, with the result's row counts; raises ``ImportFailed`` listing every problem of the file."""
    # A cell holding a control character is named as such (and not again as a bad value); the other checks run.
    refused = control_character_errors(text)
    text = text.removeprefix(BYTE_ORDER_MARK)
    total = data_rows(text)
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=file_delimiter(text))
    points = SitePoints(site, units)
    clock = FileClock(site, now or timezone.now())
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
    return samples, TrendImportResult(
        rows=rows, repeated_earlier=clock.repeated_earlier, repeated_later=clock.repeated_later
    )
