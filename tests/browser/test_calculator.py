"""The field calculator on a phone with no signal: a blank or unusable field is named with its range, and the
figure worked before it goes, so no old result stands beside new inputs."""

import re

import pytest
from playwright.sync_api import expect

from .conftest import PHONE
from .test_pwa import wait_app

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]

# 0.75 in. w.c. at 1,200 cfm on a bank rated for 1,695 cfm, clean 0.36 and final 1.20 in. w.c.: 1.26 in. w.c. at
# design airflow, 107 % of the span (tests/frontend/test_calculators.py works it by hand).
TYPED = {"dp_pa": "0.75", "airflow_m3s": "1200", "design_airflow_m3s": "1695", "clean_dp_pa": "0.36"}
TYPED["final_dp_pa"] = "1.20"
ALLOWED = "from 0 to 10 in. w.c."  # 0–2,500 Pa (engineering.filters.FILTER_DP_PA), rounded inward


def test_a_blank_or_unusable_field_offline_clears_the_old_figure_and_names_the_field(
    page, context, live_server, sign_in, screenshots
):
    """Offline, a US technician works a filter figure (1.26 in. w.c., fail), then empties the final pressure
    drop: the old figure goes and the page says which field is missing and what it takes. Typing 1e400 (more
    than any number the phone holds) says it is "not a usable number" with the range. A decimal comma is a decimal
    point: 0,75 is 0.75 (issue 19: a browser's number field had turned it into 75 unseen)."""
    from tests.frontend import scenario as scenario_module

    world = scenario_module.build(unit_system="us")
    page.set_viewport_size(PHONE)
    sign_in(page, world.technician)
    expect(page).to_have_url(re.compile(r"/today/$"))
    page.goto(f"{live_server.url}/calc/")
    wait_app(page)
    context.set_offline(True)

    form = page.locator("form[data-calc='filter-loading']")
    result = form.locator("[data-calc-result]")
    final = form.locator("input[name='final_dp_pa']")
    for name, value in TYPED.items():
        form.locator(f"input[name='{name}']").fill(value)
    form.get_by_role("button", name="Calculate").click()
    expect(result.locator(".verdict")).to_have_text("fail")
    expect(result).to_contain_text("1.26 in. w.c.")
    expect(result).to_contain_text("final 1.20 in. w.c.")
    expect(result).not_to_contain_text("Pa ")

    final.fill("")
    form.get_by_role("button", name="Calculate").click()
    expect(result).to_contain_text(f"Final pressure drop: missing; enter a number {ALLOWED}")
    expect(result.locator("table")).to_have_count(0)
    expect(result).not_to_contain_text("1.26")

    final.press_sequentially("1e400")  # a number with an exponent: typed in full or not at all (numbers.js)
    form.get_by_role("button", name="Calculate").click()
    expect(result).to_contain_text(
        "Final pressure drop: “1e400” is not a plain number; type digits with an optional decimal point or comma, "
        f"allowed {ALLOWED}"
    )
    expect(result.locator("table")).to_have_count(0)
    expect(form.locator("#filter-loading-final_dp_pa-allowed")).to_have_text(f"Allowed {ALLOWED}")
    form.screenshot(path=str(screenshots / "calculator-unusable-offline.png"))

    final.fill("1,20")
    form.locator("input[name='dp_pa']").fill("0,75")
    expect(form.locator("input[name='dp_pa']")).to_have_value("0,75")
    form.get_by_role("button", name="Calculate").click()
    expect(result).to_contain_text("1.26 in. w.c.")
    expect(result).to_contain_text("final 1.20 in. w.c.")
