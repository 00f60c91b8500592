"""Which polled answers are stale: version numbers in the database, moved explicitly by the services.

A polled answer (a technician's today, a supervisor's board; ``accounts.answers``) is kept under the versions
it depends on (its :class:`Scope`), read from three columns:

* ``Organisation.answers_version``, what every answer of the organisation's people shows: the registry (sites,
  units, parts), its people (names, capacity, skills, grants), the task rules and library, and generation (which
  writes many work orders at once). Moved by ``organisation_changed``; every scope includes it.
* ``Organisation.work_version``, its work: work orders and their tasks, and what is done on them (inspections,
  findings, faults). Moved by ``work_changed``; a board depends on it (any work order of the organisation).
* ``User.work_version``, the person's own work: the work orders assigned to them. ``work_changed(people=...)``
  moves it for everyone whose own work changed: the assignee of a changed work order before the change and
  after it (a reassignment moves both), and the technician whose form was stored. A technician's today depends
  on it, so another technician's synced form or reassigned visit leaves their kept today alone.

A service calls one of them inside its own transaction, after its writes: one ``UPDATE ... + 1`` per table. The
new version becomes visible exactly when the writes do (same commit), so a reader that sees it also sees them;
another organisation's answers, and another person's today, keep theirs. When a write does not clearly belong
to the finer kinds, it moves the organisation's version: a stale answer is never kept, at worst one is made anew.

The versions live in the database, so every app server sees them; reading a person's versions is one indexed
query (``versions_of`` or, with the token check, ``token_versions``). Writes that skip the services (a
``QuerySet.update()`` in a shell, psql by hand) are not seen: cached answers also expire after
``settings.PLENUM_ANSWER_CACHE_SECONDS``.
"""

from __future__ import annotations

import enum
import logging
from collections.abc import Hashable, Iterable, Iterator
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass, field

from django.db import DatabaseError, transaction
from django.db.models import F

from .models import Membership, Organisation, User

logger = logging.getLogger(__name__)


class Scope(enum.Enum):
    """What a kept answer depends on. Every scope includes the organisations' own versions."""

    ORGANISATIONS = "organisations"  # nothing more (a person's time zone: their organisations' sites)
    OWN_WORK = "own work"  # the person's own work orders (a technician's today)
    ORGANISATION_WORK = "organisation work"  # every work order of the person's organisations (a board)


@dataclass(frozen=True, slots=True)
class Versions:
    """A person's versions, read in one query: each organisation's two, and the person's own."""

    organisations: tuple[tuple[int, int], ...]  # (organisation id, answers_version) by organisation id
    work: tuple[int, ...]  # each organisation's work_version, in the same order
    own_work: int  # the person's work_version

    def key(self, scope: Scope) -> Hashable:
        """The part of the versions an answer of ``scope`` is kept under: it changes exactly when one of them does."""
        if scope is Scope.OWN_WORK:
            return (self.organisations, self.own_work)
        if scope is Scope.ORGANISATION_WORK:
            return (self.organisations, self.work)
        return self.organisations


@dataclass
class _Pending:
    organisations: set[int] = field(default_factory=set)
    work: set[int] = field(default_factory=set)
    people: set[int] = field(default_factory=set)


# What the services inside ``changes_deferred`` changed so far (None outside it).
_deferred: ContextVar[_Pending | None] = ContextVar("plenum_changes_deferred", default=None)


def _ids(values: Iterable[int | None]) -> list[int]:
    return sorted({v for v in values if v is not None})


def organisation_changed(*, organisation_id: int | None) -> None:
    """Move the organisation's version by one: every kept answer of its people is stale once the caller's
    transaction commits. For what every answer shows (registry, people, rules, generation); a change of work
    orders alone is ``work_changed``. Call it from the service, in the transaction, after the writes.
    Inside ``changes_deferred`` the move is made once, at the end of that block."""
    organisations_changed(organisation_ids=[organisation_id])


def organisations_changed(*, organisation_ids: Iterable[int | None]) -> None:
    """``organisation_changed`` for several organisations at once (one statement)."""
    ids = _ids(organisation_ids)
    if not ids:
        return
    pending = _deferred.get()
    if pending is not None:
        pending.organisations.update(ids)
        return
    _moved(_Pending(organisations=set(ids)))


def work_changed(*, organisation_id: int | None, people: Iterable[int | None] = ()) -> None:
    """The organisation's work changed (a work order or its tasks, an inspection, a finding): its boards are
    stale, and so is the today of each person in ``people`` (ids; None is skipped): everyone whose own work
    changed, i.e. the assignee of each changed work order before the change and after it.

    Anything else every answer shows (a unit's name, a task's minutes, a person's capacity) is
    ``organisation_changed``. Call it in the service's transaction, after the writes; inside
    ``changes_deferred`` the moves are made once, at the end of that block."""
    organisations, persons = _ids([organisation_id]), _ids(people)
    pending = _deferred.get()
    if pending is not None:
        pending.work.update(organisations)
        pending.people.update(persons)
        return
    _moved(_Pending(work=set(organisations), people=set(persons)))


def _moved(pending: _Pending) -> None:
    """One UPDATE per kind. The people's rows first, then the organisations': the order every transaction that
    locks both takes (``person_update`` locks the person's row, then moves their organisations), so two of them
    wait for each other instead of deadlocking. An organisation whose own version moves needs no work move
    (every answer's key holds its own version)."""
    if pending.people:
        User.objects.filter(pk__in=sorted(pending.people)).update(work_version=F("work_version") + 1)
    if pending.organisations:
        Organisation.objects.filter(pk__in=sorted(pending.organisations)).update(
            answers_version=F("answers_version") + 1
        )
    work = pending.work - pending.organisations
    if work:
        Organisation.objects.filter(pk__in=sorted(work)).update(work_version=F("work_version") + 1)


@contextmanager
def changes_deferred() -> Iterator[None]:
    """Collect the versions the services inside the block move, and move each once when the block ends without
    an error (one statement per kind), instead of once per service call.

    For a batch of writes in one transaction (the sync endpoint's forms): use it inside that transaction
    (``with transaction.atomic(), changes_deferred():``), so the versions still move in the same commit as
    the writes. A block inside another only adds to the outer one. A version named by a write that was
    rolled back to a savepoint is still moved: a stale answer is never kept, at worst one is made anew."""
    if _deferred.get() is not None:
        yield
        return
    if not transaction.get_connection().in_atomic_block:
        raise RuntimeError("changes_deferred() belongs inside the transaction of the writes it collects")
    pending = _Pending()
    token = _deferred.set(pending)
    try:
        yield
    finally:
        _deferred.reset(token)
    _moved(pending)


def every_organisation_changed() -> None:
    """Shared data changed (the shipped task library): every organisation's answers are stale."""
    Organisation.objects.update(answers_version=F("answers_version") + 1)


def person_changed(*, user_id: int) -> None:
    """The person's own fields changed (unit system, capacity, skills, active): every organisation they
    belong to answers differently now (a board shows its technicians)."""
    organisations_changed(
        organisation_ids=Membership.objects.filter(user_id=user_id).values_list("organisation_id", flat=True)
    )


_COLUMNS = ("organisation_id", "organisation__answers_version", "organisation__work_version", "user__work_version")


def _versions(rows: list[tuple]) -> Versions:
    """Versions from (organisation id, its version, its work version, the person's work version) rows."""
    return Versions(
        organisations=tuple((org, version) for org, version, _, _ in rows),
        work=tuple(work for _, _, work, _ in rows),
        own_work=rows[0][3],
    )


def versions_of(*, user_id: int) -> Versions | None:
    """The versions a person's answers are kept under (one query); None for nobody's member, whose answers are
    not kept."""
    rows = list(Membership.objects.filter(user_id=user_id).order_by("organisation_id").values_list(*_COLUMNS))
    return _versions(rows) if rows else None


def token_versions(*, key: str) -> tuple[int, Versions] | None:
    """(person id, versions) for an API token of an active person with a membership, in one query; None
    for an unknown or revoked token, a deactivated person or nobody's member (the view decides those)."""
    rows = list(
        Membership.objects.filter(user__auth_token__key=key, user__is_active=True)
        .order_by("organisation_id")
        .values_list("user_id", *_COLUMNS)
    )
    if not rows:
        return None
    return rows[0][0], _versions([row[1:] for row in rows])


def migrations_applied(*, using: str = "default", **kwargs) -> None:
    """``post_migrate`` receiver: a data migration may change any organisation's data."""
    try:
        with transaction.atomic(using=using):
            Organisation.objects.using(using).update(answers_version=F("answers_version") + 1)
    except DatabaseError as exc:  # migrated back to before the column: nothing is kept against it
        logger.debug("answer versions not moved after migrate: %s", exc)
