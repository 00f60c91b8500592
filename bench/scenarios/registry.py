"""Registry CSV import of many units, vs one bulk insert of the same units and buildings."""

from __future__ import annotations

from django.db import transaction

from ..generate import Portfolio
from .common import median, timed


def baseline_code(n: int) -> str:
    """The ``n``-th label code of the import baseline: "B" and ``n`` in six letters of the label alphabet."""
    from inventory.models import LABEL_ALPHABET

    digits = []
    for _ in range(6):
        n, d = divmod(n, len(LABEL_ALPHABET))
        digits.append(LABEL_ALPHABET[d])
    return "B" + "".join(reversed(digits))


def registry_import(*, portfolio: Portfolio, runs: int, rows: int) -> dict:
    """A units file of ``rows`` rows (100 per building) into a new site of the main organisation.

    Measured: ``inventory.csv_io.registry_import`` (every row checked in memory, written in bulk, in
    one transaction). Baseline: ``bulk_create`` of the same buildings and units, nothing checked.
    The import is what a background job does; ``fits_request`` says whether it would also end within
    gunicorn's default 30 s worker timeout (the reason files of ``BACKGROUND_ROWS`` rows or more go
    to a job).
    """
    import io

    from accounts.models import Organisation
    from inventory import csv_io
    from inventory.import_jobs import BACKGROUND_ROWS
    from inventory.models import AHU, Building, Site

    org = Organisation.objects.get(pk=portfolio.main.organisation_id)
    site = Site.objects.create(organisation=org, code="bench-import", name="Bench import", latitude=52, longitude=5)
    lines = ["site_code,building_code,building_name,tag,design_supply_airflow_m3s,design_min_oa_fraction,notes"]
    lines += [f"bench-import,b{n // 100},Block {n // 100},AHU-{n:06d},2.5,0.3,imported" for n in range(rows)]
    text = "\n".join(lines) + "\n"

    def clear() -> None:
        with transaction.atomic():
            AHU.objects.filter(building__site=site).delete()
            Building.objects.filter(site=site).delete()

    def baseline() -> None:
        with transaction.atomic():
            buildings = Building.objects.bulk_create(
                [Building(site=site, code=f"b{n}", name=f"Block {n}") for n in range((rows + 99) // 100)],
                batch_size=500,
            )
            AHU.objects.bulk_create(
                [
                    AHU(
                        building=buildings[n // 100],
                        # Codes of their own ("B…", never a drawn "U…" code): 100,000 random six-character codes
                        # repeat a few times (birthday problem), which the import redraws and bulk_create cannot.
                        label_code=baseline_code(n),
                        tag=f"AHU-{n:06d}",
                        design_supply_airflow_m3s=2.5,
                        design_min_oa_fraction=0.3,
                        notes="imported",
                    )
                    for n in range(rows)
                ],
                batch_size=500,
            )

    imports, baselines, created = [], [], []
    try:
        for _ in range(runs):
            t_import, result = timed(
                lambda: csv_io.registry_import(kind="ahus", source=io.StringIO(text, newline=""), organisation=org)
            )
            created.append(result.created)
            clear()
            t_base, _ = timed(baseline)
            clear()
            imports.append(t_import)
            baselines.append(t_base)
    finally:
        clear()
        site.delete()
    took, base = median(imports), median(baselines)
    return {
        "rows": rows,
        "import_s": took,
        "baseline_s": base,
        "import_over_baseline": round(took / base, 2) if base else None,
        "rows_per_s": round(rows / took) if took else None,
        "created": min(created) if created else 0,
        "background_rows": BACKGROUND_ROWS,
        "fits_request": bool(took is not None and took < 30),
    }
