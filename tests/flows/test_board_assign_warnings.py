"""The board warns before it saves an assignment the supervisor should read twice, as the New work page does
(``assignment_check``): a technician without a skill the work needs, a day past their capacity, or a day after the
work's due date. Nothing is saved until "Assign anyway"; the API answers 409 with the same warnings until the
request confirms. A refused day goes back to its row with the technician and the day as typed, said once, there.

The clock is Wednesday 5 March 2025 (board_world). Urgent corrective work, "Freeze protection failed", is due
Thursday 6 March and needs the electrical skill; Omar Vent does mechanical and controls work only.
"""

import datetime as dt
import re

import pytest
import time_machine
from django.contrib.messages import get_messages
from django.urls import reverse

from accounts.models import AuditEvent
from scheduling.models import WorkOrder

from . import board_world

pytestmark = pytest.mark.django_db


@pytest.fixture
def clock():
    with time_machine.travel(board_world.NOW, tick=False):
        yield


@pytest.fixture
def world(clock):
    return board_world.build()


def _work(world, *, priority: str, due: dt.date, title: str) -> WorkOrder:
    task = board_world._task(world.org, f"check_{priority}", 45, "electrical")
    wo = board_world._work(world.orchard_unit, task, title=title, due=due)
    WorkOrder.objects.filter(pk=wo.pk).update(
        kind=WorkOrder.Kind.CORRECTIVE, priority=priority, approval=WorkOrder.Approval.APPROVED
    )
    wo.refresh_from_db()
    return wo


@pytest.fixture
def freeze(world):
    return _work(world, priority=WorkOrder.Priority.URGENT, due=dt.date(2025, 3, 6), title="Freeze protection failed")


def _row_form(world, wo, **fields):
    return {"assignee": world.omar.pk, "version": wo.version, "scheduled_for": "2025-03-07", "week": "", **fields}


def test_a_missing_skill_and_a_day_after_the_due_date_are_warned_before_saving(client, world, freeze):
    client.force_login(world.supervisor)
    url = reverse("frontend:assign", kwargs={"public_id": freeze.public_id})
    warned = client.post(url, _row_form(world, freeze))
    assert warned.status_code == 200, "the warnings are a page of their own, not a redirect after saving"
    said = [" ".join(w.split()) for w in warned.context["warnings"]]
    assert said == [
        "Omar Vent lacks the skill this work needs: electrical.",
        "Urgent work due 6 Mar would be planned for Fri 7 Mar, after its due date: urgent work is meant to be "
        "done by then.",
    ]
    html = warned.content.decode()
    assert all(text.split(":")[0] in html for text in said)
    assert "Assign to Omar Vent anyway" in html and 'name="confirm_warnings" value="1"' in html
    freeze.refresh_from_db()
    assert (freeze.assignee, freeze.scheduled_for, freeze.version) == (None, None, 1), "nothing saved yet"
    assert not AuditEvent.objects.filter(action="assign").exists()

    done = client.post(url, _row_form(world, freeze, confirm_warnings="1"))
    assert done.status_code == 302
    freeze.refresh_from_db()
    assert (freeze.assignee, freeze.scheduled_for) == (world.omar, dt.date(2025, 3, 7))
    words = " ".join(str(m) for m in get_messages(done.wsgi_request))
    assert "assigned to Omar Vent" in words and "without the skill electrical" in words


def test_non_urgent_work_planned_after_its_due_date_warns_that_it_will_show_overdue(client, world):
    """Normal work due Thursday 6 March, overdue from 14 March (board_world), planned for 17 March with Tess."""
    wo = _work(world, priority=WorkOrder.Priority.NORMAL, due=dt.date(2025, 3, 6), title="Heater contactor")
    client.force_login(world.supervisor)
    url = reverse("frontend:assign", kwargs={"public_id": wo.public_id})
    warned = client.post(url, _row_form(world, wo, assignee=world.tess.pk, scheduled_for="17.03.2025"))
    assert warned.status_code == 200
    assert warned.context["warnings"] == [
        "Normal work due 6 Mar would be planned for Mon 17 Mar, after its due date; it will show overdue from 14 Mar."
    ]
    wo.refresh_from_db()
    assert wo.assignee is None
    # Planned on its due date with a technician who has the skill: saved at once.
    ok = client.post(url, _row_form(world, wo, assignee=world.tess.pk, scheduled_for="2025-03-06"))
    assert ok.status_code == 302
    wo.refresh_from_db()
    assert (wo.assignee, wo.scheduled_for) == (world.tess, dt.date(2025, 3, 6))


def test_the_api_answers_409_with_the_warnings_until_the_request_confirms(api_client, world, freeze):
    api_client.force_authenticate(world.supervisor)
    url = f"/api/scheduling/work-orders/{freeze.public_id}/assign/"
    body = {"assignee": "omar", "version": 1, "scheduled_for": "2025-03-07"}
    r = api_client.post(url, body, format="json")
    assert r.status_code == 409, r.content
    data = r.json()
    assert [w["code"] for w in data["warnings"]] == ["missing_skill", "after_due_date"]
    assert "Omar Vent lacks the skill this work needs: electrical." in data["detail"]
    assert "due 6 Mar would be planned for Fri 7 Mar" in data["detail"]
    assert "confirm_warnings: true" in data["errors"]["confirm_warnings"][0]
    assert data["suggestion"]["username"] in {"tess", "pia"}
    freeze.refresh_from_db()
    assert freeze.assignee is None and freeze.version == 1
    ok = api_client.post(url, {**body, "confirm_warnings": True}, format="json")
    assert ok.status_code == 200 and ok.json()["assignee"]["username"] == "omar"


def test_the_schema_documents_the_warnings_and_the_confirmation(api_client, world):
    schema = api_client.get("/api/schema/?format=json").json()
    op = schema["paths"]["/api/scheduling/work-orders/{public_id}/assign/"]["post"]
    assert "confirm_warnings" in op["description"] and "skill" in op["description"]
    assert op["responses"]["409"]["content"]["application/json"]["schema"]["$ref"].endswith("AssignmentWarningOutput")
    request = op["requestBody"]["content"]["application/json"]["schema"]["$ref"].rsplit("/", 1)[-1]
    assert "confirm_warnings" in schema["components"]["schemas"][request]["properties"]


@pytest.mark.parametrize(
    ("typed", "refusal"),
    [("2025-03-04", "2025-03-04"), ("31.02.2026", "is not a date")],
)
def test_a_refused_day_stays_in_its_row_with_the_technician_said_once(client, world, freeze, typed, refusal):
    client.force_login(world.supervisor)
    url = reverse("frontend:assign", kwargs={"public_id": freeze.public_id})
    r = client.post(url, _row_form(world, freeze, assignee=world.pia.pk, scheduled_for=typed), follow=True)
    html = r.content.decode()
    row = html.split(f'id="row-{freeze.public_id}"')[1].split("</tr>")[0]
    assert f'name="scheduled_for" value="{typed}"' in row
    assert f'<option value="{world.pia.pk}" selected>' in row
    assert "data-day-refusal" in row and refusal in row
    assert html.count("data-day-refusal") == 1, "said once, beside the day"
    top = html.split('<ul class="messages">')[1].split("</ul>")[0]
    assert "Freeze protection failed" in top and "refused beside it" in top and refusal not in top
    freeze.refresh_from_db()
    assert (freeze.assignee, freeze.scheduled_for) == (None, None)


def _form_of(html: str, button: str) -> dict[str, list[str]]:
    """The hidden fields of the page's form whose button says ``button``, as the browser would post them."""
    form = next(f for f in html.split("<form")[1:] if button in f.split("</form>")[0]).split("</form>")[0]
    sent: dict[str, list[str]] = {}
    for name, value in re.findall(r'<input type="hidden" name="([^"]+)" value="([^"]*)"', form):
        sent.setdefault(name, []).append(value)
    return sent


def test_assign_to_the_suggested_technician_instead_carries_on_without_asking_again(client, world, freeze):
    """Omar lacks the electrical skill and Friday is after the due date. "Assign to ... instead" gives the work to
    the least-loaded technician with the skills: the skill warning is not theirs, and the due-date warning was read
    on this page, so it is saved at once, never a second warnings page repeating it. Only what was said there
    goes with the choice (no blanket confirmation)."""
    client.force_login(world.supervisor)
    url = reverse("frontend:assign", kwargs={"public_id": freeze.public_id})
    warned = client.post(url, _row_form(world, freeze))
    suggested, _load = warned.context["check"].suggestion
    sent = _form_of(warned.content.decode(), f"Assign to {suggested} instead")
    assert sent["seen_warnings"] == ["after_due_date"] and "confirm_warnings" not in sent
    still = client.post(url, {**sent, "assignee": world.omar.pk})  # a warning not read as seen is asked again
    assert still.status_code == 200 and still.context["check"].codes() == ["missing_skill", "after_due_date"]
    done = client.post(url, sent)
    assert done.status_code == 302, "saved at once, no second warnings page"
    freeze.refresh_from_db()
    assert (freeze.assignee, freeze.scheduled_for) == (suggested, dt.date(2025, 3, 7))
    words = " ".join(str(m) for m in get_messages(done.wsgi_request))
    assert f"assigned to {suggested}" in words and "without the skill" not in words


def test_a_past_day_is_said_beside_its_row_even_when_the_board_is_read_again(client, world, freeze):
    """The refusal of a day before the site's today is said beside the row's Day from the day itself, not only
    from the words the refused request left: the page read again (another tab, a reload) still says it there."""
    client.force_login(world.supervisor)
    url = reverse("frontend:assign", kwargs={"public_id": freeze.public_id})
    sent = client.post(url, _row_form(world, freeze, scheduled_for="2025-02-20"))
    client.get(reverse("frontend:board"))  # takes the session's words first
    row = client.get(sent.url).content.decode().split(f'id="row-{freeze.public_id}"')[1].split("</tr>")[0]
    said = row.split("data-day-refusal>")[1].split("</p>")[0]
    assert "scheduled day 2025-02-20 is in the past" in said and "allowed: 2025-03-05 or later" in said
    assert 'name="scheduled_for" value="2025-02-20"' in row


def test_an_empty_day_is_checked_on_the_day_the_board_offers_never_a_past_due_date(client, world):
    """Urgent work due Monday 3 March, overdue now, with the Day left empty: the warnings page speaks of today,
    Wednesday 5 March (the day the board offers it, ``offered_day``), never of the past due date."""
    wo = _work(world, priority=WorkOrder.Priority.URGENT, due=dt.date(2025, 3, 3), title="Frost thermostat")
    client.force_login(world.supervisor)
    url = reverse("frontend:assign", kwargs={"public_id": wo.public_id})
    warned = client.post(url, _row_form(world, wo, scheduled_for=""))
    assert warned.status_code == 200
    assert warned.context["check"].day == dt.date(2025, 3, 5)
    html = warned.content.decode()
    assert "Wed 5 Mar" in html and "Mon 3 Mar" not in html
