"""A deterministic synthetic portfolio for the benchmarks: ``portfolio_generate``.

The same ``seed`` and ``today`` give the same rows (names, label codes,
coordinates, readings); only database ids and ``created_at`` stamps differ.
Everything is invented: companies, places, people. Rows go in with
``bulk_create`` in large batches, because the point is to reach thousands of
units quickly; the domain services are used only where they install shared
data (the task and checklist libraries). History rows (completed work orders,
inspections, readings, findings) use occurrence keys starting ``hist-`` so
they never collide with the due-date engine's own keys.

The package, one module per job: ``parts`` (the parts and kinds of unit), ``names`` (invented names and the
label codes), ``common`` (the summaries, one run's options ``GenerationRun``, bulk writes), ``people``,
``registry`` (sites, buildings, units, component trees), ``history`` (temperatures, meters, visits,
inspections), ``findings`` (readings, evaluations, findings and proposed work) and ``organisation`` (one
organisation built from those steps).
"""

from __future__ import annotations

import datetime as dt
import random

from django.contrib.auth.hashers import make_password
from django.db import connection, transaction
from django.utils import timezone

from .common import BATCH, BENCH_PASSWORD, GenerationRun, OrgSummary, Portfolio
from .names import LabelCodes
from .organisation import organisation_build
from .parts import PARTS, UNIT_KINDS

__all__ = [
    "BATCH",
    "BENCH_PASSWORD",
    "PARTS",
    "UNIT_KINDS",
    "GenerationRun",
    "OrgSummary",
    "Portfolio",
    "organisations_add",
    "portfolio_generate",
]


def portfolio_generate(
    *, sites: int, ahus: int, years: int = 2, seed: int = 1, today: dt.date | None = None, prefix: str = ""
) -> Portfolio:
    """Write a synthetic portfolio of ``sites`` sites and ``ahus`` units for one organisation, plus a
    second, twentieth-sized organisation (to see that tenancy holds at scale).

    Installs the shipped task and checklist libraries first (idempotent). ``prefix`` keeps the usernames
    and organisation slugs of two portfolios in one database apart (``main-supervisor`` without it,
    ``<prefix>-main-supervisor`` with it).
    """
    from accounts.models import Organisation
    from inspections.services.library import checklist_library_install
    from scheduling.services import task_library_install

    if sites < 1 or ahus < 1:
        raise ValueError(f"sites={sites}, ahus={ahus}: both must be at least 1")
    if years < 1:
        raise ValueError(f"years={years}: at least 1")
    # The server's date on purpose: the synthetic history is anchored to one day, before any site exists.
    today = today or timezone.localdate()
    rng = random.Random(seed)
    run = GenerationRun(
        years=years,
        today=today,
        rng=rng,
        codes=LabelCodes(rng),
        password=make_password(BENCH_PASSWORD, salt="benchsalt"),
    )
    with transaction.atomic():
        task_library_install()
        checklist_library_install()
        head = f"{prefix}-" if prefix else ""
        main = Organisation.objects.create(name="Bench Air Services", slug=f"{head}bench-main-{seed}")
        other = Organisation.objects.create(name="Bench Other Contractor", slug=f"{head}bench-other-{seed}")
        main_summary = organisation_build(org=main, slug=f"{head}main", n_sites=sites, n_ahus=ahus, run=run)
        other_summary = organisation_build(
            org=other, slug=f"{head}other", n_sites=max(1, sites // 20), n_ahus=max(1, ahus // 20), run=run
        )
    # Planner statistics, as any database that has been running has them (autovacuum would gather them
    # within minutes); without them the first queries of a run are planned for empty tables.
    with connection.cursor() as cursor:
        cursor.execute("ANALYZE")
    return Portfolio(main=main_summary, other=other_summary, today=today, counts=run.counts)


def organisations_add(
    *, count: int, sites: int, ahus: int, today: dt.date, years: int = 2, seed: int = 2
) -> list[OrgSummary]:
    """``count`` further organisations of ``sites`` sites and ``ahus`` units each (``day1``, ``day2``, …): the
    other contractors of the mixed-day benchmark, added to a database that already holds a portfolio.

    Label codes are drawn apart from every code already stored, so the new rows never collide with the
    portfolio's whatever the seed.
    """
    from accounts.models import Organisation
    from inventory.models import AHU, Component

    if count < 1 or sites < 1 or ahus < 1:
        raise ValueError(f"count={count}, sites={sites}, ahus={ahus}: each must be at least 1")
    rng = random.Random(seed)
    codes = LabelCodes(rng)
    codes.seen.update(AHU.objects.values_list("label_code", flat=True))
    codes.seen.update(Component.objects.values_list("label_code", flat=True))
    run = GenerationRun(
        years=years, today=today, rng=rng, codes=codes, password=make_password(BENCH_PASSWORD, salt="benchsalt")
    )
    added = []
    with transaction.atomic():
        for n in range(1, count + 1):
            org = Organisation.objects.create(name=f"Bench Day Contractor {n}", slug=f"bench-day{n}-{seed}")
            added.append(organisation_build(org=org, slug=f"day{n}", n_sites=sites, n_ahus=ahus, run=run))
    with connection.cursor() as cursor:
        cursor.execute("ANALYZE")
    return added
