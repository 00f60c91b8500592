"""People and profile pages: the admin invites and manages people; everyone sets their own units, calendar and password.

Journeys through the Django test client from the page scenario (tests/frontend/scenario.py) plus an admin,
on a fixed clock (the invitation link is a password-reset token, which expires with time).
"""

from __future__ import annotations

import datetime as dt
import re

import pytest
import time_machine
from django.core import mail
from django.core.cache import cache
from django.test import Client
from rest_framework.authtoken.models import Token

from accounts.models import AuditEvent, Membership, Role, SiteGrant, User
from accounts.services import api_token_issue, person_state
from scheduling.models import CalendarFeed
from scheduling.services import calendar_feed_issue
from tests.factories.accounts import make_person
from tests.frontend import scenario as scenario_module
from tests.security.test_form_fuzz import FORM_VALUES, post_forms

NOW = dt.datetime(2026, 3, 9, 9, 30, tzinfo=dt.UTC)  # a Monday morning; any fixed moment would do
NEW_PASSWORD = "coil-and-damper-2026"


@pytest.fixture(autouse=True)
def _clock_and_cache():
    cache.clear()  # sign-in throttling counts in the process's cache
    with time_machine.travel(NOW, tick=False):
        yield
    cache.clear()


@pytest.fixture
def world(db):
    s = scenario_module.build()
    s.admin = make_person(
        organisation=s.org, role=Role.ADMIN, username="ada", first_name="Ada", last_name="Admin", unit_system="si"
    )
    return s


def row_counts() -> dict:
    """Everything a people or profile form may write: people, roles, grants, the audit trail, tokens, feeds."""
    return {
        "users": list(User.objects.order_by("pk").values()),
        "memberships": list(Membership.objects.order_by("pk").values()),
        "grants": list(SiteGrant.objects.order_by("pk").values("user_id", "site_id")),
        "audit": AuditEvent.objects.count(),
        "tokens": list(Token.objects.values_list("key", flat=True)),
        "feeds": list(CalendarFeed.objects.order_by("pk").values()),
    }


def _seen(person) -> dict:
    """The edit form's hidden state field, as the page fills it in."""
    return {"seen": person_state(membership=Membership.objects.select_related("user").get(user=person))}


def _as(user) -> Client:
    client = Client(raise_request_exception=False)
    client.force_login(user)
    return client


def _invite(client: Client, **fields):
    body = {
        "name": "Rhea Coil",
        "email": "rhea.coil@example.invalid",
        "role": "technician",
        "capacity": "6.5",
        "skills": ["electrical", "controls"],
        **fields,
    }
    return client.post("/people/", body)


def test_the_admin_invites_a_technician_who_sets_a_password_and_signs_in(world, django_capture_on_commit_callbacks):
    """The invitation e-mail carries a working set-password link; the new technician signs in with it."""
    admin = _as(world.admin)
    page = admin.get("/people/")
    assert page.status_code == 200
    text = page.content.decode()
    assert "Tess Field" in text and "Invite someone" in text
    with django_capture_on_commit_callbacks(execute=True):
        res = _invite(admin)
    assert res.status_code == 302, res.content.decode()[:2000]
    person = User.objects.get(email="rhea.coil@example.invalid")
    assert person.get_full_name() == "Rhea Coil"
    assert person.skills == ["controls", "electrical"]
    assert float(person.daily_capacity_hours) == 6.5
    assert Membership.objects.get(user=person).role == Role.TECHNICIAN
    assert not person.has_usable_password()
    assert AuditEvent.objects.filter(object_id=str(person.pk), action="person_invited", actor=world.admin).exists()
    # The list shows the new person with role, capacity and skills.
    listing = admin.get("/people/").content.decode()
    assert "Rhea Coil" in listing and "6.5 h" in listing and "electrical" in listing

    [message] = mail.outbox
    assert message.to == ["rhea.coil@example.invalid"]
    assert "Brightwater Building Services" in message.body
    link = re.search(r"https?://\S+/password/reset/\S+/", message.body).group(0)
    path = "/" + link.split("/", 3)[3]
    newcomer = Client()
    res = newcomer.get(path, follow=True)
    assert res.status_code == 200 and "Set a new password" in res.content.decode()
    form_url = res.redirect_chain[-1][0] if res.redirect_chain else path
    res = newcomer.post(form_url, {"new_password1": NEW_PASSWORD, "new_password2": NEW_PASSWORD})
    assert res.status_code == 302
    signed = Client()
    res = signed.post("/login/", {"username": "rhea.coil@example.invalid", "password": NEW_PASSWORD})
    assert res.status_code == 302 and "_auth_user_id" in signed.session
    assert signed.get("/today/").status_code == 200


def test_the_admin_grants_a_property_manager_a_site_and_she_sees_only_that_site(world):
    """Site grants come from the organisation's sites; the manager then reads that site's records and no other."""
    admin = _as(world.admin)
    manager = world.manager_a
    page = admin.get(f"/people/{manager.pk}/").content.decode()
    assert "Harbour House" in page and "Linden Court" in page
    # Harbour House is taken away and Linden Court given instead.
    res = admin.post(f"/people/{manager.pk}/", {"action": "sites", "sites": [str(world.site_b.pk)]})
    assert res.status_code == 302, res.content.decode()[:2000]
    assert set(SiteGrant.objects.filter(user=manager).values_list("site_id", flat=True)) == {world.site_b.pk}
    assert AuditEvent.objects.filter(object_id=str(manager.pk), action="site_grants_changed").exists()
    her = _as(manager)
    dashboard = her.get("/dashboard/").content.decode()
    assert "Linden Court" in dashboard and "Harbour House" not in dashboard
    assert her.get(f"/dashboard/site/{world.site_b.pk}/").status_code == 200
    assert her.get(f"/dashboard/site/{world.site_a.pk}/").status_code in (403, 404)


def test_a_deactivated_person_cannot_sign_in_nor_use_their_token_or_calendar(world):
    """Deactivation ends the password, the API token and the calendar feed; reactivation lets the password in."""
    tess = world.technician
    token = api_token_issue(user=tess).key
    feed = calendar_feed_issue(user=tess)
    api = Client()
    assert api.get("/api/accounts/me/", HTTP_AUTHORIZATION=f"Token {token}").status_code == 200
    admin = _as(world.admin)
    res = admin.post(f"/people/{tess.pk}/", {"action": "deactivate", "confirm": "1"})
    assert res.status_code == 302
    tess.refresh_from_db()
    assert not tess.is_active
    assert AuditEvent.objects.filter(object_id=str(tess.pk), action="person_deactivated").exists()
    assert api.get("/api/accounts/me/", HTTP_AUTHORIZATION=f"Token {token}").status_code == 401
    assert not Token.objects.filter(user=tess).exists()
    assert Client().get(f"/calendar/{feed.token}.ics").status_code == 404
    res = Client().post("/login/", {"username": "tess", "password": scenario_module.PASSWORD})
    assert res.status_code != 302
    assert "Inactive" in admin.get("/people/").content.decode() or "inactive" in admin.get("/people/").content.decode()
    admin.post(f"/people/{tess.pk}/", {"action": "reactivate"})
    signed = Client()
    res = signed.post("/login/", {"username": "tess", "password": scenario_module.PASSWORD})
    assert res.status_code == 302 and "_auth_user_id" in signed.session
    # The old calendar address stays revoked; she makes a new one on her profile.
    assert Client().get(f"/calendar/{feed.token}.ics").status_code == 404


def test_an_admin_cannot_leave_the_organisation_without_an_admin(world):
    """The last active admin can neither deactivate nor demote themselves; with a second admin they can."""
    admin = _as(world.admin)
    res = admin.post(f"/people/{world.admin.pk}/", {"action": "deactivate", "confirm": "1"})
    assert res.status_code == 400 and "without an active administrator" in res.content.decode()
    res = admin.post(
        f"/people/{world.admin.pk}/",
        {**_seen(world.admin), "action": "save", "role": "supervisor", "capacity": "7.5", "skills": []},
    )
    assert res.status_code == 400 and "without an active administrator" in res.content.decode()
    assert Membership.objects.get(user=world.admin).role == Role.ADMIN and User.objects.get(pk=world.admin.pk).is_active
    admin.post(
        f"/people/{world.supervisor.pk}/",
        {**_seen(world.supervisor), "action": "save", "role": "admin", "capacity": "7.5"},
    )
    assert Membership.objects.get(user=world.supervisor).role == Role.ADMIN
    res = admin.post(
        f"/people/{world.admin.pk}/", {**_seen(world.admin), "action": "save", "role": "supervisor", "capacity": "7.5"}
    )
    assert res.status_code == 302
    assert Membership.objects.get(user=world.admin).role == Role.SUPERVISOR


def test_the_admin_edits_role_capacity_and_skills(world):
    """A technician's capacity and skills are saved; made a supervisor, the ones sent along are left aside."""
    admin = _as(world.admin)
    omar = world.other_technician
    body = {"action": "save", "capacity": "5", "skills": ["mechanical", "electrical"]}
    res = admin.post(f"/people/{omar.pk}/", {**_seen(omar), **body, "role": "technician"})
    assert res.status_code == 302
    omar.refresh_from_db()
    assert float(omar.daily_capacity_hours) == 5.0 and omar.skills == ["electrical", "mechanical"]
    res = admin.post(f"/people/{omar.pk}/", {**_seen(omar), **body, "role": "supervisor", "capacity": "3"})
    assert res.status_code == 302
    omar.refresh_from_db()
    assert Membership.objects.get(user=omar).role == Role.SUPERVISOR
    assert float(omar.daily_capacity_hours) == 5.0
    event = AuditEvent.objects.filter(object_id=str(omar.pk), action="person_changed").order_by("pk").last()
    assert event.changes["role"] == ["technician", "supervisor"]


@pytest.mark.parametrize(
    ("who", "method", "path"),
    [
        ("supervisor", "get", "/people/"),
        ("supervisor", "post", "/people/"),
        ("supervisor", "post", "person"),
        ("technician", "get", "/people/"),
        ("manager_a", "get", "/people/"),
    ],
)
def test_only_the_admin_gets_the_people_page(world, who, method, path):
    """Supervisors, technicians and property managers are refused (403) and nothing is saved."""
    if path == "person":
        path = f"/people/{world.technician.pk}/"
    client = _as(getattr(world, who))
    before = row_counts()
    if method == "get":
        res = client.get(path)
    else:
        res = client.post(path, {"action": "deactivate", "name": "X Y", "email": "x@example.invalid", "role": "admin"})
    assert res.status_code == 403
    assert row_counts() == before
    assert User.objects.get(pk=world.technician.pk).is_active
    # ... and it is not in their menu.
    assert 'href="/people/"' not in client.get("/calc/").content.decode()


def test_the_people_page_is_in_the_admins_menu_and_the_profile_in_everyones(world):
    assert 'href="/people/"' in _as(world.admin).get("/board/").content.decode()
    for person in (world.admin, world.supervisor, world.technician, world.manager_a):
        assert 'href="/profile/"' in _as(person).get("/calc/").content.decode()


def test_a_person_of_another_organisation_is_not_found(world):
    from tests.factories.accounts import OrganisationFactory

    stranger = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN, username="stranger")
    admin = _as(world.admin)
    assert admin.get(f"/people/{stranger.pk}/").status_code == 404
    assert admin.post(f"/people/{stranger.pk}/", {"action": "deactivate"}).status_code == 404
    assert User.objects.get(pk=stranger.pk).is_active


@pytest.mark.parametrize(
    ("field", "value", "expected"),
    [
        ("capacity", "-1", "Daily capacity: -1 h is out of range; allowed: a number from 0 to 24 h"),
        ("capacity", "25", "Daily capacity: 25 h is out of range; allowed: a number from 0 to 24 h"),
        ("capacity", "abc", "Daily capacity: &#x27;abc&#x27; is not a finite number; allowed: a number from 0 to 24 h"),
        ("name", "Rhea\x00Coil", "Name: the text contains control characters (such as NUL)"),
        ("skills", ["electrical", "plumbing"], "Skills: &#x27;plumbing&#x27; is not a skill"),
        ("email", "tess@example.invalid", "E-mail: &#x27;tess@example.invalid&#x27; is already used"),
        ("email", "TESS@example.invalid", "E-mail: &#x27;TESS@example.invalid&#x27; is already used"),
        ("email", "not-an-address", "E-mail: &#x27;not-an-address&#x27; is not an e-mail address"),
        ("role", "boss", "Role: &#x27;boss&#x27; is not a role"),
    ],
)
def test_a_bad_invitation_names_the_field_and_value_and_saves_nothing(world, field, value, expected):
    """Each bad value gets a message at its field naming the value and what is allowed; nobody is created."""
    world.technician.email = "tess@example.invalid"
    world.technician.save(update_fields=["email"])
    admin = _as(world.admin)
    before = row_counts()
    users = User.objects.count()
    res = _invite(admin, **{field: value})
    assert res.status_code == 400
    text = res.content.decode()
    assert expected in text, text[:3000]
    # The message sits at its field (inside the field's block, before the next field's label).
    block = text.split(f'id="{field}-errors"', 1)
    assert len(block) == 2, f"no error block for {field}"
    assert User.objects.count() == users and row_counts() == before
    assert not mail.outbox
    if isinstance(value, str) and "\x00" not in value:
        assert 'value="' + value.replace("'", "&#x27;") + '"' in text or field in ("role", "skills")


@pytest.mark.parametrize(
    ("value", "expected"),
    [
        ("-1", "Daily capacity: -1 h is out of range"),
        ("25", "Daily capacity: 25 h is out of range"),
        ("abc", "Daily capacity: &#x27;abc&#x27; is not a finite number"),
    ],
)
def test_a_bad_capacity_on_the_edit_form_is_refused_and_nothing_changes(world, value, expected):
    admin = _as(world.admin)
    omar = world.other_technician
    res = admin.post(
        f"/people/{omar.pk}/",
        {**_seen(omar), "action": "save", "role": "technician", "capacity": value, "skills": ["electrical"]},
    )
    assert res.status_code == 400 and expected in res.content.decode()
    omar.refresh_from_db()
    assert Membership.objects.get(user=omar).role == Role.TECHNICIAN and omar.skills == []
    assert not AuditEvent.objects.filter(object_id=str(omar.pk)).exists()


def test_an_unknown_site_is_refused_naming_it(world):
    admin = _as(world.admin)
    res = admin.post(f"/people/{world.manager_a.pk}/", {"action": "sites", "sites": [str(world.site_b.pk), "999999"]})
    assert res.status_code == 400 and "Sites: &#x27;999999&#x27; is not a site of" in res.content.decode()
    assert set(SiteGrant.objects.filter(user=world.manager_a).values_list("site_id", flat=True)) == {world.site_a.pk}


def test_a_technician_switches_to_us_units_and_the_pages_follow(world):
    """The profile's unit choice takes effect at once on the checklist form and the calculator."""
    tess = _as(world.technician)
    page = tess.get("/profile/").content.decode()
    assert "SI" in page and "US customary" in page
    assert 'data-unit-system="si"' in tess.get(f"/w/{world.work_a.public_id}/").content.decode()
    res = tess.post("/profile/", {"action": "units", "unit_system": "us"})
    assert res.status_code == 302
    assert User.objects.get(pk=world.technician.pk).unit_system == "us"
    assert AuditEvent.objects.filter(object_id=str(world.technician.pk), action="unit_system_changed").exists()
    checklist = tess.get(f"/w/{world.work_a.public_id}/").content.decode()
    assert 'data-unit-system="us"' in checklist and "in. w.c." in checklist
    calc = tess.get("/calc/").content.decode()
    assert "°F" in calc and "cfm" in calc
    assert 'data-units="us"' in calc
    res = tess.post("/profile/", {"action": "units", "unit_system": "imperial"})
    assert res.status_code == 400 and "Units: &#x27;imperial&#x27; is not a unit system" in res.content.decode()
    assert User.objects.get(pk=world.technician.pk).unit_system == "us"


def test_the_calendar_link_is_made_and_revoked_on_the_profile(world):
    tess = _as(world.technician)
    assert tess.post("/profile/", {"action": "calendar_new"}).status_code == 302
    feed = CalendarFeed.objects.get(user=world.technician, revoked_at__isnull=True)
    page = tess.get("/profile/").content.decode()
    assert f"/calendar/{feed.token}.ics" in page
    assert Client().get(f"/calendar/{feed.token}.ics").status_code == 200
    assert tess.post("/profile/", {"action": "calendar_revoke"}).status_code == 302
    assert Client().get(f"/calendar/{feed.token}.ics").status_code == 404
    assert feed.token not in tess.get("/profile/").content.decode()
    actions = set(AuditEvent.objects.filter(object_type="scheduling.calendarfeed").values_list("action", flat=True))
    assert actions == {"calendar_feed_issued", "calendar_feed_revoked"}


def test_the_password_is_changed_on_the_profile(world):
    tess = _as(world.technician)
    res = tess.post(
        "/profile/",
        {"action": "password", "old_password": "wrong", "new_password1": NEW_PASSWORD, "new_password2": NEW_PASSWORD},
    )
    assert res.status_code == 400
    res = tess.post(
        "/profile/",
        {
            "action": "password",
            "old_password": scenario_module.PASSWORD,
            "new_password1": NEW_PASSWORD,
            "new_password2": NEW_PASSWORD,
        },
    )
    assert res.status_code == 302
    assert tess.get("/profile/").status_code == 200  # still signed in
    assert User.objects.get(pk=world.technician.pk).check_password(NEW_PASSWORD)
    assert AuditEvent.objects.filter(object_id=str(world.technician.pk), action="password_changed").exists()


def test_hostile_values_in_every_people_and_profile_form_never_give_a_500_nor_a_half_save(world):
    """Every field of every post form on the people, person and profile pages, in turn, holds NaN, NUL, control
    characters, 2⁶³, a bracket or 20 000 characters: no 5xx; a refused form leaves every counted table alone."""
    problems = []
    for who, page in (
        (world.admin, "/people/"),
        (world.admin, f"/people/{world.manager_a.pk}/"),
        (world.admin, f"/people/{world.other_technician.pk}/"),
        (world.technician, "/profile/"),
    ):
        client = _as(who)
        forms = post_forms(client.get(page).content.decode())
        assert forms, page
        for action, fields in forms:
            action = action or page
            if action.startswith("/logout"):
                continue
            for name in [n for n in fields if n not in ("csrfmiddlewaretoken", "action")]:
                for value in FORM_VALUES:
                    before = row_counts()
                    res = client.post(action, {**fields, name: value})
                    what = f"POST {action} {name}={value!r:.30}"
                    if res.status_code >= 500:
                        problems.append(f"{what} -> {res.status_code}")
                    elif res.status_code not in (301, 302, 303) and row_counts() != before:
                        problems.append(f"{what} -> {res.status_code} but rows changed")
    assert not problems, "\n".join(problems[:40])


def test_a_deactivated_technician_takes_no_new_work_and_the_admin_is_told_of_open_work(world):
    """The person page names open work still assigned; after deactivation it cannot be given to them again."""
    admin = _as(world.admin)
    tess = world.technician
    assert "1 open work order assigned" in admin.get(f"/people/{tess.pk}/").content.decode()
    admin.post(f"/people/{tess.pk}/", {"action": "deactivate", "confirm": "1"})
    supervisor = _as(world.supervisor)
    wo = world.work_b
    res = supervisor.post(
        f"/api/scheduling/work-orders/{wo.public_id}/assign/",
        {"assignee": tess.username, "version": wo.version},
        content_type="application/json",
    )
    assert res.status_code == 400 and "assignee" in res.json()["errors"]
    wo.refresh_from_db()
    assert wo.assignee == world.other_technician


def test_site_grants_are_for_property_managers_only(world):
    admin = _as(world.admin)
    res = admin.post(f"/people/{world.technician.pk}/", {"action": "sites", "sites": [str(world.site_a.pk)]})
    assert res.status_code == 400 and "allowed: site grants for a property manager" in res.content.decode()
    assert not SiteGrant.objects.filter(user=world.technician).exists()


def test_an_address_that_cannot_be_a_sign_in_name_is_refused(world):
    res = _invite(_as(world.admin), email="o'brien@example.invalid")
    assert res.status_code == 400
    assert "E-mail: &quot;o&#x27;brien@example.invalid&quot; cannot be a sign-in name" in res.content.decode()
    assert not User.objects.filter(email__icontains="brien").exists()


def test_of_two_admins_editing_one_person_the_second_is_told_and_nothing_is_undone(world):
    """Both open Omar's page; the first makes him a supervisor; the second's capacity change, read before that,
    is refused (409) naming what happened, and the page then shows the stored role."""
    first, second = _as(world.admin), _as(make_person(organisation=world.org, role=Role.ADMIN, username="ben"))
    omar = world.other_technician
    seen = _seen(omar)
    assert (
        first.post(
            f"/people/{omar.pk}/", {**seen, "action": "save", "role": "supervisor", "capacity": "7.5"}
        ).status_code
        == 302
    )
    res = second.post(f"/people/{omar.pk}/", {**seen, "action": "save", "role": "technician", "capacity": "4"})
    assert res.status_code == 409 and "changed by someone else" in res.content.decode()
    assert '<option value="supervisor" selected>' in res.content.decode()
    omar.refresh_from_db()
    assert Membership.objects.get(user=omar).role == Role.SUPERVISOR and float(omar.daily_capacity_hours) == 7.5


# ---------------------------------------------------------------------------
# New-user tryout: deactivation is confirmed, an invited person is reactivated truthfully, a property manager's
# page has no capacity or skills, and an invitation lasts a week while a password reset stays short.
# ---------------------------------------------------------------------------
def test_deactivating_asks_for_a_tick_naming_what_stops_and_does_nothing_without_it(world):
    admin = _as(world.admin)
    tess = world.technician
    page = admin.get(f"/people/{tess.pk}/").content.decode()
    assert 'name="confirm"' in page and "sign-in, API token and calendar feed now" in page
    before = row_counts()
    res = admin.post(f"/people/{tess.pk}/", {"action": "deactivate"})
    assert res.status_code == 400
    errors = re.search(r'<div id="confirm-errors".*?</div>', res.content.decode(), re.S).group(0)
    assert "Deactivate: the box is not ticked" in errors and "calendar feed" in errors
    assert row_counts() == before and User.objects.get(pk=tess.pk).is_active
    assert admin.post(f"/people/{tess.pk}/", {"action": "deactivate", "confirm": "1"}).status_code == 302
    assert not User.objects.get(pk=tess.pk).is_active


def test_an_invited_person_is_told_to_get_a_new_invitation_when_reactivated(world, django_capture_on_commit_callbacks):
    admin = _as(world.admin)
    with django_capture_on_commit_callbacks(execute=True):
        _invite(admin, role="supervisor")
    rhea = User.objects.get(email="rhea.coil@example.invalid")
    admin.post(f"/people/{rhea.pk}/", {"action": "deactivate", "confirm": "1"})
    page = admin.get(f"/people/{rhea.pk}/").content.decode()
    assert "never set a password" in page and "send the invitation again" in page
    assert "Reactivating lets their password work again" not in page
    res = admin.post(f"/people/{rhea.pk}/", {"action": "reactivate"}, follow=True)
    assert "never set a password: send the invitation again" in res.content.decode()
    assert "Send the invitation again" in res.content.decode()


def test_a_property_managers_page_has_no_capacity_or_skills_and_ignores_them(world):
    admin = _as(world.admin)
    manager = world.manager_a
    stored = (manager.daily_capacity_hours, list(manager.skills or []))
    page = admin.get(f"/people/{manager.pk}/").content.decode()
    assert 'name="capacity"' not in page and 'name="skills"' not in page
    assert "set for technicians only" in page
    res = admin.post(
        f"/people/{manager.pk}/",
        {**_seen(manager), "action": "save", "role": "property_manager", "capacity": "99", "skills": ["electrical"]},
    )  # fmt: skip
    assert res.status_code == 302, res.content.decode()[:2000]
    manager.refresh_from_db()
    assert (manager.daily_capacity_hours, list(manager.skills or [])) == stored
    tess_page = admin.get(f"/people/{world.technician.pk}/").content.decode()
    assert 'name="capacity"' in tess_page and 'name="skills"' in tess_page


def _link(message) -> str:
    return "/" + re.search(r"https?://\S+/password/reset/\S+/", message.body).group(0).split("/", 3)[3]


def test_an_invitation_link_lasts_seven_days_while_a_password_reset_stays_short(
    world, django_capture_on_commit_callbacks, settings
):
    """Invitation: works on day 6, not on day 8. Password reset: still PASSWORD_RESET_TIMEOUT (3 h); an invitation
    token is not a reset token."""
    settings.PASSWORD_RESET_TIMEOUT = 3 * 3600
    admin = _as(world.admin)
    with django_capture_on_commit_callbacks(execute=True):
        _invite(admin)
    [message] = mail.outbox
    assert "within 7 days" in message.body and "/invitation/" in message.body
    link = _link(message)
    with time_machine.travel(NOW + dt.timedelta(days=6), tick=False):
        res = Client().get(link, follow=True)
        assert 'name="new_password1"' in res.content.decode()
    with time_machine.travel(NOW + dt.timedelta(days=8), tick=False):
        res = Client().get(link, follow=True)
        assert 'name="new_password1"' not in res.content.decode()
    # The same token under the reset address is refused; a reset link still lasts hours, not days.
    reset_path = link.replace("/invitation/", "/")
    assert 'name="new_password1"' not in Client().get(reset_path, follow=True).content.decode()
    from django.contrib.auth.tokens import default_token_generator

    tess = world.technician
    token = default_token_generator.make_token(tess)
    with time_machine.travel(NOW + dt.timedelta(hours=4), tick=False):
        assert not default_token_generator.check_token(tess, token)
