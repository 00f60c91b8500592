"""The change stamp: a number that moves after every committed write, so a cached answer knows it is stale.

Every SQL statement Django sends passes through an execute wrapper put on each database
connection when it opens (``watch_install``). An INSERT, UPDATE or DELETE on any table except
the few in ``_ignored_tables`` (sessions, login-attempt logs, migration bookkeeping, the stamp
itself) registers one bump of the stamp for when the transaction commits. Watching statements
rather than model signals also catches ``bulk_create``, ``QuerySet.update()``, fast deletes and
raw SQL sent through Django, which signals never see.

The bump runs after the commit, so a reader that sees the new stamp also sees the new rows; a
reader that computed an answer just before the commit stored it under the old stamp, which
nobody asks for once the bump lands. While a connection holds uncommitted writes,
``changes_pending`` is true and cached answers are neither read nor written on it (the cache
cannot know those writes; tests that run inside one transaction therefore bypass the cache).

Writes made outside Django (psql by hand) are not seen, which is why cached answers also expire
after ``settings.PLENUM_ANSWER_CACHE_SECONDS``.
"""

from __future__ import annotations

import logging
import re
import secrets
import time

from django.db import DatabaseError, connections, transaction

from .models import ChangeStamp

logger = logging.getLogger(__name__)

# A data-changing statement and the table it changes, as Django (and hand-written SQL) sends them.
_WRITE = re.compile(r'\s*(?:INSERT\s+(?:OR\s+\w+\s+)?INTO|UPDATE|DELETE\s+FROM|REPLACE\s+INTO)\s+[`"]?(\w+)', re.I)
_CTE = re.compile(r"\s*WITH\b", re.I)
_CTE_WRITE = re.compile(r"\b(?:INSERT\s+INTO|UPDATE|DELETE\s+FROM)\b", re.I)
_TABLE = ChangeStamp._meta.db_table
_ignored: frozenset[str] | None = None
_bumpers: dict[str, object] = {}


def _ignored_tables() -> frozenset[str]:
    """Tables whose writes change no answer: the stamp, sessions, login throttling, migration records."""
    global _ignored
    if _ignored is None:
        from django.apps import apps

        names = {_TABLE, "django_session", "django_migrations", "django_content_type", "auth_permission"}
        if apps.is_installed("axes"):
            names.update(m._meta.db_table for m in apps.get_app_config("axes").get_models())
        _ignored = frozenset(names)
    return _ignored


def _bumper(alias: str):
    """The one after-commit callback of a connection (one bump per transaction, however many writes)."""
    fn = _bumpers.get(alias)
    if fn is None:

        def fn(alias=alias) -> None:
            change_stamp_bump(using=alias)

        _bumpers[alias] = fn
    return fn


def changes_pending(*, using: str = "default") -> bool:
    """Whether this connection holds writes not yet committed (their bump is still waiting).

    Asked on every write, so the answer is remembered with the callback list it was found in: Django only
    appends to that list, and builds a new one when a transaction ends or a savepoint rolls back."""
    conn = connections[using]
    if not conn.in_atomic_block or not conn.run_on_commit:
        return False
    seen = getattr(conn, "_plenum_pending_in", None)
    if seen is conn.run_on_commit:
        return True
    fn = _bumpers.get(using)
    if fn is not None and any(entry[1] is fn for entry in conn.run_on_commit):
        conn._plenum_pending_in = conn.run_on_commit
        return True
    return False


def change_mark(*, using: str = "default") -> None:
    """Register the stamp's bump for this connection's commit (at once outside a transaction)."""
    conn = connections[using]
    if not conn.in_atomic_block and not conn.get_autocommit():
        # Manual transaction management has no commit hook: bump inside the transaction, which makes
        # the new stamp visible exactly when the rows are.
        change_stamp_bump(using=using)
        return
    if changes_pending(using=using):
        return
    transaction.on_commit(_bumper(using), using=using, robust=True)
    if conn.in_atomic_block:
        conn._plenum_pending_in = conn.run_on_commit


def _writes(sql) -> bool:
    """Whether a statement changes data in a watched table (a CTE that writes counts, whatever its table)."""
    if not isinstance(sql, str):
        return False
    match = _WRITE.match(sql)
    if match:
        return match.group(1).lower() not in _ignored_tables()
    return bool(_CTE.match(sql)) and bool(_CTE_WRITE.search(sql))


def _watch(execute, sql, params, many, context):
    result = execute(sql, params, many, context)
    if _writes(sql):
        change_mark(using=context["connection"].alias)
    return result


def watch_install(*, sender=None, connection, **kwargs) -> None:
    """``connection_created`` receiver: put the write watcher on the connection (once)."""
    if _watch not in connection.execute_wrappers:
        connection.execute_wrappers.append(_watch)


def change_stamp_bump(*, using: str = "default") -> None:
    """Move the stamp by one (creating its row with a fresh epoch the first time). Never raises: a stamp
    that could not move leaves cached answers to their time limit, and the write itself has committed."""
    # The table name is the model's own constant, never input.
    sql = (
        f"INSERT INTO {_TABLE} (id, value, epoch) VALUES (1, 1, %s) "  # noqa: S608
        f"ON CONFLICT (id) DO UPDATE SET value = {_TABLE}.value + 1"
    )
    try:
        with connections[using].cursor() as cursor:
            cursor.execute(sql, [secrets.token_hex(8)])
    except DatabaseError as exc:
        if _table_missing(using):
            # Data migrations that run before the stamp's own: ``migrations_applied`` moves it at the end.
            logger.debug("change stamp table not there yet: %s", exc)
        else:
            logger.warning("change stamp not moved (cached answers wait for their time limit): %s", exc)


def _table_missing(using: str) -> bool:
    try:
        return _TABLE not in connections[using].introspection.table_names()
    except DatabaseError:
        return False


def migrations_applied(*, using: str = "default", **kwargs) -> None:
    """``post_migrate`` receiver: a migration may change data, and the server may be running meanwhile."""
    change_stamp_bump(using=using)


_READ = f"SELECT epoch, value FROM {_TABLE} WHERE id = 1"  # noqa: S608 (the model's own table name)


def change_stamp_read(*, using: str = "default") -> tuple[str, int]:
    """The current stamp as (epoch, value); ("", 0) before the first write.

    Read on the driver's connection, not through Django's cursor: this one read is the whole database
    cost of a kept answer, and Django's cursor wrapping and psycopg's per-cursor type set-up were half of
    it. On PostgreSQL the statement is prepared once per connection. Django's error translation and
    query log (``connection.queries``, query-count tests) still see it.
    """
    conn = connections[using]
    conn.ensure_connection()
    t0 = time.monotonic()
    with conn.wrap_database_errors:
        if conn.vendor == "postgresql":
            row = conn.connection.execute(_READ, prepare=True).fetchone()
        else:
            row = conn.connection.execute(_READ).fetchone()
    if conn.queries_logged:
        conn.queries_log.append({"sql": _READ, "time": f"{time.monotonic() - t0:.3f}"})
    return (row[0], row[1]) if row else ("", 0)
