"""Settings of the Celery worker started by the fault tests: the test settings with a short visibility timeout.

A message taken by a worker that is then killed stays unacknowledged in Redis
(acks_late); it is handed out again once the visibility timeout passes.

With ``PLENUM_FAULT_PAUSE_AFTER_TASK_ROWS`` set, the worker pauses right after
writing the first batch of work-order task rows, inside the generation's
transaction, and says so on its output: the test kills it exactly there.
"""

import os
import sys
import time

from django.db.models.query import QuerySet

from config.settings.test import *  # noqa: F403

CELERY_BROKER_TRANSPORT_OPTIONS = {"visibility_timeout": 5}

if os.environ.get("PLENUM_FAULT_PAUSE_AFTER_TASK_ROWS"):
    _bulk_create = QuerySet.bulk_create

    def _pausing_bulk_create(self, objs, *args, **kwargs):
        created = _bulk_create(self, objs, *args, **kwargs)
        if self.model._meta.label == "scheduling.WorkOrderTask":
            print("PLENUM-FAULT: task rows written, transaction open", flush=True, file=sys.stderr)
            time.sleep(60)
        return created

    QuerySet.bulk_create = _pausing_bulk_create
