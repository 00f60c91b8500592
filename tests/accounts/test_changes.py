"""The change stamp: every committed write moves it once, whatever path the write took; nothing else does."""

import contextlib

import pytest
from django.contrib.sessions.models import Session
from django.db import connection, transaction
from django.utils import timezone

from accounts.changes import change_stamp_bump, change_stamp_read, changes_pending
from accounts.models import ChangeStamp
from inventory.models import Site
from scheduling.models import WorkOrder
from tests.factories.inventory import SiteFactory
from tests.factories.scheduling import WorkOrderFactory

pytestmark = pytest.mark.django_db(transaction=True)  # real commits: the stamp moves after them


def moved(before) -> int:
    after = change_stamp_read()
    assert after[0] == before[0] or before == ("", 0), "the epoch stays while the row does"
    return after[1] - before[1]


def test_a_committed_save_moves_the_stamp_and_a_rolled_back_one_does_not():
    """A save outside a transaction moves it at once; a transaction rolled back leaves it where it was."""
    before = change_stamp_read()
    site = SiteFactory()
    assert moved(before) > 0
    before = change_stamp_read()
    with pytest.raises(RuntimeError), transaction.atomic():
        Site.objects.filter(pk=site.pk).update(name="renamed, then rolled back")
        raise RuntimeError("abandon")
    assert moved(before) == 0


def test_bulk_writes_that_send_no_signals_move_the_stamp():
    """bulk_create, QuerySet.update(), a fast delete and raw SQL each move it: they never reach a signal."""
    wo = WorkOrderFactory()
    for write in (
        lambda: WorkOrder.objects.bulk_create(
            [WorkOrder(organisation=wo.organisation, ahu=wo.ahu, title="bulk", due_date=wo.due_date)]
        ),
        lambda: WorkOrder.objects.filter(pk=wo.pk).update(title="updated in bulk"),
        lambda: WorkOrder.objects.filter(title="bulk")._raw_delete(connection.alias),
        lambda: connection.cursor().execute("UPDATE scheduling_workorder SET priority = priority"),
        lambda: connection.cursor().execute(
            "WITH late AS (SELECT id FROM scheduling_workorder) "
            "UPDATE scheduling_workorder SET priority = priority WHERE id IN (SELECT id FROM late)"
        ),
    ):
        before = change_stamp_read()
        write()
        assert moved(before) == 1


def test_a_transaction_of_many_writes_moves_the_stamp_once_after_it_commits():
    """One bump per transaction, after the commit; inside it the connection knows it holds changes."""
    wo = WorkOrderFactory()
    before = change_stamp_read()
    with transaction.atomic():
        for n in range(5):
            WorkOrder.objects.filter(pk=wo.pk).update(title=f"pass {n}")
        assert changes_pending()
        assert moved(before) == 0, "not before the commit"
    assert not changes_pending()
    assert moved(before) == 1


def _rename_in_failed_savepoint(wo, title: str) -> None:
    with contextlib.suppress(ValueError), transaction.atomic():
        WorkOrder.objects.filter(pk=wo.pk).update(title=title)
        raise ValueError("roll the savepoint back")


def test_a_savepoint_rolled_back_keeps_the_outer_transactions_bump():
    """Writes before a failed savepoint still count; a change first made inside the savepoint does not."""
    wo = WorkOrderFactory()
    before = change_stamp_read()
    with transaction.atomic():
        WorkOrder.objects.filter(pk=wo.pk).update(title="outer")
        _rename_in_failed_savepoint(wo, "inner")
    assert moved(before) == 1
    before = change_stamp_read()
    with transaction.atomic():
        _rename_in_failed_savepoint(wo, "inner only")
        assert not changes_pending()
    assert moved(before) == 0


def test_sessions_and_reads_do_not_move_it():
    """A login's session row and any read (a CTE that only selects, too) change no answer."""
    WorkOrderFactory()
    before = change_stamp_read()
    Session.objects.create(session_key="k" * 32, session_data="x", expire_date=timezone.now())
    list(WorkOrder.objects.all())
    with connection.cursor() as cursor:
        cursor.execute("WITH n AS (SELECT count(*) AS c FROM scheduling_workorder) SELECT c FROM n")
    assert moved(before) == 0


def test_a_stamp_after_the_table_is_emptied_never_equals_one_before():
    """The epoch is drawn afresh when the row is written again, so (epoch, value) cannot repeat."""
    change_stamp_bump()
    first = change_stamp_read()
    ChangeStamp.objects.all().delete()
    assert change_stamp_read() == ("", 0)
    for _ in range(first[1]):
        change_stamp_bump()
    again = change_stamp_read()
    assert again[1] == first[1] and again[0] != first[0]


def test_a_migrate_moves_the_stamp_once_at_its_end(caplog):
    """Data migrations may run before the stamp's table exists: no warning then, one bump at the end."""
    from django.core.management import call_command

    before = change_stamp_read()
    call_command("migrate", verbosity=0)
    assert moved(before) >= 1
    assert "change stamp not moved" not in caplog.text


def test_a_stamp_that_cannot_move_does_not_fail_the_write(caplog, monkeypatch):
    """The write has committed; a failed bump is logged, and cached answers wait for their time limit."""
    monkeypatch.setattr("accounts.changes._TABLE", "no_such_table")  # the bump's statement fails…
    monkeypatch.setattr("accounts.changes._table_missing", lambda using: False)  # …on a database that has it
    site = SiteFactory()
    assert Site.objects.filter(pk=site.pk).exists()
    assert "change stamp not moved" in caplog.text
