"""What the generator's steps share: the summaries it answers with, one run's options, and bulk writes."""

from __future__ import annotations

import datetime as dt
import random
from dataclasses import dataclass, field

from .names import LabelCodes

BENCH_PASSWORD = "bench-pass-not-secret-1"  # a throwaway bench database only
BATCH = 2000


@dataclass
class OrgSummary:
    organisation_id: int
    slug: str
    site_ids: list[int]
    ahu_ids: list[int]
    supervisor: str
    technicians: list[str]
    property_manager: str
    tokens: dict[str, str] = field(default_factory=dict)


@dataclass
class Portfolio:
    main: OrgSummary
    other: OrgSummary
    today: dt.date
    counts: dict[str, int] = field(default_factory=dict)


@dataclass
class GenerationRun:
    """What every organisation of one generation shares: the years of history up to ``today``, the seeded
    generator and the label codes drawn from it, the users' password hash, and the rows written so far."""

    years: int
    today: dt.date
    rng: random.Random
    codes: LabelCodes
    password: str
    counts: dict[str, int] = field(default_factory=dict)

    def counted(self, name: str, rows: int) -> None:
        """Add ``rows`` to the count of ``name``."""
        self.counts[name] = self.counts.get(name, 0) + rows


def aware(day: dt.date, hour: int = 9, minute: int = 0) -> dt.datetime:
    return dt.datetime(day.year, day.month, day.day, hour, minute, tzinfo=dt.UTC)


def bulk(model, rows: list) -> list:
    return model.objects.bulk_create(rows, batch_size=BATCH)
