"""Which polled answers are stale: one version number per organisation, moved explicitly by the services.

A polled answer (a technician's today, a supervisor's board; ``accounts.answers``) is kept under the
versions of its person's organisations. A service that changes what such an answer depends on (a work
order, a visit's schedule, an inspection, the registry, a person's capacity, skills or grants, the task
rules, a meter reading) calls ``organisation_changed(organisation_id=...)`` inside its own transaction,
after its writes: one ``UPDATE ... SET answers_version = answers_version + 1`` on that organisation's
row. The new version becomes visible exactly when the writes do (same commit), so a reader that sees it
also sees them; another organisation's answers keep theirs.

The version lives in the database, so every app server sees it; reading a person's versions is one
indexed query (``versions_of`` or, with the token check, ``token_versions``). Writes that skip the
services (a ``QuerySet.update()`` in a shell, psql by hand) are not seen: cached answers also expire
after ``settings.PLENUM_ANSWER_CACHE_SECONDS``.
"""

from __future__ import annotations

import logging
from collections.abc import Iterable, Iterator
from contextlib import contextmanager
from contextvars import ContextVar

from django.db import DatabaseError, transaction
from django.db.models import F

from .models import Membership, Organisation

logger = logging.getLogger(__name__)

Versions = tuple[tuple[int, int], ...]  # ((organisation id, version), ...) by organisation id

# The organisations changed so far inside ``changes_deferred`` (None outside it).
_deferred: ContextVar[set[int] | None] = ContextVar("plenum_changes_deferred", default=None)


def organisation_changed(*, organisation_id: int | None) -> None:
    """Move the organisation's answer version by one: every kept answer of its people is stale once the
    caller's transaction commits. Call it from the service, in the transaction, after the writes.
    Inside ``changes_deferred`` the move is made once, at the end of that block."""
    organisations_changed(organisation_ids=[organisation_id])


def organisations_changed(*, organisation_ids: Iterable[int | None]) -> None:
    """``organisation_changed`` for several organisations at once (one statement)."""
    ids = sorted({i for i in organisation_ids if i is not None})
    if not ids:
        return
    pending = _deferred.get()
    if pending is not None:
        pending.update(ids)
        return
    Organisation.objects.filter(pk__in=ids).update(answers_version=F("answers_version") + 1)


@contextmanager
def changes_deferred() -> Iterator[None]:
    """Collect the organisations the services inside the block change, and move each one's version once when
    the block ends without an error (one statement), instead of once per service call.

    For a batch of writes in one transaction (the sync endpoint's forms): use it inside that transaction
    (``with transaction.atomic(), changes_deferred():``), so the versions still move in the same commit as
    the writes. A block inside another only adds to the outer one. An organisation named by a write that was
    rolled back to a savepoint is still moved: a stale answer is never kept, at worst one is made anew."""
    if _deferred.get() is not None:
        yield
        return
    if not transaction.get_connection().in_atomic_block:
        raise RuntimeError("changes_deferred() belongs inside the transaction of the writes it collects")
    pending: set[int] = set()
    token = _deferred.set(pending)
    try:
        yield
    finally:
        _deferred.reset(token)
    organisations_changed(organisation_ids=pending)


def every_organisation_changed() -> None:
    """Shared data changed (the shipped task library): every organisation's answers are stale."""
    Organisation.objects.update(answers_version=F("answers_version") + 1)


def person_changed(*, user_id: int) -> None:
    """The person's own fields changed (unit system, capacity, skills, active): every organisation they
    belong to answers differently now (a board shows its technicians)."""
    organisations_changed(
        organisation_ids=Membership.objects.filter(user_id=user_id).values_list("organisation_id", flat=True)
    )


def versions_of(*, user_id: int) -> Versions:
    """The versions a person's answers are kept under: one per organisation they belong to."""
    return tuple(
        Membership.objects.filter(user_id=user_id)
        .order_by("organisation_id")
        .values_list("organisation_id", "organisation__answers_version")
    )


def token_versions(*, key: str) -> tuple[int, Versions] | None:
    """(person id, versions) for an API token of an active person with a membership, in one query; None
    for an unknown or revoked token, a deactivated person or nobody's member (the view decides those)."""
    rows = list(
        Membership.objects.filter(user__auth_token__key=key, user__is_active=True)
        .order_by("organisation_id")
        .values_list("user_id", "organisation_id", "organisation__answers_version")
    )
    if not rows:
        return None
    return rows[0][0], tuple((org, version) for _, org, version in rows)


def migrations_applied(*, using: str = "default", **kwargs) -> None:
    """``post_migrate`` receiver: a data migration may change any organisation's data."""
    try:
        with transaction.atomic(using=using):
            Organisation.objects.using(using).update(answers_version=F("answers_version") + 1)
    except DatabaseError as exc:  # migrated back to before the column: nothing is kept against it
        logger.debug("answer versions not moved after migrate: %s", exc)
