"""Writes about people and roles."""

from django.db import transaction
from rest_framework.authtoken.models import Token

from .models import Membership, Organisation, SiteGrant, User


@transaction.atomic
def user_create(
    *,
    username: str,
    password: str,
    organisation: Organisation,
    role: str,
    first_name: str = "",
    last_name: str = "",
    email: str = "",
    unit_system: str = User.UnitSystem.SI,
) -> User:
    user = User(username=username, first_name=first_name, last_name=last_name, email=email, unit_system=unit_system)
    user.set_password(password)
    user.full_clean(exclude=["password"])
    user.save()
    Membership.objects.create(user=user, organisation=organisation, role=role)
    return user


def site_grant(*, user: User, site) -> SiteGrant:
    grant, _ = SiteGrant.objects.get_or_create(user=user, site=site)
    return grant


def api_token_issue(*, user: User) -> Token:
    """Issue (or return) the user's API token."""
    token, _ = Token.objects.get_or_create(user=user)
    return token


def api_token_revoke(*, user: User) -> None:
    """Revoke the user's API token; the next request with it is refused."""
    Token.objects.filter(user=user).delete()


def audit_record(*, actor, obj, action: str, changes: dict | None = None, organisation=None) -> None:
    """Append one event to the audit trail. Call it inside the same transaction as the change."""
    from .models import AuditEvent

    AuditEvent.objects.create(
        actor=actor if getattr(actor, "is_authenticated", False) else None,
        organisation=organisation,
        object_type=obj._meta.label_lower,
        object_id=str(obj.pk),
        action=action,
        changes=changes or {},
    )
