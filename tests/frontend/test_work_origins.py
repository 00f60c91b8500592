"""A corrective work order's page says why it exists: the finding or building-automation fault that proposed it, in
the words the supervisor's findings and faults pages use (inspections.selectors.reason_for,
automation.judging.fault_reason), when it was first found and on which part (frontend/work_origins.py).

Worlds: the final filters of AHU-01 read 400 Pa against a final 250 Pa on 18 Nov 2026 10:30 CET
(tests/frontend/findings_world.py); a stuck outdoor-air damper judged from a trend CSV
(tests/frontend/test_automation_pages.stuck_damper_world).
"""

import html as html_lib
import re

import pytest
import time_machine
from django.urls import reverse

from accounts.models import Role
from automation.judging import fault_reason
from inspections.selectors import reason_for
from scheduling.models import WorkOrder
from tests.factories.accounts import make_person
from tests.frontend import findings_world
from tests.frontend.test_automation_pages import AFTER, stuck_damper_world

pytestmark = pytest.mark.django_db


def _text(page) -> str:
    return html_lib.unescape(re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", page.content.decode())))


def _page(client, user, wo):
    client.force_login(user)
    return client.get(reverse("frontend:checklist", kwargs={"public_id": wo.public_id}))


def test_corrective_work_from_a_finding_says_what_was_found_when_and_on_which_part(client, time_machine):
    world = findings_world.build(time_machine)
    finding = world.finding_a
    wo = finding.corrective_work_order
    WorkOrder.objects.filter(pk=wo.pk).update(assignee=world.s.technician, state=WorkOrder.State.ASSIGNED)
    page = _page(client, world.s.technician, wo)
    assert page.status_code == 200
    html = page.content.decode()
    assert html.count("data-origin>") == 1
    text = _text(page)
    reason = reason_for(evaluation=finding, unit_system=world.s.technician.unit_system)
    assert reason and f"{finding.title} — Final filters: {reason}" in text
    assert "First found 18 Nov 2026 10:30 CET on a technician's visit." in text


def test_corrective_work_from_a_fault_says_what_the_trends_found_once(client):
    org, _site, _ahu, _points, fault = stuck_damper_world()
    boss = make_person(organisation=org, role=Role.SUPERVISOR, username="boss")
    wo = fault.corrective_work_order
    with time_machine.travel(AFTER, tick=False):
        page = _page(client, boss, wo)
    assert page.status_code == 200
    html = page.content.decode()
    assert html.count("data-origin>") == 1  # the fault, not its finding again
    text = _text(page)
    assert fault.title in text and fault_reason(fault, boss.unit_system) in text
    assert "in the building-automation trends." in text
