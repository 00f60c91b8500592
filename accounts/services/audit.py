"""The audit trail: one event per change, written in the change's own transaction (or collected for one insert
over a batch of writes)."""

import contextvars
from collections.abc import Iterator, Mapping
from contextlib import contextmanager
from typing import Any

from django.db import transaction

from ..models import Organisation, User


def audit_record(
    *,
    actor: User | None,
    obj: Any,
    action: str,
    changes: Mapping[str, Any] | None = None,
    organisation: Organisation | None = None,
    organisation_id: int | None = None,
) -> None:
    """Append one event to the audit trail. Call it inside the same transaction as the change.

    ``organisation_id`` instead of ``organisation`` when only the id is at hand (no read of the row)."""
    from ..models import AuditEvent

    event = AuditEvent(
        actor=actor if getattr(actor, "is_authenticated", False) else None,
        organisation_id=organisation.pk if organisation is not None else organisation_id,
        object_type=obj._meta.label_lower,
        object_id=str(obj.pk),
        action=action,
        changes=changes or {},
    )
    pending = _audits_pending.get()
    if pending is not None:
        pending.append(event)
        return
    event.save()


_audits_pending: contextvars.ContextVar[list[Any] | None] = contextvars.ContextVar("audits_pending", default=None)


@contextmanager
def audits_deferred() -> Iterator[None]:
    """Collect the audit events written inside the block and insert them in one statement when it ends.

    For a batch of writes in one transaction (the sync endpoint's forms): the outermost block writes them
    (inside that transaction, so they commit with the writes); a block inside another hands its events to
    the outer one only when it ends without an error, so wrap each rolled-back unit (a form's savepoint)
    in its own block, outside the savepoint: ``with audits_deferred(), transaction.atomic():``. Its events
    are then kept exactly when its writes are."""
    from ..models import AuditEvent

    outer = _audits_pending.get()
    if outer is None and not transaction.get_connection().in_atomic_block:
        raise RuntimeError("audits_deferred() belongs inside the transaction of the writes it records")
    mine: list[Any] = []
    token = _audits_pending.set(mine)
    try:
        yield
    finally:
        _audits_pending.reset(token)
    if outer is not None:
        outer.extend(mine)
    elif mine:
        AuditEvent.objects.bulk_create(mine)
