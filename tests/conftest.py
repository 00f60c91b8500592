"""Shared test fixtures.

Tests that need PostgreSQL, Redis or the browser skip when those are missing,
except under CI (the ``CI`` environment variable), where they fail instead.
"""

import datetime as dt
import os
import socket
from pathlib import Path

import pytest
import time_machine

OUTPUT_DIR = Path(__file__).resolve().parent.parent / "test-output"

# The instant the controlled clock shows (the ``clock`` fixture): a Wednesday at 10:00 UTC, the same
# date in every zone the tests' sites use (New York 06:00 … Chatham 22:45), far from a change of clocks.
TEST_NOW = dt.datetime(2026, 6, 10, 10, 0, tzinfo=dt.UTC)

# PLENUM_TEST_WALL_CLOCK=2026-12-03T23:30:00+00:00 runs the tests as if the machine's clock showed that
# instant (ticking from it), to prove a test does not depend on the real date: a test on ``clock`` passes
# at any wall-clock time, one that reads the real date fails when its sites' date differs from UTC's.
WALL_CLOCK_VARIABLE = "PLENUM_TEST_WALL_CLOCK"


def in_ci() -> bool:
    return bool(os.environ.get("CI"))


def on_postgres() -> bool:
    return os.environ.get("DATABASE_URL", "").startswith(("postgres://", "postgresql://"))


def broker_configured() -> bool:
    return bool(os.environ.get("CELERY_BROKER_URL"))


def pytest_configure(config):
    wall = os.environ.get(WALL_CLOCK_VARIABLE)
    if wall:
        traveller = time_machine.travel(dt.datetime.fromisoformat(wall), tick=True)
        traveller.start()
        config._plenum_wall_clock = traveller


def pytest_unconfigure(config):
    traveller = getattr(config, "_plenum_wall_clock", None)
    if traveller is not None:
        traveller.stop()


def pytest_report_header(config):
    wall = os.environ.get(WALL_CLOCK_VARIABLE)
    return f"wall clock travelled to {wall} ({WALL_CLOCK_VARIABLE})" if wall else None


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
def clock():
    """The controlled clock: ``timezone.now()`` is ``TEST_NOW`` and stands still for the test.

    Use it (``pytestmark = pytest.mark.usefixtures("clock")``, or as an argument to move it with
    ``clock.shift(...)`` / ``clock.move_to(...)``) wherever a test makes work dated today or reads
    today's date; it starts before the test's other fixtures build their world.
    """
    with time_machine.travel(TEST_NOW, tick=False) as traveller:
        yield traveller


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
