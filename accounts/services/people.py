"""People of an organisation: invitation, role, capacity, skills, site grants, deactivation and reactivation,
each checked first (``person_input_check``) and never leaving the organisation without an active administrator."""

import hashlib
from collections.abc import Mapping
from dataclasses import dataclass
from decimal import ROUND_HALF_UP, Decimal
from typing import Any

from django.conf import settings
from django.core.exceptions import PermissionDenied, ValidationError
from django.core.mail import send_mail
from django.core.validators import validate_email
from django.db import IntegrityError, transaction
from django.db.models import Q
from django.template.loader import render_to_string
from django.utils.encoding import force_bytes
from django.utils.http import urlsafe_base64_encode

from ..changes import organisation_changed, person_changed
from ..inputs import FieldErrors, check_number, check_text, shown
from ..models import Membership, Organisation, Role, SiteGrant, User
from ..tokens import invitation_timeout, invitation_token_generator
from .audit import audit_record
from .users import OrganisationRecord, allowed_list, user_credentials_revoke

# A working day never exceeds the day itself; 0 h is a person who plans and signs but takes no field work.
CAPACITY_MIN_HOURS = 0.0
CAPACITY_MAX_HOURS = 24.0
NAME_MAX = 150  # Django's first_name and last_name columns
EMAIL_MAX = 150  # the address is also the sign-in name (username, 150 characters)
INVITE_SUBJECT_TEMPLATE = "frontend/people/invitation_subject.txt"
INVITE_BODY_TEMPLATE = "frontend/people/invitation_email.txt"


class LastAdministrator(Exception):
    """The change would leave the organisation without an active administrator."""


@dataclass(frozen=True)
class PersonInput:
    """Clean values of the invitation and edit forms (``person_input_check``)."""

    first_name: str
    last_name: str
    email: str
    role: str
    capacity_hours: Decimal
    skills: list[str]


def person_input_check(
    raw: Mapping[str, Any], *, skills_allowed: dict[str, str], organisation: Organisation, person: User | None = None
) -> PersonInput:
    """Check, then do: the raw form values of a person (``name``, ``email``, ``role``, ``capacity``, ``skills``)
    as clean values, or ``ValidationError`` with one message per field naming the value and what is allowed.

    ``person`` is the one being edited (name and e-mail are then not asked for); ``skills_allowed`` maps the skill
    codes tasks may name to their labels (the task library's list, passed in by the caller above accounts)."""
    errors = FieldErrors()
    first = last = email = ""
    if person is None:
        name = check_text(raw.get("name"), key="name", label="Name", max_length=NAME_MAX, errors=errors, required=True)
        if name:
            first, _, last = " ".join(name.split()).partition(" ")
        email = _email_check(raw.get("email"), errors=errors)
    else:
        first, last, email = person.first_name, person.last_name, person.email
    role = raw.get("role")
    roles = [str(r) for r in Role.values]
    if role not in roles:
        errors.add("role", f"Role: {shown(role)} is not a role; allowed: {allowed_list(roles)}")
    capacity = check_number(
        raw.get("capacity"),
        key="capacity",
        label="Daily capacity",
        minimum=CAPACITY_MIN_HOURS,
        maximum=CAPACITY_MAX_HOURS,
        unit="h",
        errors=errors,
        required=True,
    )
    skills = raw.get("skills") or []
    if isinstance(skills, str):
        skills = [skills]
    unknown = [s for s in skills if s not in skills_allowed]
    for code in unknown:
        errors.add("skills", f"Skills: {shown(code)} is not a skill; allowed: {allowed_list(skills_allowed)}")
    errors.raise_if_any()
    return PersonInput(
        first_name=first,
        last_name=last,
        email=email,
        role=str(role),
        capacity_hours=Decimal(str(capacity)).quantize(Decimal("0.1"), rounding=ROUND_HALF_UP),
        skills=sorted(set(skills)),
    )


def _email_check(raw: object, *, errors: FieldErrors) -> str:
    allowed = "an address such as name@example.com that nobody here uses yet"
    text = check_text(raw, key="email", label="E-mail", max_length=EMAIL_MAX, errors=errors, required=True)
    if not text:
        return ""
    try:
        validate_email(text)
    except ValidationError:
        errors.add("email", f"E-mail: {shown(text)} is not an e-mail address; allowed: {allowed}")
        return ""
    try:
        User.username_validator(text)
    except ValidationError:
        errors.add(
            "email",
            f"E-mail: {shown(text)} cannot be a sign-in name; allowed: letters, digits and @ . + - _ only",
        )
        return ""
    if User.objects.filter(Q(email__iexact=text) | Q(username__iexact=text)).exists():
        errors.add("email", f"E-mail: {shown(text)} is already used by another person; allowed: {allowed}")
        return ""
    return text


def _admins_left(*, organisation: Organisation, without: User) -> bool:
    """Whether an active administrator other than ``without`` remains (their rows locked until commit)."""
    admins = Membership.objects.select_for_update().filter(
        organisation=organisation, role=Role.ADMIN, user__is_active=True
    )
    return any(m.user_id != without.pk for m in admins)


def _keep_an_admin(*, organisation: Organisation, person: User, membership: Membership) -> None:
    if (
        membership.role == Role.ADMIN
        and person.is_active
        and not _admins_left(organisation=organisation, without=person)
    ):
        raise LastAdministrator(
            f"{person} is the only active administrator of {organisation}; the change would leave it "
            "without an active administrator. Make someone else an administrator first."
        )


@transaction.atomic
def person_invite(*, by: User, organisation: Organisation, data: PersonInput) -> User:
    """A new person of the organisation with no password yet; after commit an e-mail with a set-password link.

    The address is also the sign-in name. The link is the password-reset token (``password_reset_email_send``),
    so it works once and for the invitation's days (accounts.tokens); the admin can send a fresh one."""
    user = User(
        username=data.email,
        email=data.email,
        first_name=data.first_name,
        last_name=data.last_name,
        daily_capacity_hours=data.capacity_hours,
        skills=data.skills,
    )
    user.set_unusable_password()
    user.full_clean(exclude=["password", "username"])  # the address was checked as a sign-in name
    try:
        with transaction.atomic():
            user.save()
    except IntegrityError:  # the same address invited a moment ago by another administrator
        raise ValidationError(
            {"email": [f"E-mail: {shown(data.email)} is already used by another person; allowed: another address"]}
        ) from None
    Membership.objects.create(user=user, organisation=organisation, role=data.role)
    audit_record(
        actor=by,
        obj=user,
        action="person_invited",
        organisation=organisation,
        changes={
            "name": user.get_full_name(),
            "email": user.email,
            "role": data.role,
            "daily_capacity_hours": str(data.capacity_hours),
            "skills": data.skills,
        },
    )
    organisation_changed(organisation_id=organisation.pk)
    transaction.on_commit(lambda: _invitation_queue(user_id=user.pk, organisation_id=organisation.pk))
    return user


def _invitation_queue(*, user_id: int, organisation_id: int) -> None:
    from ..tasks import invitation_email_send

    invitation_email_send.delay(user_id=user_id, organisation_id=organisation_id)


@transaction.atomic
def invitation_resend(*, by: User, organisation: Organisation, person: User) -> None:
    """Another set-password e-mail for someone who has not set one yet (the first link expired or got lost)."""
    audit_record(actor=by, obj=person, action="invitation_sent_again", organisation=organisation)
    transaction.on_commit(lambda: _invitation_queue(user_id=person.pk, organisation_id=organisation.pk))


def invitation_email_send(*, user_id: int, organisation_id: int) -> bool:
    """E-mail an invited, active person the link to set their password; False when there is nobody to send to.

    The link is an invitation token (accounts.tokens: it lasts days, where a password reset lasts hours) under
    ``PLENUM_PUBLIC_URL``; the password-reset page sets the password."""
    user = User.objects.filter(pk=user_id, is_active=True).first()
    organisation = Organisation.objects.filter(pk=organisation_id).first()
    if user is None or organisation is None or not user.email or user.has_usable_password():
        return False
    context = {
        "user": user,
        "organisation": organisation,
        "uid": urlsafe_base64_encode(force_bytes(user.pk)),
        "token": invitation_token_generator.make_token(user),
        "public_url": settings.PLENUM_PUBLIC_URL.rstrip("/"),
        "days": max(1, round(invitation_timeout() / 86400)),
    }
    subject = "".join(render_to_string(INVITE_SUBJECT_TEMPLATE, context).splitlines())
    send_mail(subject, render_to_string(INVITE_BODY_TEMPLATE, context), None, [user.email])
    return True


class PersonChanged(Exception):
    """Someone else changed the person since the form was read (``person_state``): nothing was saved."""


def person_state(*, membership: Membership) -> str:
    """What an edit form was read at: role, capacity and skills, as a short digest the form sends back.

    The person's record has no version column; this stands in for one, so of two administrators editing the
    same person at once the second is told instead of silently undoing the first."""
    user = membership.user
    text = f"{membership.role}|{Decimal(str(user.daily_capacity_hours))}|{','.join(sorted(user.skills or []))}"
    return hashlib.sha256(text.encode()).hexdigest()[:16]


@transaction.atomic
def person_update(
    *, by: User, organisation: Organisation, person: User, data: PersonInput, seen: str | None = None
) -> User:
    """Role (in this organisation), daily capacity and skills; refused (``LastAdministrator``) when the last
    active administrator would stop being one, and (``PersonChanged``) when ``seen`` is not the state now."""
    membership = (
        Membership.objects.select_for_update().select_related("user").get(user=person, organisation=organisation)
    )
    person = membership.user
    if seen is not None and seen != person_state(membership=membership):
        raise PersonChanged(
            f"{person} was changed by someone else since this page was opened; nothing was saved. "
            "The form now shows what is stored: make your change again."
        )
    if data.role != Role.ADMIN:
        _keep_an_admin(organisation=organisation, person=person, membership=membership)
    changes: dict[str, list[Any]] = {}
    if membership.role != data.role:
        changes["role"] = [membership.role, data.role]
        membership.role = data.role
        membership.save(update_fields=["role"])
    fields = []
    if Decimal(str(person.daily_capacity_hours)) != data.capacity_hours:
        changes["daily_capacity_hours"] = [str(person.daily_capacity_hours), str(data.capacity_hours)]
        person.daily_capacity_hours = data.capacity_hours
        fields.append("daily_capacity_hours")
    if sorted(person.skills or []) != data.skills:
        changes["skills"] = [person.skills or [], data.skills]
        person.skills = data.skills
        fields.append("skills")
    if fields:
        person.save(update_fields=fields)
    if changes:
        audit_record(actor=by, obj=person, action="person_changed", organisation=organisation, changes=changes)
        person_changed(user_id=person.pk)  # capacity and skills show on every board the person is on
    return person


@transaction.atomic
def site_grants_set(*, by: User, organisation: Organisation, person: User, sites: list[OrganisationRecord]) -> None:
    """The person sees exactly ``sites`` of the organisation (grants to other organisations' sites stay)."""
    wanted = {s.pk for s in sites}
    if any(s.organisation_id != organisation.pk for s in sites):
        raise ValueError("a site of another organisation")  # the caller offers only the organisation's sites
    held = set(SiteGrant.objects.filter(user=person, site__organisation=organisation).values_list("site_id", flat=True))
    added, removed = sorted(wanted - held), sorted(held - wanted)
    if removed:
        SiteGrant.objects.filter(user=person, site_id__in=removed).delete()
    for site_id in added:
        SiteGrant.objects.get_or_create(user=person, site_id=site_id)
    if added or removed:
        audit_record(
            actor=by,
            obj=person,
            action="site_grants_changed",
            organisation=organisation,
            changes={"granted": added, "revoked": removed},
        )
        organisation_changed(organisation_id=organisation.pk)


@transaction.atomic
def person_deactivate(*, by: User, organisation: Organisation, person: User) -> None:
    """The person can no longer sign in; their API token is deleted and their calendar feeds revoked
    (``user_credentials_revoke``); a session they hold ends with its next request (inactive people are not
    authenticated). Refused for someone who also works for another organisation, and for the last admin."""
    membership = Membership.objects.select_for_update().get(user=person, organisation=organisation)
    if Membership.objects.filter(user=person).exclude(organisation=organisation).exists():
        raise PermissionDenied(f"{person} also works for another organisation; only the operators can deactivate them.")
    _keep_an_admin(organisation=organisation, person=person, membership=membership)
    if not person.is_active:
        return
    person.is_active = False
    person.save(update_fields=["is_active"])
    user_credentials_revoke(user=person)
    audit_record(actor=by, obj=person, action="person_deactivated", organisation=organisation)
    person_changed(user_id=person.pk)


@transaction.atomic
def person_reactivate(*, by: User, organisation: Organisation, person: User) -> None:
    """The person may sign in again with their password; tokens and calendar addresses are made anew."""
    if person.is_active:
        return
    person.is_active = True
    person.save(update_fields=["is_active"])
    audit_record(actor=by, obj=person, action="person_reactivated", organisation=organisation)
    person_changed(user_id=person.pk)
