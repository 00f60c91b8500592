"""People (the admin's page: invite, roles, capacity, skills, site grants, deactivation) and everyone's profile
(units, calendar address, password).

Writes go through ``accounts.services``; the person named in an address comes through
``accounts.selectors.person_for`` (403 for anybody who administers nothing, 404 for someone of another
organisation). A refused form is shown again with a message at each field and nothing saved (400).
"""

from __future__ import annotations

from django.conf import settings
from django.contrib import messages
from django.contrib.auth import update_session_auth_hash
from django.contrib.auth.decorators import login_required
from django.contrib.auth.forms import PasswordChangeForm
from django.core.exceptions import PermissionDenied, ValidationError
from django.shortcuts import redirect, render
from django.urls import reverse

from accounts import services as people
from accounts.inputs import FieldErrors, shown
from accounts.models import Role, User
from accounts.selectors import organisation_administered_by, people_of, person_for
from inventory.selectors import sites_managed_by
from scheduling.models import TaskDefinition, WorkOrder
from scheduling.selectors import work_orders_managed_by
from scheduling.services import calendar_feed_issue, calendar_feed_revoke

from ..selectors import calendar_feed_of

ROLE_CHOICES = [(str(v), str(label)) for v, label in Role.choices]
# The skills tasks name (scheduling's task library): the one list a person's skills are picked from.
SKILLS = {str(v): str(label) for v, label in TaskDefinition.Skill.choices}
INVITE_FIELDS = ("name", "email", "role", "capacity", "skills")


def _unknown_action(action, allowed: str) -> ValidationError:
    """A posted button this page does not have, refused naming it and the page's own buttons."""
    return ValidationError(
        {"action": [f"Action: {shown(action)} is not one of this page's buttons; allowed: {allowed}"]}
    )


def _organisation(request):
    organisation = organisation_administered_by(user=request.user)
    if organisation is None:
        raise PermissionDenied("Only an administrator may manage people.")
    return organisation


def _raw(request, names) -> dict:
    return {n: (request.POST.getlist(n) if n in ("skills", "sites") else request.POST.get(n)) for n in names}


def _errors(exc: ValidationError) -> dict[str, list[str]]:
    """Messages by field; those of no one field under "page" (templates cannot read "__all__")."""
    found = dict(exc.message_dict) if hasattr(exc, "error_dict") else {"page": exc.messages}
    if "__all__" in found:
        found["page"] = found.pop("__all__")
    return found


def _person_row(membership) -> dict:
    user = membership.user
    return {
        "user": user,
        "role": membership.get_role_display(),
        "role_code": membership.role,
        "capacity": user.daily_capacity_hours,
        "skills": [SKILLS.get(s, s) for s in user.skills or []],
        "invited": not user.has_usable_password(),
        "sites": sorted(g.site.name for g in user.site_grants.all()),
    }


@login_required
def people_list(request):
    """The organisation's people and the invitation form; POST invites."""
    organisation = _organisation(request)
    typed = {"role": Role.TECHNICIAN, "capacity": "7.5", "skills": []}
    errors: dict[str, list[str]] = {}
    status = 200
    if request.method == "POST":
        typed = _raw(request, INVITE_FIELDS)
        try:
            data = people.person_input_check(typed, skills_allowed=SKILLS, organisation=organisation)
            person = people.person_invite(by=request.user, organisation=organisation, data=data)
        except ValidationError as exc:
            errors, status = _errors(exc), 400
        else:
            messages.success(
                request, f"{person} is invited: an e-mail with a link to set a password went to {person.email}."
            )
            return redirect("frontend:people")
    rows = [_person_row(m) for m in people_of(organisation=organisation)]
    context = {
        "organisation": organisation,
        "rows": rows,
        "typed": typed,
        "errors": errors,
        "roles": ROLE_CHOICES,
        "skills": SKILLS,
        "capacity_max": people.CAPACITY_MAX_HOURS,
    }
    return render(request, "frontend/people/list.html", context, status=status)


def _sites_check(raw: list, *, organisation, choices) -> list:
    by_pk = {str(s.pk): s for s in choices}
    errors = FieldErrors()
    picked = []
    for value in raw:
        if value in by_pk:
            picked.append(by_pk[value])
        else:
            errors.add(
                "sites",
                f"Sites: {shown(value)} is not a site of {organisation}; allowed: "
                + (", ".join(f"{s.pk} ({s.name})" for s in choices) or "none (the organisation has no sites yet)"),
            )
    errors.raise_if_any()
    return picked


@login_required
def person_edit(request, pk: int):
    """One person: role, capacity and skills; a property manager's sites; deactivate or reactivate."""
    membership = person_for(user=request.user, pk=pk)
    organisation, person = membership.organisation, membership.user
    site_choices = list(sites_managed_by(user=request.user).filter(organisation=organisation).order_by("name"))
    typed = {
        "role": membership.role,
        "capacity": str(person.daily_capacity_hours),
        "skills": list(person.skills or []),
        "sites": [str(g.site_id) for g in person.site_grants.all()],
    }
    errors: dict[str, list[str]] = {}
    status = 200
    if request.method == "POST":
        action = request.POST.get("action")
        try:
            if action == "save":
                typed.update(_raw(request, ("role",)))
                # Daily capacity and skills are a technician's: another role's form has none, and any sent are
                # left aside (the stored values stay for a person who becomes a technician again).
                if typed["role"] == Role.TECHNICIAN and "capacity" in request.POST:
                    typed.update(_raw(request, ("capacity", "skills")))
                data = people.person_input_check(typed, skills_allowed=SKILLS, organisation=organisation, person=person)
                people.person_update(
                    by=request.user,
                    organisation=organisation,
                    person=person,
                    data=data,
                    seen=request.POST.get("seen") or "missing",  # a form without it was not read from this page
                )
                done = f"{person}: role, daily capacity and skills saved."
            elif action == "sites":
                typed["sites"] = request.POST.getlist("sites")
                if membership.role != Role.PROPERTY_MANAGER:
                    raise ValidationError(  # no sites field on this person's page: said at the top
                        f"Sites: {person} is a {membership.get_role_display().lower()}; allowed: site grants for a "
                        "property manager (the others see sites by their role and work)"
                    )
                sites = _sites_check(typed["sites"], organisation=organisation, choices=site_choices)
                people.site_grants_set(by=request.user, organisation=organisation, person=person, sites=sites)
                done = f"{person} now sees: {', '.join(s.name for s in sites) or 'no site'}."
            elif action == "deactivate":
                if request.POST.get("confirm") != "1":
                    raise ValidationError(
                        {
                            "confirm": [
                                f"Deactivate: the box is not ticked; allowed: tick it to confirm that {person}'s "
                                "sign-in, API token and calendar feed stop now"
                            ]
                        }
                    )
                people.person_deactivate(by=request.user, organisation=organisation, person=person)
                done = f"{person} is deactivated: no sign-in, API token or calendar address works for them."
            elif action == "reactivate":
                people.person_reactivate(by=request.user, organisation=organisation, person=person)
                if person.has_usable_password():
                    done = f"{person} is active again and may sign in with their password."
                else:
                    done = (
                        f"{person} is active again but never set a password: send the invitation again below so "
                        "they get a new link to set one."
                    )
            elif action == "invite_again" and not person.has_usable_password():
                people.invitation_resend(by=request.user, organisation=organisation, person=person)
                done = f"A new link to set a password went to {person.email}."
            else:
                raise _unknown_action(action, "save, sites, deactivate, reactivate, invite_again")
        except ValidationError as exc:
            errors, status = _errors(exc), 400
        except people.LastAdministrator as exc:
            errors, status = {"page": [str(exc)]}, 400
        except people.PersonChanged as exc:
            errors, status = {"page": [str(exc)]}, 409
            membership = person_for(user=request.user, pk=pk)
            typed.update(
                role=membership.role,
                capacity=str(membership.user.daily_capacity_hours),
                skills=list(membership.user.skills or []),
            )
        except PermissionDenied as exc:
            errors, status = {"page": [str(exc)]}, 400
        else:
            messages.success(request, done)
            return redirect("frontend:person_edit", pk=person.pk)
        person.refresh_from_db()
    open_work = (
        work_orders_managed_by(user=request.user)
        .filter(organisation=organisation, assignee=person, state__in=WorkOrder.OPEN_STATES)
        .count()
    )
    context = {
        "organisation": organisation,
        "open_work": open_work,
        "seen": people.person_state(membership=membership),
        "member": person,
        "membership": membership,
        "row": _person_row(membership),
        "typed": typed,
        "errors": errors,
        "roles": ROLE_CHOICES,
        "skills": SKILLS,
        "site_choices": site_choices,
        "is_self": person.pk == request.user.pk,
        "capacity_max": people.CAPACITY_MAX_HOURS,
    }
    return render(request, "frontend/people/person.html", context, status=status)


def _feed_url(feed) -> str | None:
    if feed is None:
        return None
    return settings.PLENUM_PUBLIC_URL.rstrip("/") + reverse("scheduling:calendar", kwargs={"token": feed.token})


@login_required
def profile(request):
    """The person's own settings: units, calendar address (make, copy, revoke) and password."""
    user: User = request.user
    errors: dict[str, list[str]] = {}
    status = 200
    password_form = PasswordChangeForm(user)
    if request.method == "POST":
        action = request.POST.get("action")
        try:
            if action == "units":
                system = people.unit_system_check(request.POST.get("unit_system"))
                people.unit_system_set(user=user, unit_system=system)
                done = f"Units: {User.UnitSystem(system).label}. Pages, forms and the calculator now use them."
            elif action == "calendar_new":
                calendar_feed_issue(user=user)
                done = "A new calendar address is ready; any older one no longer works."
            elif action == "calendar_revoke":
                feed = calendar_feed_of(user=user)
                if feed is not None:
                    calendar_feed_revoke(feed=feed, by=user)
                done = "The calendar address is revoked: calendars that read it get nothing more."
            elif action == "password":
                password_form = PasswordChangeForm(user, request.POST)
                if not password_form.is_valid():
                    raise ValidationError({"password": ["Password: not changed; see the messages below."]})
                people.password_change(user=user, new_password=password_form.cleaned_data["new_password1"])
                update_session_auth_hash(request, user)
                done = "Password changed. Your API token and calendar address of the old one no longer work."
            else:
                raise _unknown_action(action, "units, calendar_new, calendar_revoke, password")
        except ValidationError as exc:
            errors, status = _errors(exc), 400
        else:
            messages.success(request, done)
            return redirect("frontend:profile")
        user.refresh_from_db()
    feed = calendar_feed_of(user=user)
    context = {
        "me": user,
        "systems": User.UnitSystem.choices,
        "typed_system": request.POST.get("unit_system") if "unit_system" in errors else user.unit_system,
        "feed_url": _feed_url(feed),
        "feed": feed,
        "password_form": password_form,
        "errors": errors,
    }
    return render(request, "frontend/people/profile.html", context, status=status)
