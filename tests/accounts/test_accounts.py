"""People, roles, grants, API tokens and the audit trail."""

import pytest

from accounts.models import AuditEvent, Role
from accounts.selectors import is_manager_of, primary_role, user_has_role
from accounts.services import api_token_issue, api_token_revoke, audit_record, site_grant, user_create
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import SiteFactory


@pytest.mark.django_db
def test_user_create_gives_membership_and_usable_password():
    """A new person belongs to the organisation in their role and can sign in with the password."""
    org = OrganisationFactory()
    user = user_create(username="new.tech", password="a-long-pass-1", organisation=org, role=Role.TECHNICIAN)
    assert user.check_password("a-long-pass-1")
    assert user_has_role(user=user, roles={Role.TECHNICIAN}, organisation=org)
    assert not is_manager_of(user=user, organisation=org)


@pytest.mark.django_db
def test_primary_role_prefers_the_strongest():
    """Someone who is technician in one organisation and admin in another lands on the admin home."""
    user = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    assert primary_role(user=user) == Role.TECHNICIAN
    user.memberships.create(organisation=OrganisationFactory(), role=Role.ADMIN)
    assert primary_role(user=user) == Role.ADMIN


@pytest.mark.django_db
def test_site_grant_is_idempotent():
    """Granting the same site twice keeps one grant."""
    site = SiteFactory()
    user = make_person(organisation=site.organisation, role=Role.PROPERTY_MANAGER)
    assert site_grant(user=user, site=site) == site_grant(user=user, site=site)
    assert user.site_grants.count() == 1


@pytest.mark.django_db
def test_token_is_stable_until_revoked():
    """Issuing twice returns the same token; after revoking, a new one is different."""
    user = make_person(organisation=OrganisationFactory(), role=Role.SUPERVISOR)
    first = api_token_issue(user=user).key
    assert api_token_issue(user=user).key == first
    api_token_revoke(user=user)
    assert api_token_issue(user=user).key != first


@pytest.mark.django_db
def test_revoked_token_is_refused_by_the_api(api_client):
    """A revoked token gets 401 on the next request; an unknown token too."""
    user = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    key = api_token_issue(user=user).key
    api_client.credentials(HTTP_AUTHORIZATION=f"Token {key}")
    me = api_client.get("/api/accounts/me/")
    assert me.status_code == 200
    assert me.json()["memberships"][0]["role"] == Role.TECHNICIAN
    api_token_revoke(user=user)
    assert api_client.get("/api/accounts/me/").status_code == 401
    api_client.credentials(HTTP_AUTHORIZATION="Token " + "0" * 40)
    assert api_client.get("/api/accounts/me/").status_code == 401


@pytest.mark.django_db
def test_audit_record_names_actor_object_and_change():
    """An audit event keeps who changed what; an anonymous actor is stored as nobody."""
    site = SiteFactory()
    user = make_person(organisation=site.organisation, role=Role.SUPERVISOR)
    audit_record(
        actor=user, obj=site, action="renamed", changes={"name": ["Old", "New"]}, organisation=site.organisation
    )
    event = AuditEvent.objects.get()
    assert (event.actor, event.object_type, event.object_id, event.action) == (
        user, "inventory.site", str(site.pk), "renamed"
    )  # fmt: skip
    assert event.changes == {"name": ["Old", "New"]}


@pytest.mark.django_db
def test_a_password_reset_ends_the_old_token_the_calendar_feed_and_other_sessions():
    """After a reset by e-mail, the old API token gets 401, the old calendar URL 404, and a signed-in browser is out."""
    import re

    from django.core import mail
    from django.core.cache import cache
    from django.test import Client
    from rest_framework.test import APIClient

    from scheduling.services import calendar_feed_issue

    cache.clear()  # the reset rate limit counts in the process's cache
    user = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    key = api_token_issue(user=user).key
    feed_url = f"/calendar/{calendar_feed_issue(user=user).token}.ics"
    other_browser = Client()
    other_browser.force_login(user)
    api = APIClient()
    api.credentials(HTTP_AUTHORIZATION=f"Token {key}")
    assert api.get("/api/accounts/me/").status_code == 200
    assert Client().get(feed_url).status_code == 200
    assert other_browser.get("/api/accounts/me/").status_code == 200

    client = Client()
    client.post("/password/reset/", {"email": user.email})
    link = re.search(r"https?://[^/\s]+(/password/reset/\S+/\S+/)", mail.outbox[0].body).group(1)
    form_url = client.get(link)["Location"]
    done = client.post(form_url, {"new_password1": "Brass-Damper-42", "new_password2": "Brass-Damper-42"})
    assert done.status_code == 302

    assert api.get("/api/accounts/me/").status_code == 401
    assert Client().get(feed_url).status_code == 404
    assert other_browser.get("/api/accounts/me/").status_code in (401, 403)
    assert api_token_issue(user=user).key != key  # a new token may be issued afterwards
    cache.clear()


@pytest.mark.django_db
def test_a_password_change_by_set_password_ends_the_old_token():
    """Any password change that is saved (admin, command, service) revokes the API token; other saves do not."""
    from rest_framework.authtoken.models import Token

    user = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    api_token_issue(user=user)
    user.first_name = "Renamed"
    user.save()
    assert Token.objects.filter(user=user).exists()
    user.set_password("Brass-Damper-42")
    user.save()
    assert not Token.objects.filter(user=user).exists()
