"""Background work of accounts. Each task takes IDs, calls one service and is safe to run twice."""

from __future__ import annotations

from celery import shared_task

from . import services


# Sent by a worker, so the reset page answers as fast for an address with an account as for one without.
@shared_task(
    name="accounts.password_reset_email_send",
    acks_late=True,
    autoretry_for=(OSError,),  # SMTP errors and refused connections
    retry_backoff=30,
    max_retries=5,
)
def password_reset_email_send(user_id: int) -> bool:
    return services.password_reset_email_send(user_id=user_id)


@shared_task(
    name="accounts.invitation_email_send",
    acks_late=True,
    autoretry_for=(OSError,),
    retry_backoff=30,
    max_retries=5,
)
def invitation_email_send(user_id: int, organisation_id: int) -> bool:
    return services.invitation_email_send(user_id=user_id, organisation_id=organisation_id)
