"""What the scenarios share: their two refusals, medians, timing, URLs and the caches forgotten."""

from __future__ import annotations

import statistics
import time
from collections.abc import Callable

from django.db import connection
from django.urls import NoReverseMatch, reverse


class NotRun(Exception):
    """A scenario whose feature has not landed (or cannot run here)."""


class WrongOutcome(RuntimeError):
    """A scenario's operations did not have the outcome it names (a form flagged instead of stored, a write
    refused, a read not answered): its figures would measure another path, so it fails instead."""


def median(values: list[float | None]) -> float | None:
    """The median of the figures there are; None (null in results.json) when there are none."""
    values = [v for v in values if v is not None]
    return round(statistics.median(values), 4) if values else None


def timed(fn: Callable[[], object]) -> tuple[float, object]:
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def url(name: str, **kwargs) -> str:
    try:
        return reverse(name, kwargs=kwargs or None)
    except NoReverseMatch as exc:
        raise NotRun(f"URL {name!r} does not exist yet") from exc


def max_id(model) -> int:
    return model.objects.order_by("-pk").values_list("pk", flat=True).first() or 0


def engine_caches_clear() -> None:
    """Forget the per-process caches (run-hour rates, seasons from normals, ...) as the tests do."""
    from config.caches import clear_module_caches

    clear_module_caches()


def count_items(payload) -> object:
    if isinstance(payload, list):
        return len(payload)
    if isinstance(payload, dict):
        if isinstance(payload.get("counts"), dict):  # the paged board: whole-week totals per section
            return payload["counts"]
        return {k: len(v) for k, v in payload.items() if isinstance(v, list)} or sorted(payload)[:8]
    return None


def connection_vendor() -> str:
    return connection.vendor
