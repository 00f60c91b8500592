"""Generation against the real PostgreSQL and a real Celery worker on Redis.

Both need a database another connection (a thread or the worker process) can
see, so they run in the PostgreSQL pass of CI (DATABASE_URL=postgres://…). In
the SQLite pass, with PostgreSQL answering on the machine, they are skipped
because that pass covers them; with no PostgreSQL at all they fail under CI.
"""

import datetime as dt
import os
import subprocess
import sys
import threading
import urllib.parse
from pathlib import Path

import pytest
from django.db import connection, connections

from scheduling.engine import work_orders_generate
from scheduling.models import WorkOrder, WorkOrderTask
from scheduling.services import task_library_install
from tests.conftest import in_ci, port_open, service_missing
from tests.factories.inventory import make_full_unit

TODAY = dt.date(2025, 3, 3)
ROOT = Path(__file__).resolve().parents[2]


def require_postgres():
    if connection.vendor == "postgresql":
        return
    if in_ci() and port_open("127.0.0.1", 5432):
        pytest.skip("runs in the PostgreSQL pass of CI (DATABASE_URL=postgres://…)")
    service_missing("needs PostgreSQL: run with DATABASE_URL=postgres://…")


def make_units(n=3):
    task_library_install()
    first = make_full_unit(service_start=dt.date(2024, 1, 15))
    for _ in range(n - 1):
        make_full_unit(building=first.building, service_start=dt.date(2024, 1, 15))
    return first.building.site.organisation


@pytest.mark.postgres
@pytest.mark.django_db(transaction=True)
def test_two_concurrent_runs_create_each_occurrence_once():
    """Two generation runs at the same moment on PostgreSQL create every occurrence exactly once."""
    require_postgres()
    org = make_units()
    barrier = threading.Barrier(2)
    errors = []

    def run():
        try:
            barrier.wait(timeout=10)
            work_orders_generate(organisation=org, today=TODAY)
        except Exception as exc:  # reported to the main thread below
            errors.append(exc)
        finally:
            connections.close_all()

    threads = [threading.Thread(target=run) for _ in range(2)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(timeout=60)
    assert errors == []
    keys = list(WorkOrderTask.objects.values_list("ahu_id", "task_code", "component_key", "occurrence_key"))
    assert keys and len(keys) == len(set(keys))
    assert not WorkOrder.objects.filter(tasks__isnull=True).exists(), "a losing run left an empty visit"
    again = work_orders_generate(organisation=org, today=TODAY)
    assert again.created == 0 and again.unchanged == len(keys)


@pytest.mark.redis
@pytest.mark.postgres
@pytest.mark.django_db(transaction=True)
def test_celery_worker_on_redis_runs_generation_end_to_end(monkeypatch):
    """A Celery worker started against the real Redis executes the generation task and the work appears."""
    require_postgres()
    if not port_open("127.0.0.1", 6379):
        service_missing("needs Redis on 127.0.0.1:6379")
    from celery import Celery

    org = make_units(1)
    db = connection.settings_dict
    auth = urllib.parse.quote(db["USER"] or "")
    if db.get("PASSWORD"):
        auth += ":" + urllib.parse.quote(db["PASSWORD"])
    database_url = f"postgres://{auth}@{db['HOST'] or '127.0.0.1'}:{db['PORT'] or 5432}/{db['NAME']}"
    broker = "redis://127.0.0.1:6379/13"
    env = {
        **os.environ,
        "DJANGO_SETTINGS_MODULE": "config.settings.test",
        "DATABASE_URL": database_url,
        "CELERY_BROKER_URL": broker,
        "CELERY_RESULT_BACKEND": broker,
        "DATABASE_CONN_MAX_AGE": "0",
    }
    worker = subprocess.Popen(
        [
            sys.executable,
            "-m",
            "celery",
            "-A",
            "config",
            "worker",
            "--pool=solo",
            "-l",
            "warning",
            "--without-mingle",
            "--without-gossip",
            "-n",
            f"plenum-test-{os.getpid()}@%h",
        ],
        cwd=ROOT,
        env=env,
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
    )
    # Celery lets these variables win over arguments; point this client at the worker's own Redis database.
    monkeypatch.setenv("CELERY_BROKER_URL", broker)
    monkeypatch.setenv("CELERY_RESULT_BACKEND", broker)
    client = Celery(broker=broker, backend=broker)
    counts = None
    try:
        result = client.send_task("scheduling.work_orders_generate", args=[org.pk, 90, TODAY.isoformat()])
        counts = result.get(timeout=90)
    except Exception:  # the worker's own output says why; shown below
        counts = None
    finally:
        worker.terminate()
        try:
            out, _ = worker.communicate(timeout=20)
        except subprocess.TimeoutExpired:
            worker.kill()
            out, _ = worker.communicate()
        client.close()
    assert counts and counts["created"] > 0, out.decode(errors="replace")[-3000:]
    assert WorkOrderTask.objects.count() == counts["created"]
