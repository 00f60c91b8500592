"""A failed preheater test before the freeze season: every page, the API and the PDF say "not ready" and why.

The contractor's demo: a technician's phone sends a preheater and freeze-protection test that failed
(stage 1 switched on at −9 °C against a −3 °C threshold, not every stage energised, the trip sequence
failed) 17 days before the site's freeze season. The property manager's site page, the dashboard, the
freeze-readiness API and the compliance report PDF must all say the unit is not ready, with the failed
steps and the state of the corrective work, because all of them read inspections.freeze. The retest on
the corrective work order passes every step, which closes the findings, and all of them say ready again.
"""

import datetime as dt

import pytest
from django.urls import reverse

from accounts.models import Role
from accounts.services import site_grant
from inspections.models import Finding
from inventory.models import Site
from reports.models import Report
from scheduling.services import work_order_assign
from tests.factories.accounts import make_person
from tests.factories.inspections import make_visit, sync_form
from tests.factories.inventory import ComponentFactory
from tests.factories.scheduling import make_supervisor
from tests.reports.conftest import pdf_text

SYNC = "/api/inspections/sync/"
SEASON_START = dt.date(2025, 10, 20)
THRESHOLD_C = -3.0
FAILED_ON = dt.datetime(2025, 10, 3, 10, tzinfo=dt.UTC)
RETEST_ON = dt.datetime(2025, 10, 8, 10, tzinfo=dt.UTC)
STAGE_ONE = "Entering-air temperature at which stage 1 switched on"


def _answers(doc: dict, values: dict) -> list[dict]:
    """Every item of the checklist the phone fetched: the given values, else what passes (an ok answer or the
    middle of the ok band from the checklist's own limits)."""
    readings = []
    for t in doc["templates"]:
        for it in t["items"]:
            if it["kind"] == "photo":
                continue
            if it["key"] in values:
                value = values[it["key"]]
            elif it["kind"] == "check":
                value = "ok"
            elif it["kind"] == "text":
                value = "in order"
            elif it["kind"] == "choice":
                value = next(c["value"] for c in it["choices"] if c["ok"])
            else:
                ok, plausible = it["limits"]["display"]["ok"], it["limits"]["display"]["plausible"]
                lo = ok["min"] if ok["min"] is not None else plausible["min"]
                hi = ok["max"] if ok["max"] is not None else plausible["max"]
                value = round((lo + hi) / 2, 1)
            code = (it["component"] or {}).get("label_code")
            note = "" if value == "ok" else "seen on the test"
            readings.append({"item": it["key"], "component": code, "value": value, "note": note})
    return readings


def _send(api_client, tech, wo, values, finished_at) -> dict:
    api_client.force_authenticate(tech)
    doc = api_client.get(f"/api/inspections/work-orders/{wo.public_id}/checklist/").json()
    form = sync_form(wo, _answers(doc, values), version=doc["work_order"]["version"], finished_at=finished_at)
    [out] = api_client.post(SYNC, {"forms": [form]}, format="json").json()["results"]
    assert out["status"] == "stored", out["flags"]
    return out


def _what_everyone_says(client, api_client, manager, site, django_capture_on_commit_callbacks) -> dict:
    """The site page, the dashboard, the API and the compliance PDF, as the property manager gets them."""
    client.force_login(manager)
    page = client.get(reverse("frontend:dashboard_site", kwargs={"pk": site.pk})).content.decode()
    dashboard = client.get(reverse("frontend:dashboard")).content.decode()
    api_client.force_authenticate(manager)
    [api] = api_client.get("/api/inspections/freeze-readiness/").json()
    with django_capture_on_commit_callbacks(execute=True):
        res = api_client.post(
            "/api/reports/",
            {"kind": "compliance", "parameters": {"sites": [site.pk], "start": "2025-01-01", "end": "2025-10-31"}},
            format="json",
        )
    assert res.status_code == 202, res.json()
    report = Report.objects.get(public_id=res.json()["public_id"])
    assert report.status == Report.Status.DONE, report.error
    flat = " ".join  # pages and PDFs wrap lines; compare the words
    return {
        "page": flat(page.split()),
        "dashboard": flat(dashboard.split()),
        "api": api,
        "pdf": flat(pdf_text(report).split()),
    }


@pytest.mark.django_db
def test_failed_preheater_test_says_not_ready_everywhere_until_a_passing_retest(
    api_client, client, time_machine, django_capture_on_commit_callbacks
):
    wo, tech = make_visit(tasks=["preheater_freeze"])
    site = wo.ahu.building.site
    # Mild normals: only the computed season start (20 October) decides the window and "near the season".
    Site.objects.filter(pk=site.pk).update(
        freeze_season_start=SEASON_START, normals_min_c=[10.0] * 12, normals_max_c=[20.0] * 12
    )
    site.refresh_from_db()
    heater = ComponentFactory(
        ahu=wo.ahu,
        kind="electric_preheater",
        name="Electric preheater",
        position=1,
        specs={"power_w": 24_000, "stages": 3, "switch_on_c": THRESHOLD_C},
    )
    boss = make_supervisor(wo.organisation)
    manager = make_person(organisation=wo.organisation, role=Role.PROPERTY_MANAGER)
    site_grant(user=manager, site=site)

    # 3 October, 17 days before the season: the phone sends the failed test.
    time_machine.move_to(FAILED_ON + dt.timedelta(hours=1), tick=False)
    out = _send(
        api_client,
        tech,
        wo,
        {
            "preheater_freeze.stage_on_temp": -9.0,
            "preheater_freeze.stages": "not_ok",
            "preheater_freeze.freeze_trip_test": "not_ok",
        },
        FAILED_ON,
    )
    assert out["work_order_state"] == "completed"  # the visit is done; what it found is not
    findings = Finding.objects.filter(inspection_id=out["inspection_id"])
    assert findings.count() == 3 and {f.severity for f in findings} == {"critical"}
    [cwo] = {f.corrective_work_order for f in findings if f.component_id == heater.pk}

    time_machine.move_to(dt.datetime(2025, 10, 5, 9, tzinfo=dt.UTC), tick=False)
    says = _what_everyone_says(client, api_client, manager, site, django_capture_on_commit_callbacks)
    reason = says["api"]["reason"]
    assert says["api"]["status"] == "not_ready" and not says["api"]["ready"]
    assert reason.startswith("not ready — test failed on 3 Oct 2025: ")
    assert STAGE_ONE in reason and "Every stage energises in sequence" in reason
    assert "On trip: fan stops" in reason  # the third failed step
    # Urgent and approved at once (inside 30 days of the season), not yet assigned:
    assert reason.endswith("; corrective work planned") and says["api"]["tested_on"] == "2025-10-03"
    assert "Not ready" in says["page"] and "test failed on 3 Oct 2025" in says["page"] and STAGE_ONE in says["page"]
    assert "Ready, tested" not in says["page"]
    assert "0 of 1" in says["dashboard"] and "1 not ready" in says["dashboard"]
    assert "test failed on 3 Oct 2025" in says["dashboard"]
    assert "Not ready" in says["pdf"] and "test failed on 3 Oct 2025" in says["pdf"] and STAGE_ONE in says["pdf"]
    assert "0 of 1 freeze-protected units ready" in says["pdf"]

    # 8 October: the corrective work is assigned and the technician retests on it; every step passes.
    work_order_assign(work_order=cwo, assignee=tech, by=boss)
    time_machine.move_to(RETEST_ON + dt.timedelta(hours=1), tick=False)
    retest = _send(api_client, tech, cwo, {"preheater_freeze.stage_on_temp": THRESHOLD_C}, RETEST_ON)
    assert retest["findings"] == [] and retest["work_order_state"] == "completed"
    assert not Finding.objects.filter(ahu=wo.ahu, state=Finding.State.OPEN).exists()

    time_machine.move_to(dt.datetime(2025, 10, 9, 9, tzinfo=dt.UTC), tick=False)
    says = _what_everyone_says(client, api_client, manager, site, django_capture_on_commit_callbacks)
    assert says["api"]["status"] == "ready" and says["api"]["reason"] == "ready — every step passed on 8 Oct 2025"
    assert "every step passed on 8 Oct 2025" in says["page"] and "test failed" not in says["page"]
    assert "1 of 1" in says["dashboard"] and "not ready" not in says["dashboard"]
    assert "1 of 1 freeze-protected units ready" in says["pdf"] and "every step passed on 8 Oct 2025" in says["pdf"]
