"""The phone judges a reading offline exactly as the server will, in the person's units."""

import re

import pytest
from playwright.sync_api import expect

from inspections.models import Evaluation, Inspection, Reading

from .conftest import PHONE
from .test_pwa import draw_signature, wait_app

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]

CFM = 0.0004719474432  # m³/s per ft³/min (1 ft = 0.3048 m, exact)


def test_reduced_airflow_filter_reading_fails_on_the_phone_offline_and_on_the_server(
    page, live_server, sign_in, offline
):
    """0.75 in. w.c. read at 1,200 cfm on a unit designed for 1,695 cfm: "fail" on the phone offline, and after sync.

    186.8 Pa × (1695/1200)^1.5 = 313.6 Pa at design airflow (filter correction exponent 1.5, common
    practice): (313.6 − 80)/(250 − 80) = 137 % of the clean-to-final span, past the 95 % fail line. The
    raw 0.75 in. w.c. alone sits below the final 1.00 in. w.c. and used to read "ok" on the phone.
    """
    from tests.frontend import scenario as scenario_module

    world = scenario_module.build(unit_system="us")
    unit = world.unit_a
    unit.design_supply_airflow_m3s = 1695 * CFM
    unit.save(update_fields=["design_supply_airflow_m3s"])
    bank = unit.components.get(name="Final filters")
    bank.specs = {k: v for k, v in bank.specs.items() if k != "design_airflow_m3s"} | {
        "clean_dp_pa": 80.0,
        "final_dp_pa": 250.0,
    }
    bank.save(update_fields=["specs"])

    page.set_viewport_size(PHONE)
    sign_in(page, world.technician)
    expect(page).to_have_url(re.compile(r"/today/$"))
    page.wait_for_function("Number(document.documentElement.dataset.offlineSaved) >= 3", timeout=20000)
    page.get_by_role("link", name=re.compile("AHU-01")).first.click()
    wait_app(page)

    offline(True)
    dp_id = f"r-filter_check-dp-{bank.label_code}"
    page.locator("#r-visit-supply_airflow-unit").fill("1200")
    page.locator(f"#{dp_id}").fill("0.75")
    verdict = page.locator(f"#{dp_id}-verdict")
    expect(verdict.locator(".verdict")).to_have_text("Fail")
    expect(verdict).to_contain_text("137 % of its span")
    expect(verdict).to_contain_text("in. w.c.")
    expect(verdict).not_to_contain_text("no limit")
    expect(verdict).not_to_contain_text("Final filters:")  # its label names the bank; the reason says it once
    # The airflow itself is only recorded: no badge that reads like a pass.
    expect(page.locator("#r-visit-supply_airflow-unit-verdict")).to_contain_text(
        "Recorded — no limit applies to this reading"
    )

    block = page.locator(f"[data-item='filter_check.dp'][data-component='{bank.label_code}']")
    block.locator("summary").click()
    block.locator("input[name^='n:']").fill("Bank loaded at reduced airflow; change booked")
    draw_signature(page)
    page.get_by_role("button", name="Finish and sign").click()
    # Only two readings were taken: the phone says, before the form leaves, that the server will flag it as
    # incomplete (its words), and no longer that the failed reading lacks a note.
    problems = page.locator("[data-finish-problems]")
    expect(problems).to_contain_text("required items not answered")
    expect(problems).not_to_contain_text("without a note")
    expect(page.locator("[data-outbox-count]")).to_have_text("0")
    problems.get_by_role("button", name="Finish anyway").click()
    expect(page.locator("[data-outbox-count]")).to_have_text("1")
    assert not Inspection.objects.filter(work_order=world.work_a).exists()

    offline(False)
    page.evaluate("window.dispatchEvent(new Event('online'))")
    expect(page.locator("[data-outbox-count]")).to_have_text("0", timeout=20000)

    inspection = Inspection.objects.get(work_order=world.work_a)
    server = Evaluation.objects.get(inspection=inspection, check_name="filter_loading", component=bank)
    assert server.verdict == "fail"
    assert server.derived["loading_pct"] == pytest.approx(137.4, abs=0.1)
    reading = Reading.objects.get(inspection=inspection, item__key="dp", component=bank)
    assert reading.verdict == "fail"
    assert not any("note" in f.get("reason", "") for f in inspection.flags)


def test_calculator_works_offline_in_the_persons_units(page, context, live_server, sign_in):
    """Offline, the field calculator still works the filter loading figure in US units, as the server would.

    0.75 in. w.c. at 1,200 cfm, design 1,695 cfm, clean 0.32 and final 1.00 in. w.c.: 186.8 × (1695/1200)^1.5
    = 313.6 Pa = 1.26 in. w.c. at design airflow (n = 1.5, common practice), 137 % of the span: fail.
    """
    from frontend.calculators import calculate
    from tests.frontend import scenario as scenario_module

    world = scenario_module.build(unit_system="us")
    typed = {"dp_pa": "0.75", "airflow_m3s": "1200", "design_airflow_m3s": "1695", "clean_dp_pa": "0.32"}
    typed["final_dp_pa"] = "1.00"
    server = {r["label"]: r["value"] for r in calculate(name="filter-loading", values=typed, system="us")}

    page.set_viewport_size(PHONE)
    sign_in(page, world.technician)
    expect(page).to_have_url(re.compile(r"/today/$"))
    page.goto(f"{live_server.url}/calc/")
    wait_app(page)
    context.set_offline(True)
    form = page.locator("form[data-calc='filter-loading']")
    for name, value in typed.items():
        form.locator(f"input[name='{name}']").fill(value)
    form.get_by_role("button", name="Calculate").click()
    result = form.locator("[data-calc-result]")
    expect(result.locator(".verdict")).to_have_text("fail")
    expect(result).to_contain_text(f"{server['Pressure drop at design airflow']} in. w.c.")
    expect(result).to_contain_text(f"{server['Loading (clean = 0 %, final = 100 %)']} %")
    assert server["Verdict"] == "fail"


def test_a_coil_heat_balance_shows_on_its_own_line_under_the_coil_and_the_flow_reads_recorded(
    page, live_server, sign_in, offline
):
    """Offline at 360 px: a heating coil whose air side (3 m³/s, 10 → 30 °C, 70.3 kW) and water side (0.5 L/s,
    70 → 50 °C, 41.2 kW) are 41 % apart fails its heat balance (20 % watch limit, common practice) on a line of its
    own after the coil's last field, "Coil heat balance — Heating coil", as the record page says it; the flow,
    which no check judges, reads "Recorded" (the balance is not the flow's verdict)."""
    from tests.factories.scheduling import add_task
    from tests.frontend import scenario as scenario_module

    world = scenario_module.build()
    coil = world.unit_a.components.get(name="Heating coil")
    add_task(world.work_a, "coil_clean", coil)

    page.set_viewport_size(PHONE)
    sign_in(page, world.technician)
    expect(page).to_have_url(re.compile(r"/today/$"))
    page.wait_for_function("Number(document.documentElement.dataset.offlineSaved) >= 3", timeout=20000)
    page.get_by_role("link", name=re.compile("AHU-01")).first.click()
    wait_app(page)

    offline(True)
    page.locator("#r-visit-supply_airflow-unit").fill("3")
    for key, value in [("air_in", "10"), ("air_out", "30"), ("water_in", "70"), ("water_out", "50")]:
        page.locator(f"#r-coil_clean-{key}-{coil.label_code}").fill(value)
    flow_id = f"r-coil_clean-water_flow-{coil.label_code}"
    line = page.locator("output[data-own-check]")
    expect(line).to_have_count(0)  # four of its five readings: nothing to balance yet
    page.locator(f"#{flow_id}").fill("0.5")
    expect(line).to_have_count(1)
    expect(line.locator(".verdict")).to_have_text("Fail")
    expect(line).to_contain_text("Coil heat balance — Heating coil:")
    expect(line).to_contain_text("% apart")
    expect(line).not_to_contain_text("Heating coil: Heating coil")
    flow = page.locator(f"#{flow_id}-verdict")
    expect(flow).to_contain_text("Recorded")
    expect(flow).not_to_contain_text("apart")
    # Under the coil's fields, inside the phone's width.
    coil_fields = page.locator(f"[data-item^='coil_clean.'][data-component='{coil.label_code}']")
    last = coil_fields.nth(coil_fields.count() - 1).bounding_box()
    box = line.bounding_box()
    assert last and box and box["y"] >= last["y"] + last["height"] - 1
    assert box["x"] >= 0 and box["x"] + box["width"] <= PHONE["width"]
    # A reading it needs cleared: the line goes.
    page.locator(f"#{flow_id}").fill("")
    expect(line).to_have_count(0)
