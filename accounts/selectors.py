"""Reads about people and roles."""

from django.core.exceptions import PermissionDenied
from django.db.models import QuerySet
from django.http import Http404

from .models import Membership, Organisation, Role, User


def memberships_of(*, user: User) -> QuerySet[Membership]:
    if not user.is_authenticated:
        return Membership.objects.none()
    return Membership.objects.filter(user=user).select_related("organisation")


def organisations_where(*, user: User, roles: set[str]) -> QuerySet[Organisation]:
    """Organisations in which ``user`` holds one of ``roles``."""
    if not user.is_authenticated:
        return Organisation.objects.none()
    return Organisation.objects.filter(memberships__user=user, memberships__role__in=roles).distinct()


def user_has_role(*, user: User, roles: set[str], organisation: Organisation | None = None) -> bool:
    qs = memberships_of(user=user).filter(role__in=roles)
    if organisation is not None:
        qs = qs.filter(organisation=organisation)
    return qs.exists()


# The people who run an organisation's registry, rules and work: plan, assign, approve, verify.
MANAGING_ROLES = frozenset({Role.SUPERVISOR, Role.ADMIN})


def is_manager_of(*, user: User, organisation: Organisation) -> bool:
    """Supervisors and admins run the organisation's registry and work."""
    return user_has_role(user=user, roles=MANAGING_ROLES, organisation=organisation)


# The people who work on the plant and record what they find: forms, photos, run-hour readings.
# Property managers only read.
FIELD_ROLES = frozenset({Role.TECHNICIAN, Role.SUPERVISOR, Role.ADMIN})


def does_field_work(*, user: User, organisation_id: int) -> bool:
    """Whether the person records field work (forms, photos, meter readings) for the organisation."""
    if not getattr(user, "is_authenticated", False):
        return False
    return Membership.objects.filter(user=user, organisation_id=organisation_id, role__in=FIELD_ROLES).exists()


def technician_of(*, organisation_id: int, username: str) -> User | None:
    """The active technician of the organisation with this username; None for a username nobody has and for a
    person of another organisation alike, so the answer never tells which usernames exist elsewhere."""
    return User.objects.filter(
        username=username,
        is_active=True,  # a deactivated technician takes no new work
        memberships__organisation_id=organisation_id,
        memberships__role=Role.TECHNICIAN,
    ).first()


def technicians_of(*, organisation) -> list[User]:
    """The organisation's active technicians by username: whom work can be assigned to and whose day is
    planned (a deactivated person takes no new work)."""
    return list(
        User.objects.filter(
            is_active=True, memberships__organisation=organisation, memberships__role=Role.TECHNICIAN
        ).order_by("username")
    )


def primary_role(*, user: User) -> str | None:
    """The strongest role a person holds, used to pick their home page."""
    order = [Role.ADMIN, Role.SUPERVISOR, Role.TECHNICIAN, Role.PROPERTY_MANAGER]
    held = set(memberships_of(user=user).values_list("role", flat=True))
    for role in order:
        if role in held:
            return role
    return None


def organisation_administered_by(*, user: User) -> Organisation | None:
    """The organisation whose people the person manages (the first where they are an administrator), or None."""
    return organisations_where(user=user, roles={Role.ADMIN}).order_by("pk").first()


def people_of(*, organisation: Organisation) -> QuerySet[Membership]:
    """The organisation's people, one membership each (with the person and their site grants), active first."""
    return (
        Membership.objects.filter(organisation=organisation)
        .select_related("user")
        .prefetch_related("user__site_grants__site")
        .order_by("-user__is_active", "user__first_name", "user__last_name", "user__username")
    )


def person_for(*, user: User, pk: int) -> Membership:
    """One person of the organisation ``user`` administers, as their membership there.

    ``PermissionDenied`` for someone who administers no organisation; ``Http404`` for anybody not of it, so the
    answer never tells which people other organisations have."""
    organisation = organisation_administered_by(user=user)
    if organisation is None:
        raise PermissionDenied("Only an administrator may manage people.")
    membership = people_of(organisation=organisation).filter(user_id=pk).first()
    if membership is None:
        raise Http404("no such person")
    return membership
