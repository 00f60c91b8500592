"""Storing trend samples in day buckets (``TrendDay``: one row per point and UTC day, packed arrays) and reading
them back; for every writer of samples (the CSV import, the BACnet poller, the demo, the benchmark).
"""

from __future__ import annotations

import datetime as dt
import itertools
from dataclasses import dataclass
from typing import Any

import numpy as np
from django.db import connection

from .models import Point, TrendDay

CHUNK = 500
Samples = dict[int, dict[dt.datetime, float]]  # point id -> time (UTC) -> value


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


def trend_samples_store(samples: Samples, result: TrendImportResult | None = None) -> TrendImportResult:
    """Merge ``{point id: {aware time: value}}`` into the points' day buckets (one locked read and one batched
    write per chunk of buckets) and move each point's last value (one statement); a sample at a time already
    stored replaces it. For every writer of samples (the CSV import, the BACnet poller); call it inside the
    writer's transaction. Values must be clean already (``trend_cells.cell_value`` checks a CSV cell).

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


def trend_samples(*, point: Point, since: dt.datetime, until: dt.datetime) -> list[tuple[dt.datetime, float]]:
    """A point's samples from ``since`` up to ``until`` (UTC-aware), in time order."""
    out = []
    for bucket in TrendDay.objects.filter(point=point, day__gte=since.date(), day__lte=until.date()).order_by("day"):
        out.extend((when, value) for when, value in bucket.samples() if since <= when <= until)
    return out
