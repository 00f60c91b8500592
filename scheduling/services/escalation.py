"""E-mails to an organisation's supervisors, after commit: overdue work, urgent corrective work."""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable

from django.conf import settings
from django.core.mail import send_mail
from django.db import transaction

from accounts.changes import work_changed
from accounts.models import Membership, Organisation
from accounts.selectors import MANAGING_ROLES

from ..models import WorkOrder


def _supervisor_emails(organisation_id: int) -> list[str]:
    return [
        e
        for e in Membership.objects.filter(organisation_id=organisation_id, role__in=MANAGING_ROLES).values_list(
            "user__email", flat=True
        )
        if e
    ]


def email_supervisors_on_commit(organisation_id: int, subject: str, body: str | Callable[[], str]) -> None:
    """Send once the transaction commits; ``body`` may be a function, then written at that moment (so it tells
    what is true when the e-mail leaves, e.g. work assigned later in the same transaction)."""

    def send() -> None:
        to = _supervisor_emails(organisation_id)
        if to:
            send_mail(subject, body() if callable(body) else body, settings.DEFAULT_FROM_EMAIL, to)

    transaction.on_commit(send)


@transaction.atomic
def overdue_escalation_send(*, organisation: Organisation, today: dt.date, repeat_days: int = 7) -> int:
    """E-mail the supervisors the open work that is overdue; each order at most once every ``repeat_days``."""
    qs = (
        WorkOrder.objects.select_for_update(of=("self",))
        .filter(organisation=organisation, state__in=WorkOrder.OPEN_STATES, overdue_on__lte=today)
        .exclude(escalated_on__gt=today - dt.timedelta(days=repeat_days))
        .select_related("ahu__building__site", "assignee")
        .order_by("due_date", "id")
    )
    orders = list(qs)
    if not orders:
        return 0
    lines = [
        # The due date and how late, as the board and the PDFs say it (WorkOrder.due_words_on, scheduling.lateness).
        f"- {wo.ahu.tag} at {wo.ahu.building.site.name}: {wo.title}, {wo.due_words_on(today)},"
        f" {wo.assignee or 'not assigned'}"
        for wo in orders
    ]
    WorkOrder.objects.filter(pk__in=[wo.pk for wo in orders]).update(escalated_on=today)
    work_changed(organisation_id=organisation.pk, people=[wo.assignee_id for wo in orders])
    email_supervisors_on_commit(
        organisation.pk,
        f"{len(orders)} overdue work order{'' if len(orders) == 1 else 's'}",
        "Overdue maintenance:\n\n" + "\n".join(lines),
    )
    return len(orders)
