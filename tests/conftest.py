"""Shared test fixtures.

Tests that need PostgreSQL, Redis or the browser skip when those are missing,
except under CI (the ``CI`` environment variable), where they fail instead.
"""

import os
import socket
from pathlib import Path

import pytest

OUTPUT_DIR = Path(__file__).resolve().parent.parent / "test-output"


def in_ci() -> bool:
    return bool(os.environ.get("CI"))


def on_postgres() -> bool:
    return os.environ.get("DATABASE_URL", "").startswith(("postgres://", "postgresql://"))


def broker_configured() -> bool:
    return bool(os.environ.get("CELERY_BROKER_URL"))


def pytest_collection_modifyitems(config, items):
    """Tests marked ``postgres`` or ``redis`` belong to the run configured for those services.

    `.ci/run` runs the suite twice: on the embedded defaults (SQLite, Celery
    in-process), where these tests are deselected by design, and with
    ``DATABASE_URL`` and ``CELERY_BROKER_URL`` set, where they run — and fail,
    under CI, if the configured service does not answer.
    """
    keep, dropped = [], []
    for item in items:
        if (item.get_closest_marker("postgres") and not on_postgres()) or (
            item.get_closest_marker("redis") and not broker_configured()
        ):
            dropped.append(item)
        else:
            keep.append(item)
    if dropped:
        config.hook.pytest_deselected(items=dropped)
        items[:] = keep
        config._plenum_service_deselected = len(dropped)


def pytest_terminal_summary(terminalreporter, exitstatus, config):
    count = getattr(config, "_plenum_service_deselected", 0)
    if count:
        terminalreporter.write_line(
            f"{count} tests need PostgreSQL or Redis; they run when DATABASE_URL / CELERY_BROKER_URL are set "
            "(the second pass of .ci/run)."
        )


def service_missing(reason: str) -> None:
    """Skip locally; fail under CI, where every service must be there."""
    if in_ci():
        pytest.fail(f"{reason} (CI is set, so this fails instead of skipping)")
    pytest.skip(reason)


def port_open(host: str, port: int) -> bool:
    try:
        with socket.create_connection((host, port), timeout=0.5):
            return True
    except OSError:
        return False


@pytest.fixture
def output_dir() -> Path:
    """Folder for files people look at: screenshots and PDF page images."""
    OUTPUT_DIR.mkdir(exist_ok=True)
    return OUTPUT_DIR


@pytest.fixture
def api_client():
    from rest_framework.test import APIClient

    return APIClient()


@pytest.fixture(autouse=True)
def _answers_forgotten():
    """Each test starts with no kept answers and no kept results of the engine's pure functions
    (they live in the process, across tests), as the benchmark starts each repetition."""
    from accounts.answers import answer_cache_clear
    from config.caches import clear_module_caches

    answer_cache_clear()
    clear_module_caches()
    yield
