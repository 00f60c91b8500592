"""Demo schedule: the library and generated work for the demo organisation."""

from __future__ import annotations

import datetime as dt

from .engine import GenerationResult, work_orders_generate
from .services import site_seasons_refresh, task_library_install


def demo_schedule_load(*, organisation, today: dt.date | None = None) -> GenerationResult:
    """Install the shipped library, refresh every site's seasons from its normals, and generate (idempotent)."""
    from django.utils import timezone

    today = today or timezone.localdate()
    task_library_install()
    for site in organisation.sites.all():
        site_seasons_refresh(site=site, today=today, fetch=False)
    return work_orders_generate(organisation=organisation, today=today)
