"""Generation cut off in the middle leaves no half-made work orders, and a rerun completes them.

The due-date engine writes every new visit and its tasks in one transaction
(scheduling/engine/). Here a fault strikes after part of the task rows are
inserted — what a worker killed mid-run looks like to the database — and on
PostgreSQL with Redis a real Celery worker is SIGKILLed mid-run and restarted.
"""

import datetime as dt
import os
import signal
import subprocess
import sys
import time
import urllib.parse
from pathlib import Path

import pytest
from django.db import connection
from django.db.models.query import QuerySet

from scheduling.engine import work_orders_generate
from scheduling.models import WorkOrder, WorkOrderTask
from scheduling.services import task_library_install
from tests.conftest import port_open, service_missing
from tests.factories.inventory import BuildingFactory, make_full_unit

TODAY = dt.date(2025, 3, 3)
ROOT = Path(__file__).resolve().parents[2]


def _org_with_units(n: int):
    task_library_install()
    first = make_full_unit(service_start=dt.date(2024, 1, 15))
    building = first.building
    for i in range(n - 1):
        if i % 20 == 19:
            building = BuildingFactory(site=first.building.site)
        make_full_unit(building=building, service_start=dt.date(2024, 1, 15))
    return first.building.site.organisation


def _keys() -> list[tuple]:
    return list(WorkOrderTask.objects.values_list("ahu_id", "task_code", "component_key", "occurrence_key"))


def _assert_complete_and_unique(expected: int) -> None:
    keys = _keys()
    assert len(keys) == expected, f"{len(keys)} task occurrences, expected {expected}"
    assert len(set(keys)) == len(keys), "an occurrence was created twice"
    assert not WorkOrder.objects.filter(tasks__isnull=True).exists(), "a visit without tasks was left behind"


@pytest.mark.django_db(transaction=True)
def test_a_crash_after_some_rows_leaves_nothing_and_a_rerun_completes(monkeypatch):
    """A fault after 10 task rows are written: no visit and no task survive; the rerun makes the full set once."""
    org = _org_with_units(3)
    expected = work_orders_generate(organisation=org, today=TODAY, dry_run=True).created
    assert expected > 10
    real = QuerySet.bulk_create

    def crash_midway(self, objs, *args, **kwargs):
        objs = list(objs)
        if self.model is WorkOrderTask:
            real(self, objs[:10], *args, **kwargs)
            raise RuntimeError("worker lost in the middle of generation")
        return real(self, objs, *args, **kwargs)

    monkeypatch.setattr(QuerySet, "bulk_create", crash_midway)
    with pytest.raises(RuntimeError):
        work_orders_generate(organisation=org, today=TODAY)
    assert WorkOrder.objects.count() == 0
    assert WorkOrderTask.objects.count() == 0
    monkeypatch.undo()
    result = work_orders_generate(organisation=org, today=TODAY)
    assert result.created == expected
    _assert_complete_and_unique(expected)
    assert work_orders_generate(organisation=org, today=TODAY).created == 0


def _database_url() -> str:
    db = connection.settings_dict
    auth = urllib.parse.quote(db["USER"] or "")
    if db.get("PASSWORD"):
        auth += ":" + urllib.parse.quote(db["PASSWORD"])
    return f"postgres://{auth}@{db['HOST'] or '127.0.0.1'}:{db['PORT'] or 5432}/{db['NAME']}"


def _worker(env: dict, name: str) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-m", "celery", "-A", "config", "worker", "--pool=solo", "-l", "info",
         "--without-mingle", "--without-gossip", "-n", f"{name}-{os.getpid()}@%h"],
        cwd=ROOT, env=env, stdout=subprocess.PIPE, stderr=subprocess.STDOUT,
    )  # fmt: skip


def _wait_for_line(proc: subprocess.Popen, needle: str, timeout: float) -> str:
    """Read the worker's output until ``needle`` appears; the output so far for error messages."""
    seen = []
    deadline = time.monotonic() + timeout
    os.set_blocking(proc.stdout.fileno(), False)
    while time.monotonic() < deadline:
        chunk = proc.stdout.read()
        if chunk:
            seen.append(chunk.decode(errors="replace"))
            if needle in "".join(seen):
                return "".join(seen)
        elif proc.poll() is not None:
            break
        time.sleep(0.05)
    raise AssertionError(f"worker never said {needle!r}:\n" + "".join(seen)[-3000:])


@pytest.mark.redis
@pytest.mark.postgres
@pytest.mark.django_db(transaction=True)
def test_a_worker_killed_mid_generation_is_redelivered_and_completes(monkeypatch):
    """SIGKILL the worker while it generates; a restarted worker gets the task again and the set ends complete."""
    if connection.vendor != "postgresql":
        service_missing("needs PostgreSQL: run with DATABASE_URL=postgres://…")
    if not port_open("127.0.0.1", 6379):
        service_missing("needs Redis on 127.0.0.1:6379")
    from celery import Celery

    org = _org_with_units(5)
    expected = work_orders_generate(organisation=org, today=TODAY, dry_run=True).created
    broker = "redis://127.0.0.1:6379/12"
    env = {
        **os.environ,
        # The test settings plus a short visibility timeout, so the killed worker's message comes back quickly.
        "DJANGO_SETTINGS_MODULE": "tests.faults.worker_settings",
        "DATABASE_URL": _database_url(),
        "CELERY_BROKER_URL": broker,
        "CELERY_RESULT_BACKEND": broker,
        "DATABASE_CONN_MAX_AGE": "0",
    }
    monkeypatch.setenv("CELERY_BROKER_URL", broker)
    monkeypatch.setenv("CELERY_RESULT_BACKEND", broker)
    client = Celery(broker=broker, backend=broker)
    client.conf.broker_transport_options = {"visibility_timeout": 5}
    client.connection_for_write().default_channel.client.flushdb()
    first = _worker({**env, "PLENUM_FAULT_PAUSE_AFTER_TASK_ROWS": "1"}, "doomed")
    second = None
    try:
        _wait_for_line(first, "ready", 60)
        result = client.send_task("scheduling.work_orders_generate", args=[org.pk, 90, TODAY.isoformat()])
        _wait_for_line(first, "PLENUM-FAULT: task rows written", 60)
        first.send_signal(signal.SIGKILL)  # mid-transaction: visits and some task rows written, not committed
        first.wait(timeout=10)
        assert WorkOrder.objects.filter(tasks__isnull=True).count() == 0
        assert WorkOrderTask.objects.count() == 0, "a half-made set was committed"
        assert WorkOrder.objects.count() == 0
        # A new worker hands out unacknowledged messages older than the visibility timeout when it starts.
        time.sleep(6)
        second = _worker(env, "survivor")
        counts = result.get(timeout=120)
        assert counts is not None
    finally:
        for proc in (first, second):
            if proc is not None and proc.poll() is None:
                proc.terminate()
                try:
                    proc.wait(timeout=20)
                except subprocess.TimeoutExpired:
                    proc.kill()
        client.close()
    _assert_complete_and_unique(expected)
