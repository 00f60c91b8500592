"""Sign-in behind a proxy, usernames that do not leak, and password reset by e-mail.

Addresses are from the documentation ranges of RFC 5737 (192.0.2.0/24, 198.51.100.0/24,
203.0.113.0/24); no request leaves the test client.
"""

import re

import pytest
from django.core import mail
from django.core.cache import cache
from django.test import Client, RequestFactory, override_settings

from accounts.client_address import client_address
from accounts.models import Role
from tests.factories import OrganisationFactory, make_person
from tests.factories.scheduling import WorkOrderFactory

PASSWORD = "pass-for-tests-123"
PROXY = "127.0.0.1"
CLIENT_A = "203.0.113.7"
CLIENT_B = "198.51.100.9"


@pytest.fixture(autouse=True)
def _fresh_cache():
    """The reset rate limit counts in the process's cache; each test starts from none."""
    cache.clear()
    yield
    cache.clear()


def _sign_in(*, username: str, password: str, remote: str, forwarded: str | None = None):
    extra = {"REMOTE_ADDR": remote}
    if forwarded is not None:
        extra["HTTP_X_FORWARDED_FOR"] = forwarded
    client = Client(**extra)
    return client, client.post("/login/", {"username": username, "password": password})


def _signed_in(client: Client) -> bool:
    return "_auth_user_id" in client.session


# --- the client's address -----------------------------------------------------------------------


@pytest.mark.parametrize(
    ("trusted", "forwarded", "expected"),
    [
        (0, "192.0.2.1", PROXY),  # no trusted proxy: the header is anybody's to forge
        (1, CLIENT_A, CLIENT_A),  # one proxy appended the address it saw
        (1, f"192.0.2.1, {CLIENT_A}", CLIENT_A),  # what the client put in front is ignored
        (2, f"192.0.2.1, {CLIENT_A}, {CLIENT_B}", CLIENT_A),  # two proxies: the second from the right
        (2, CLIENT_A, PROXY),  # fewer hops than proxies: nothing in the header is vouched for
        (1, "not-an-address", PROXY),
        (1, "", PROXY),
    ],
)
def test_client_address_comes_from_the_trusted_proxies_only(trusted, forwarded, expected):
    """The client is the n-th address from the right of X-Forwarded-For with n trusted proxies, else REMOTE_ADDR."""
    request = RequestFactory().get("/", REMOTE_ADDR=PROXY, HTTP_X_FORWARDED_FOR=forwarded)
    with override_settings(PLENUM_TRUSTED_PROXIES=trusted):
        assert client_address(request) == expected


@pytest.mark.django_db
@override_settings(AXES_ENABLED=True, AXES_FAILURE_LIMIT=5, PLENUM_TRUSTED_PROXIES=1)
def test_behind_a_proxy_wrong_passwords_lock_that_address_only():
    """Behind one TLS proxy, five wrong passwords from address A pause that username for A, not for B."""
    user = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    answers = [
        _sign_in(username=user.username, password="wrong-password", remote=PROXY, forwarded=CLIENT_A)[1].status_code
        for _ in range(5)
    ]
    assert answers == [200, 200, 200, 200, 429]  # the form again with its error, then the pause
    client, response = _sign_in(username=user.username, password=PASSWORD, remote=PROXY, forwarded=CLIENT_A)
    assert response.status_code == 429 and not _signed_in(client)
    assert "Sign-in paused" in response.content.decode()
    # The same client cannot slip past the pause by putting another address in front of its own.
    client, response = _sign_in(
        username=user.username, password=PASSWORD, remote=PROXY, forwarded=f"192.0.2.44, {CLIENT_A}"
    )
    assert response.status_code == 429 and not _signed_in(client)
    # The person, elsewhere, behind the same proxy, signs in.
    client, response = _sign_in(username=user.username, password=PASSWORD, remote=PROXY, forwarded=CLIENT_B)
    assert response.status_code == 302 and _signed_in(client)


@pytest.mark.django_db
@override_settings(AXES_ENABLED=True, AXES_FAILURE_LIMIT=5, PLENUM_TRUSTED_PROXIES=0)
def test_with_no_trusted_proxy_a_forged_forwarded_header_is_ignored():
    """With no trusted proxy, X-Forwarded-For changes nothing: a new forged address per try still gets paused."""
    user = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    for n in range(5):
        _sign_in(username=user.username, password="wrong-password", remote=CLIENT_A, forwarded=f"192.0.2.{n + 1}")
    client, response = _sign_in(username=user.username, password=PASSWORD, remote=CLIENT_A, forwarded="192.0.2.99")
    assert response.status_code == 429 and not _signed_in(client)
    # The pause holds this username from this address only: from another one the person signs in.
    client, response = _sign_in(username=user.username, password=PASSWORD, remote=CLIENT_B, forwarded=CLIENT_A)
    assert response.status_code == 302 and _signed_in(client)


# --- usernames that do not leak -----------------------------------------------------------------


@pytest.mark.django_db
def test_assigning_to_an_unknown_or_a_foreign_username_gets_the_same_answer(api_client):
    """The API answers alike for a username nobody has and for a technician of another organisation."""
    wo = WorkOrderFactory()
    supervisor = make_person(organisation=wo.organisation, role=Role.SUPERVISOR)
    elsewhere = OrganisationFactory()
    foreign = make_person(organisation=elsewhere, role=Role.TECHNICIAN)
    own_manager = make_person(organisation=wo.organisation, role=Role.PROPERTY_MANAGER)
    api_client.force_authenticate(supervisor)
    url = f"/api/scheduling/work-orders/{wo.public_id}/assign/"

    def answer(username: str) -> tuple[int, str]:
        response = api_client.post(url, {"assignee": username, "version": wo.version}, format="json")
        return response.status_code, response.content.decode().replace(username, "<name>")

    unknown = answer("nobody-by-this-name")
    assert unknown[0] == 400
    assert "no technician '<name>' in your organisation you can assign" in unknown[1]
    assert answer(foreign.username) == unknown
    assert answer(own_manager.username) == unknown
    assert (
        elsewhere.name
        not in api_client.post(url, {"assignee": foreign.username, "version": 1}, format="json").content.decode()
    )


@pytest.mark.django_db
def test_the_board_answers_alike_for_an_unknown_and_a_foreign_technician(client):
    """The board's assign form refuses another organisation's technician in the same words as a made-up one."""
    wo = WorkOrderFactory()
    supervisor = make_person(organisation=wo.organisation, role=Role.SUPERVISOR)
    foreign = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    client.force_login(supervisor)

    def answer(value: str) -> str:
        response = client.post(
            f"/board/assign/{wo.public_id}/", {"assignee": value, "version": wo.version}, follow=True
        )
        assert response.status_code == 200
        shown = [str(m) for m in response.context["messages"]]
        return " ".join(shown).replace(value, "<value>")

    made_up = answer("987654321")
    assert "Technician: no technician '<value>' in your organisation you can assign" in made_up
    assert "assignee" not in made_up  # plain words, no field names
    assert answer(str(foreign.pk)) == made_up


# --- password reset by e-mail -------------------------------------------------------------------

LINK = re.compile(r"https?://\S+/password/reset/\S+/\S+/")


def _ask_for_a_link(client: Client, email: str):
    return client.post("/password/reset/", {"email": email})


@pytest.mark.django_db
def test_a_person_who_forgot_the_password_sets_a_new_one_by_e_mail(client):
    """Login page -> 'Forgot your password?' -> e-mail -> link -> new password -> signed in; the old one is gone."""
    user = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    login_page = client.get("/login/").content.decode()
    assert 'href="/password/reset/"' in login_page and "Forgot your password?" in login_page
    form_page = client.get("/password/reset/")
    assert form_page.status_code == 200 and "E-mail address" in form_page.content.decode()

    sent = _ask_for_a_link(client, user.email.upper())  # the address as the person types it
    assert sent.status_code == 302 and sent["Location"] == "/password/reset/sent/"
    assert "Check your e-mail" in client.get(sent["Location"]).content.decode()
    assert len(mail.outbox) == 1 and mail.outbox[0].to == [user.email]
    message = mail.outbox[0]
    assert "set a new password" in message.subject
    link = LINK.search(message.body).group(0)
    assert link.startswith("http://127.0.0.1:8000/")  # PLENUM_PUBLIC_URL, not the request's Host

    opened = client.get(link.removeprefix("http://127.0.0.1:8000"))
    assert opened.status_code == 302  # Django moves the token out of the address before showing the form
    form = client.get(opened["Location"])
    assert form.status_code == 200 and "New password" in form.content.decode()
    weak = client.post(opened["Location"], {"new_password1": "12345678", "new_password2": "12345678"})
    assert weak.status_code == 200 and "entirely numeric" in weak.content.decode()
    done = client.post(opened["Location"], {"new_password1": "Brass-Damper-42", "new_password2": "Brass-Damper-42"})
    assert done.status_code == 302 and done["Location"] == "/password/reset/done/"
    assert "Password set" in client.get(done["Location"]).content.decode()

    again = client.get(link.removeprefix("http://127.0.0.1:8000"), follow=True)
    assert "does not work any more" in again.content.decode()  # a link works once
    old, response = _sign_in(username=user.username, password=PASSWORD, remote=CLIENT_A)
    assert not _signed_in(old)
    new, response = _sign_in(username=user.username, password="Brass-Damper-42", remote=CLIENT_A)
    assert response.status_code == 302 and _signed_in(new)


@pytest.mark.django_db
def test_asking_for_a_link_never_tells_whether_the_address_has_an_account(client):
    """A known and an unknown address get the same answer; only the known one gets an e-mail."""
    user = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    known = _ask_for_a_link(client, user.email)
    unknown = _ask_for_a_link(client, "nobody@example.invalid")
    assert (known.status_code, known["Location"]) == (unknown.status_code, unknown["Location"])
    assert [m.to for m in mail.outbox] == [[user.email]]


@pytest.mark.django_db
def test_a_deactivated_person_gets_no_link(client):
    """Someone whose account was switched off gets no e-mail, and the page answers as for anybody."""
    user = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN, is_active=False)
    response = _ask_for_a_link(client, user.email)
    assert response.status_code == 302 and response["Location"] == "/password/reset/sent/"
    assert mail.outbox == []


@pytest.mark.django_db
@override_settings(PLENUM_PUBLIC_URL="https://plenum.example.invalid/")
def test_the_link_points_at_the_public_address():
    """The e-mailed link is built from PLENUM_PUBLIC_URL, so a forged Host header cannot redirect it."""
    user = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    Client().post("/password/reset/", {"email": user.email}, HTTP_HOST="localhost")
    assert LINK.search(mail.outbox[0].body).group(0).startswith("https://plenum.example.invalid/password/reset/")


@pytest.mark.django_db
@override_settings(PLENUM_PASSWORD_RESETS_PER_HOUR=2)
def test_password_e_mails_are_rate_limited_per_client_and_per_address():
    """Past the hourly limit a client is asked to wait (429); one address gets no more e-mails, whoever asks."""
    user = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    other = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    here = Client(REMOTE_ADDR=CLIENT_A)
    assert _ask_for_a_link(here, user.email).status_code == 302
    assert _ask_for_a_link(here, other.email).status_code == 302
    refused = _ask_for_a_link(here, other.email)
    assert refused.status_code == 429 and "Wait a while" in refused.content.decode()
    assert len(mail.outbox) == 2
    # From elsewhere: the same calm answer, but the address that had its share gets nothing more.
    assert _ask_for_a_link(Client(REMOTE_ADDR=CLIENT_B), user.email).status_code == 302
    assert _ask_for_a_link(Client(REMOTE_ADDR="192.0.2.5"), user.email).status_code == 302
    assert [m.to for m in mail.outbox].count([user.email]) == 2


@pytest.mark.django_db
@override_settings(AXES_ENABLED=True, AXES_FAILURE_LIMIT=3)
def test_a_new_password_lifts_the_sign_in_pause(client):
    """A person paused after wrong passwords who sets a new one by e-mail can sign in at once."""
    user = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    for _ in range(3):
        _sign_in(username=user.username, password="wrong-password", remote=CLIENT_A)
    paused = _sign_in(username=user.username, password=PASSWORD, remote=CLIENT_A)[1]
    assert paused.status_code == 429 and "set a new password by e-mail" in paused.content.decode()
    _ask_for_a_link(client, user.email)
    path = LINK.search(mail.outbox[0].body).group(0).removeprefix("http://127.0.0.1:8000")
    form_url = client.get(path)["Location"]
    client.post(form_url, {"new_password1": "Brass-Damper-42", "new_password2": "Brass-Damper-42"})
    again, response = _sign_in(username=user.username, password="Brass-Damper-42", remote=CLIENT_A)
    assert response.status_code == 302 and _signed_in(again)
