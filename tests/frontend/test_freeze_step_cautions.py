"""The freeze-protection test on the technician's phone: the stage test's step says, where it is done, to lock out
the heater's own disconnect first and never to bypass a limit or the airflow interlock, and the test's own caution
box says it too (inspections.cautions HEATER_SAFETIES; NFPA 70 424.19, 424.65, from memory)."""

import html
import re

import pytest
from django.urls import reverse

from inspections.cautions import HEATER_SAFETIES
from tests.factories.inventory import ComponentFactory
from tests.factories.scheduling import add_task
from tests.frontend import scenario

pytestmark = pytest.mark.django_db


def _text(fragment: str) -> str:
    return " ".join(html.unescape(re.sub(r"<[^>]+>", " ", fragment)).split())


def test_the_stage_step_says_lockout_and_never_bypass_where_it_is_done(client):
    world = scenario.build()
    heater = ComponentFactory(
        ahu=world.unit_a, kind="electric_preheater", name="Preheater",
        specs={"power_w": 24000, "stages": 2, "switch_on_c": 3},
    )  # fmt: skip
    add_task(world.work_a, "preheater_freeze", heater)
    client.force_login(world.technician)
    page = client.get(reverse("frontend:checklist", args=[world.work_a.public_id])).content.decode()
    start = page.index(f'data-item="preheater_freeze.stages" data-component="{heater.label_code}"')
    step = _text(page[start : page.index('<div class="field"', start)])
    assert "Lock out and tag out the heater's own disconnect before opening its panel" in step
    assert "Never bypass a limit or the airflow interlock" in step
    # The test's own caution box (the chosen tasks' cautions, shown before the form).
    boxes = [_text(b) for b in re.findall(r'<div class="caution" role="note">(.*?)</div>', page, re.S)]
    assert any(HEATER_SAFETIES in b for b in boxes), boxes
