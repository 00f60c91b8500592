"""A person's account: creating one, site grants, API tokens, the password (changed, reset by e-mail, and what a new
one revokes) and the person's own settings."""

from collections.abc import Iterable
from typing import Any, Protocol

from django.conf import settings
from django.contrib.auth.tokens import default_token_generator
from django.core.exceptions import ValidationError
from django.core.mail import send_mail
from django.db import transaction
from django.template.loader import render_to_string
from django.utils.encoding import force_bytes
from django.utils.http import urlsafe_base64_encode
from rest_framework.authtoken.models import Token

from ..changes import organisation_changed, person_changed
from ..inputs import shown
from ..models import Membership, Organisation, SiteGrant, User
from .audit import audit_record


class OrganisationRecord(Protocol):
    """A record of an app above this one that belongs to an organisation (a site, say)."""

    pk: Any
    organisation_id: int


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
    organisation_changed(organisation_id=organisation.pk)  # a board lists its technicians
    return user


def site_grant(*, user: User, site: OrganisationRecord) -> SiteGrant:
    grant, created = SiteGrant.objects.get_or_create(user=user, site_id=site.pk)
    if created:
        organisation_changed(organisation_id=site.organisation_id)
    return grant


def api_token_issue(*, user: User) -> Token:
    """Issue (or return) the user's API token."""
    token, _ = Token.objects.get_or_create(user=user)
    return token


def api_token_revoke(*, user: User) -> None:
    """Revoke the user's API token; the next request with it is refused."""
    Token.objects.filter(user=user).delete()


def user_credentials_revoke(*, user: User) -> None:
    """A new password ends every way in that the old one gave: the API token is deleted and the apps above
    revoke what they keep (``signals.password_changed``: the calendar feed). Sessions end by themselves, as
    Django's session hash follows the password hash."""
    from ..signals import password_changed

    Token.objects.filter(user=user).delete()
    password_changed.send(sender=User, user=user)


def password_saved(sender: type[User], instance: User, created: bool, **kwargs: Any) -> None:
    """post_save of a person: after a saved password change (reset by e-mail, admin, command), revoke."""
    if getattr(instance, "_password_replaced", False):
        instance._password_replaced = False
        if not created:
            user_credentials_revoke(user=instance)


RESET_MAIL_SUBJECT_TEMPLATE = "frontend/password_reset_subject.txt"
RESET_MAIL_BODY_TEMPLATE = "frontend/password_reset_email.txt"


def password_reset_email_send(*, user_id: int) -> bool:
    """E-mail an active person a one-use link to set a new password; False when there is nobody to send to.

    The link is Django's reset token (it stops working once the password changes, or after
    ``PASSWORD_RESET_TIMEOUT``) under ``PLENUM_PUBLIC_URL``, never under the Host a request carried.
    """
    user = User.objects.filter(pk=user_id, is_active=True).first()
    if user is None or not user.email or not user.has_usable_password():
        return False
    context = {
        "user": user,
        "uid": urlsafe_base64_encode(force_bytes(user.pk)),
        "token": default_token_generator.make_token(user),
        "public_url": settings.PLENUM_PUBLIC_URL.rstrip("/"),
    }
    subject = "".join(render_to_string(RESET_MAIL_SUBJECT_TEMPLATE, context).splitlines())
    send_mail(subject, render_to_string(RESET_MAIL_BODY_TEMPLATE, context), None, [user.email])
    return True


def allowed_list(values: Iterable[str]) -> str:
    """The allowed values a refusal names, in their order."""
    return ", ".join(values)


# ---------------------------------------------------------------------------
# A person's own settings
# ---------------------------------------------------------------------------
def unit_system_check(raw: object) -> str:
    allowed = [str(v) for v in User.UnitSystem.values]
    if raw not in allowed:
        raise ValidationError(
            {"unit_system": [f"Units: {shown(raw)} is not a unit system; allowed: {allowed_list(allowed)}"]}
        )
    return raw


@transaction.atomic
def unit_system_set(*, user: User, unit_system: str) -> User:
    """The units the person reads and types in: every page, the phone form and the calculator follow at once."""
    if user.unit_system != unit_system:
        audit_record(
            actor=user, obj=user, action="unit_system_changed", changes={"unit_system": [user.unit_system, unit_system]}
        )
        user.unit_system = unit_system
        user.save(update_fields=["unit_system"])
        person_changed(user_id=user.pk)
    return user


@transaction.atomic
def password_change(*, user: User, new_password: str) -> None:
    """A new password chosen by the person (the old one checked by the caller's form): the API token and the
    calendar feeds of the old one end (``password_saved``)."""
    user.set_password(new_password)
    user.save(update_fields=["password"])
    audit_record(actor=user, obj=user, action="password_changed")
