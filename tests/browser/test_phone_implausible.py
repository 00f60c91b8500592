"""On the phone, a reading outside its plausible range is used by no check (the server alike), and one no check
judged reads "Not judged" and why, as the record says it (inspections.display reading_verdict_words)."""

import re

import pytest
from playwright.sync_api import expect

from .conftest import PHONE
from .test_pwa import wait_app

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


def test_a_fan_speed_typed_as_12_5_rpm_does_not_hide_a_torn_pre_filter(page, live_server, sign_in):
    """The tryout: "Supply fan speed now" 12.5 rpm (plausible 50–5000 rpm) on a fan designed for 6.5 m³/s at
    1120 rpm. By the first fan law (airflow ∝ speed, ASHRAE Handbook—HVAC Systems and Equipment, fans chapter; from
    memory) that is 73 L/s, too far from design to correct a filter reading; set aside, a bank's 12.5 Pa against a
    clean 45 Pa (28 %, below the 50 % that fails as missing, torn or bypassed media, common practice) is judged at
    design airflow and fails, saying the speed was not used (the bank this visit's filter check asks)."""
    from tests.frontend import scenario as scenario_module

    world = scenario_module.build()
    unit = world.unit_a
    unit.design_supply_airflow_m3s = 6.5
    unit.save(update_fields=["design_supply_airflow_m3s"])
    fan = unit.components.get(name="Supply fan")
    fan.specs = {**fan.specs, "design_flow_m3s": 6.5, "design_speed_rpm": 1120}
    fan.save(update_fields=["specs"])
    bank = unit.components.get(name="Final filters")  # the bank this visit's filter check asks
    bank.specs = {**bank.specs, "clean_dp_pa": 45.0, "design_airflow_m3s": 6.5}
    bank.save(update_fields=["specs"])

    page.set_viewport_size(PHONE)
    sign_in(page, world.technician)
    expect(page).to_have_url(re.compile(r"/today/$"))
    page.get_by_role("link", name=re.compile("AHU-01")).first.click()
    wait_app(page)

    page.locator("#r-visit-supply_fan_speed-unit").fill("12.5")
    # Set aside and judged by nothing: said so, as the record will say it, never "no limit applies".
    speed = page.locator("#r-visit-supply_fan_speed-unit-verdict")
    expect(speed).to_have_text("Not judged — 12.5 rpm is outside the plausible 50–5000 rpm; re-check the reading")
    dp_id = f"r-filter_check-dp-{bank.label_code}"
    page.locator(f"#{dp_id}").fill("12.5")
    verdict = page.locator(f"#{dp_id}-verdict")
    expect(verdict.locator(".verdict")).to_have_text("Fail")
    expect(verdict).to_contain_text("missing, torn or bypassed media")
    expect(verdict).to_contain_text("supply fan speed now 12.5 rpm not used: outside the plausible 50–5000 rpm")
    expect(verdict).not_to_contain_text("cannot judge")
