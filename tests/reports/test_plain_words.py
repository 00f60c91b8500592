"""A visit with every check reads in plain words on the record page, in the sync result and in the PDF.

The visit's judgements are the server's own (``inspections.evaluation.evaluate`` over the seeded forms of the
phone-agreement test): filter loading (with a bypassed filter and a forecast), filter after change, outdoor air
by temperatures and by CO2 (with a design shortfall), coil balance, supply temperature, duct static, damper,
sensor drift, heat recovery, an engineering refusal ("cannot judge …"), and the preheater test's answers (a
failed step and one not applicable). Stored through the findings service as a synced form is, then read as
a supervisor does: the work order's page, the result include, the inspection report's PDF text. None shows
a snake_case name, a dotted item key, an argument with "=", a Python boolean, a verdict or condition code.
"""

from __future__ import annotations

import random
import re

import pytest
from django.template.loader import render_to_string

from accounts.models import Role
from frontend.selectors import result_for_display
from inspections import evaluation
from inspections.services.findings import FILTER_BYPASS_TITLE, evaluations_store, findings_open
from scheduling.models import WorkOrder
from tests.factories.accounts import make_person
from tests.factories.inventory import BuildingFactory, make_full_unit
from tests.inspections.test_display import leaks
from tests.inspections.test_phone_agreement import FOCUS, evaluate_case, make_case

from . import builders as b
from .conftest import pdf_text

pytestmark = pytest.mark.django_db

JUDGED = [c for c in evaluation.CHECKS if c not in ("check", "choice", "limits")]


def chosen_results() -> list[evaluation.Result]:
    """For each check the failed result with the most derived values, and the edge cases a reader must see."""
    rng = random.Random(20261202)
    pool = [r for focus in FOCUS for _ in range(40) for r in evaluate_case(make_case(rng, focus))]
    wanted = {
        "bypass": lambda r: (
            r.check == "filter_loading" and r.derived.get("media_bypass_suspected") and r.verdict == "fail"
        ),
        "forecast": lambda r: r.check == "filter_loading" and "forecast_change_date" in r.derived,
        "shortfall": lambda r: r.check.startswith("oa_fraction") and r.derived.get("design_shortfall"),
        "refusal": lambda r: "cannot judge" in r.reason,
        **{
            # Each check's own failure, not a bypass (the "bypass" case above is the one bank that shows it).
            check: (
                lambda r, check=check: (
                    r.check == check
                    and r.verdict == "fail"
                    and len(r.derived) > 1
                    and not r.derived.get("media_bypass_suspected")
                )
            )
            for check in JUDGED
        },
    }
    out = []
    for name, test in wanted.items():
        found = sorted((r for r in pool if test(r)), key=lambda r: -len(r.derived))
        assert found, f"no generated result for {name}"
        if found[0] not in out:
            out.append(found[0])
    return out


@pytest.fixture
def visit(site, supervisor):
    lib = b.library()
    ahu = make_full_unit(building=BuildingFactory(site=site, name="North Wing"), tag="AHU-07")
    by_kind = {}
    for comp in ahu.components.order_by("position", "pk"):
        by_kind.setdefault(comp.kind, comp)
    # The bypassed filter is a bank of its own (one filter-loading problem per bank and visit).
    banks = list(ahu.components.filter(kind="filter_bank").order_by("position", "pk"))
    tech = make_person(organisation=site.organisation, role=Role.TECHNICIAN, first_name="Ana", last_name="Field")
    wo = b.preventive(
        ahu, lib["filter_check"], "2025-03-10", done="2025-03-11", title="Quarterly service", assignee=tech
    )
    insp = b.inspection(wo, tech, finished="2025-03-11")
    results = chosen_results()
    for res in results:
        res.component = by_kind.get(res.component.kind) if res.component is not None else None
        if res.check == "filter_loading" and res.derived.get("media_bypass_suspected"):
            res.component = banks[-1]
    # The preheater test: a failed step (a choice) and one not applicable.
    b.reading(
        insp, "preheater_freeze.freeze_trip_test", value_text="not_ok", verdict="fail", reason="freeze trip: not ok"
    )
    b.reading(insp, "preheater_freeze.airflow_interlock", value_text="na", verdict="na")
    results.append(
        evaluation.Result(
            check="check",
            item="preheater_freeze.freeze_trip_test",
            verdict="fail",
            reason="Freeze trip test: not ok",
            condition_code="freeze_protection_failed",
        )
    )
    b.reading(insp, "filter_check.dp", component=by_kind["filter_bank"], value_si=260.0, verdict="fail")
    stored = evaluations_store(inspection=insp, results=results)
    found = findings_open(inspection=insp, evaluations=stored, results=results, by=supervisor)
    return {"wo": wo, "insp": insp, "evaluations": stored, "findings": found, "results": results}


def visible_text(html: str) -> str:
    html = re.sub(r"<(script|style)\b.*?</\1>", " ", html, flags=re.S)
    return re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", html))


def test_every_check_is_in_the_visit(visit):
    """The visit holds every judged check, a bypassed filter, a design shortfall and a refusal."""
    checks = {r.check for r in visit["results"]}
    assert set(JUDGED) <= checks
    titles = {f.title.split(" — ")[0] for f in visit["findings"]}
    assert FILTER_BYPASS_TITLE in titles
    assert "Filter pressure drop after change outside the clean range" in titles


def test_the_record_page_reads_in_plain_words(client, visit, supervisor):
    """The work order's signed record: readings, verdicts, evaluations, derived values and findings in words."""
    client.force_login(supervisor)
    html = client.get(f"/w/{visit['wo'].public_id}/").content.decode()
    start = html.index(">", html.index("data-record="))
    record = visible_text(html[start : html.index("</section>", start)])
    assert "Not applicable" in record and "airflow" in record and "Filter media missing, torn or bypassed" in record
    assert not leaks(record), leaks(record)
    # Derived values read as sentences, verdicts by their labels: no "label: value; label: value", no "ok".
    assert "airflow from:" not in record and "; clean pressure drop:" not in record
    assert "Airflow from from" not in record and "Fail Filter loading" in record


@pytest.mark.parametrize("system", ["si", "us"])
def test_the_sync_result_reads_in_plain_words(visit, system):
    """The server's answer as the phone's page shows it: status, work-order state, verdicts, findings in words."""
    wo = visit["wo"]
    result = {
        "status": "flagged",
        "inspection_id": visit["insp"].pk,
        "work_order_state": WorkOrder.State.IN_PROGRESS,
        "flags": [],
        "errors": {"readings[0].value": ["Filter pressure drop: 9999 Pa is outside 0–2500 Pa"]},
        "evaluation": [
            {
                "check": e.check_name,
                "item": e.item_key,
                "component": e.component.label_code if e.component else None,
                "verdict": e.verdict,
                "reason": e.reason,
                "derived": e.derived,
            }
            for e in visit["evaluations"]
        ],
        "findings": [{"severity": f.severity, "title": f.title} for f in visit["findings"]],
    }
    html = render_to_string(
        "frontend/technician/_result.html", {"result": result_for_display(result=result, system=system), "wo": wo}
    )
    text = visible_text(html)
    assert "flagged for the supervisor" in text and "in progress" in text and "9999 Pa" in text
    assert not leaks(text), leaks(text)


def test_the_inspection_report_pdf_reads_in_plain_words(visit, org, make_report):
    """The inspection report's text (SI and US readers) shows no stored key or code."""
    for system in ("si", "us"):
        reader = make_person(organisation=org, role=Role.SUPERVISOR, unit_system=system)
        report = make_report(user=reader, kind="inspection", parameters={"work_order": str(visit["wo"].public_id)})
        text = " ".join(pdf_text(report).split())
        assert "Filter media missing, torn or bypassed" in text
        assert not leaks(text), (system, sorted(set(leaks(text))))


def test_the_unit_history_pdf_reads_in_plain_words(visit, org, make_report):
    """The unit's history over the visit's month shows its readings, verdicts and findings without keys or codes."""
    reader = make_person(organisation=org, role=Role.SUPERVISOR)
    report = make_report(
        user=reader,
        kind="unit_history",
        parameters={"unit": visit["wo"].ahu_id, "start": "2025-03-01", "end": "2025-03-31"},
    )
    text = " ".join(pdf_text(report).split())
    assert "not applicable" in text.lower() and "Filter media missing, torn or bypassed" in text
    assert not leaks(text), sorted(set(leaks(text)))
