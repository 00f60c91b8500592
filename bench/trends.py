"""The trend-ingest scenario: ``trend_ingest`` stores one day of the benchmark's trends (``bench.trend_data``)
through ``automation.trends.trend_samples_store`` site by site and judges it with
``automation.judging.trends_judge``, against a plain bulk write of the same rows.
"""

from __future__ import annotations

import datetime as dt

import numpy as np

from .trend_data import POINTS_A_UNIT, SAMPLES_A_DAY, STEP_S, TrendUnits, day_values, points_build, site_samples

# points_build, day_values and site_samples are answered here too, beside the scenario that uses them.
__all__ = [
    "BASELINE_TABLE",
    "INGEST_OVER_BASELINE",
    "JUDGE_OVER_INGEST",
    "day_values",
    "points_build",
    "site_samples",
    "trend_ingest",
]

# ---------------------------------------------------------------------------
# The scenario: ingest one day through the real writer, judge it, against a plain bulk write of the same rows.
# ---------------------------------------------------------------------------
INGEST_OVER_BASELINE = 3.0  # target: ingest ≤ 3× the baseline's plain write of the same rows
JUDGE_OVER_INGEST = 2.0  # target: judging the day ≤ 2× the ingest time
BASELINE_TABLE = "bench_trend_baseline"


def _site_rows(units: TrendUnits) -> dict[int, list[int]]:
    rows: dict[int, list[int]] = {}
    for i, ahu_id in enumerate(units.ahu_ids):
        rows.setdefault(units.site_of[ahu_id], []).append(i)
    return rows


def _day_starts(site_ids, day: dt.date) -> dict[int, float]:
    """Each site's local midnight of ``day``, epoch seconds."""
    import zoneinfo

    from inventory.models import Site

    out = {}
    for site in Site.objects.filter(pk__in=site_ids):
        tz = zoneinfo.ZoneInfo(site.time_zone or "UTC")
        out[site.pk] = dt.datetime.combine(day, dt.time(), tzinfo=tz).timestamp()
    return out


def _ingest(units: TrendUnits, values: dict, by_site: dict[int, list[int]], starts: dict[int, float]) -> int:
    """Every site's day through ``trend_samples_store``, one transaction a site (as an import or a poll)."""
    from django.db import transaction

    from automation.trends import trend_samples_store

    stored = 0
    for site_id, rows in by_site.items():
        with transaction.atomic():
            stored += trend_samples_store(site_samples(units, values, rows=rows, start=starts[site_id])).values
    return stored


def _baseline_table() -> None:
    from django.db import connection

    kind = "timestamptz" if connection.vendor == "postgresql" else "text"
    with connection.cursor() as cursor:
        cursor.execute(f"DROP TABLE IF EXISTS {BASELINE_TABLE}")
        cursor.execute(
            f"CREATE TABLE {BASELINE_TABLE} (ts {kind} NOT NULL, point_id integer NOT NULL, value double precision)"
        )


_COPY_ROW = np.dtype(
    [("n", ">i2"), ("l1", ">i4"), ("ts", ">i8"), ("l2", ">i4"), ("pid", ">i4"), ("l3", ">i4"), ("v", ">f8")]
)
_PG_EPOCH = dt.datetime(2000, 1, 1, tzinfo=dt.UTC).timestamp()


def _copy_payload(units: TrendUnits, values: dict, rows: list[int], start: float) -> bytes:
    """The site's rows in PostgreSQL's binary COPY format (built with numpy)."""
    import struct

    pids = np.array([p for i in rows for p in units.point_ids[i]], dtype=np.int64)
    vals = np.stack([values[s][i] for i in rows for s in units.signals[i]])
    ts = ((start + np.arange(SAMPLES_A_DAY) * STEP_S - _PG_EPOCH) * 1_000_000).astype(np.int64)
    out = np.empty(vals.shape, dtype=_COPY_ROW)
    out["n"], out["l1"], out["l2"], out["l3"] = 3, 8, 4, 8
    out["ts"], out["pid"], out["v"] = ts[None, :], pids[:, None], vals
    return b"PGCOPY\n\xff\r\n\x00" + struct.pack(">ii", 0, 0) + out.tobytes() + struct.pack(">h", -1)


def _baseline(units: TrendUnits, values: dict, by_site: dict[int, list[int]], starts: dict[int, float]) -> None:
    """The same rows into a plain table: PostgreSQL ``COPY … FORMAT binary``; on SQLite ``executemany`` INSERT."""
    from django.db import connection, transaction

    with connection.cursor() as cursor:
        cursor.execute(f"DELETE FROM {BASELINE_TABLE}")
    for site_id, rows in by_site.items():
        start = starts[site_id]
        with transaction.atomic(), connection.cursor() as cursor:
            if connection.vendor == "postgresql":
                with cursor.copy(f"COPY {BASELINE_TABLE} (ts, point_id, value) FROM STDIN WITH (FORMAT binary)") as cp:
                    cp.write(_copy_payload(units, values, rows, start))
                continue
            times = [dt.datetime.fromtimestamp(start + k * STEP_S, tz=dt.UTC).isoformat() for k in range(SAMPLES_A_DAY)]
            cursor.executemany(
                f"INSERT INTO {BASELINE_TABLE} (ts, point_id, value) VALUES (%s, %s, %s)",
                [
                    (t, pid, v)
                    for i in rows
                    for pid, s in zip(units.point_ids[i], units.signals[i], strict=True)
                    for t, v in zip(times, values[s][i].tolist(), strict=True)
                ],
            )


def _stored_values(units: TrendUnits) -> int:
    from django.db.models import Sum

    from automation.models import TrendDay

    ids = [p for ps in units.point_ids for p in ps]
    total = 0
    for k in range(0, len(ids), 5000):
        total += TrendDay.objects.filter(point_id__in=ids[k : k + 5000]).aggregate(n=Sum("count"))["n"] or 0
    return total


def _clear(units: TrendUnits) -> None:
    from automation.models import TrendDay

    ids = [p for ps in units.point_ids for p in ps]
    for k in range(0, len(ids), 5000):
        TrendDay.objects.filter(point_id__in=ids[k : k + 5000]).delete()


def _judge(by_site: dict[int, list[int]], day: dt.date):
    from automation.judging import trends_judge
    from inventory.models import Site

    days = []
    for site in Site.objects.filter(pk__in=by_site).order_by("pk"):
        days += trends_judge(site=site, start=day, end=day).days
    return days


def _judged_check(units: TrendUnits, days: list) -> None:
    from .scenarios import WrongOutcome

    judged = {d.ahu.pk for d in days if d.faults is not None and d.run_hours is not None}
    missing = [a for a in units.ahu_ids if a not in judged]
    if missing:
        first = next((d for d in days if d.ahu.pk == missing[0]), None)
        said = "; ".join(first.notes) if first is not None else "not in the judged days at all"
        raise WrongOutcome(f"trend judging: {len(missing)} of {len(units.ahu_ids)} units not judged; the first: {said}")


def trend_ingest(*, ahu_ids: list[int], day: dt.date, runs: int, seed: int = 1) -> dict:
    """One site-local ``day`` of 15-minute trends of 20 points on each unit, stored through
    ``trend_samples_store`` (one transaction a site) and judged by ``trends_judge``; baseline: a plain write of the
    same rows. Raises ``WrongOutcome`` when the values stored are not every value sent or a unit is not judged."""
    from .scenarios import WrongOutcome, median, timed

    units = points_build(ahu_ids=ahu_ids)
    values = day_values(units, seed=seed)
    by_site = _site_rows(units)
    starts = _day_starts(by_site, day)
    _baseline_table()
    ingests, baselines = [], []
    for run in range(runs):
        if run:
            _clear(units)
        took, stored = timed(lambda: _ingest(units, values, by_site, starts))
        found = _stored_values(units)
        if stored != units.values or found != units.values:
            raise WrongOutcome(
                f"trend ingest: {units.values} values sent ({len(units.ahu_ids)} units × {POINTS_A_UNIT} points × "
                f"{SAMPLES_A_DAY}), the writer said {stored}, the day buckets hold {found}"
            )
        ingests.append(took)
        baselines.append(timed(lambda: _baseline(units, values, by_site, starts))[0])
    judge_s, days = timed(lambda: _judge(by_site, day))
    _judged_check(units, days)
    ingest, base = median(ingests), median(baselines)
    return {
        "units": len(units.ahu_ids),
        "points": len(units.ahu_ids) * POINTS_A_UNIT,
        "values": units.values,
        "sites": len(by_site),
        "day": day.isoformat(),
        "ingest_s": ingest,
        "baseline_s": base,
        "baseline": "COPY (binary)" if _vendor() == "postgresql" else "executemany INSERT",
        "ingest_over_baseline": round(ingest / base, 2) if base else None,
        "values_per_s": round(units.values / ingest) if ingest else None,
        "judge_s": round(judge_s, 3),
        "judge_over_ingest": round(judge_s / ingest, 2) if ingest else None,
        "judged_units": len({d.ahu.pk for d in days}),
        "faults_opened": sum(len(d.opened) for d in days),
        "filter_days": sum(1 for d in days for f in d.filters if f.day is not None),
        "run_hour_readings": sum(1 for d in days if d.run_hours is not None and d.run_hours.reading is not None),
        "targets": {
            f"ingest_over_baseline <= {INGEST_OVER_BASELINE:g}": bool(base and ingest / base <= INGEST_OVER_BASELINE),
            f"judge_over_ingest <= {JUDGE_OVER_INGEST:g}": bool(ingest and judge_s / ingest <= JUDGE_OVER_INGEST),
        },
    }


def _vendor() -> str:
    from django.db import connection

    return connection.vendor
