"""Queries per synced form do not grow with its readings or its findings.

A form with 4 readings and one with 40 cost the same number of queries; a form whose 13 filter banks are all
overloaded (13 findings, one corrective work order) costs what a form with one overloaded bank does, and a
fixed number more than the same form clean: the banks' filter histories are read together, readings,
evaluations and new findings are written in bulk, and the findings are linked to their work in one update.
"""

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext

from inspections.models import Finding, Reading
from inspections.services.sync import inspection_sync
from tests.factories.inspections import make_visit, r, sync_form
from tests.factories.inventory import FILTER_SPECS, AHUFactory, ComponentFactory

pytestmark = pytest.mark.django_db

FINAL_DP_PA = FILTER_SPECS["final_dp_pa"]  # the bank's own final pressure drop: above it, a finding


def _visit(banks: int):
    ahu = AHUFactory()
    for i in range(banks):
        ComponentFactory(ahu=ahu, name=f"Filter bank {i + 1}")
    return make_visit(tasks=["filter_check"], ahu=ahu, organisation=ahu.building.site.organisation)


def _form(wo, *, dp: float) -> dict:
    readings = [r("visit.run_hours", 1200)]
    for bank in wo.ahu.components.order_by("pk"):
        readings += [
            r("filter_check.dp", dp, bank),
            r("filter_check.seated", "ok", bank),
            r("filter_check.media", "loaded", bank),
        ]
    return sync_form(wo, readings)


def _queries(banks: int, *, dp: float) -> tuple[int, dict]:
    wo, tech = _visit(banks)
    form = _form(wo, dp=dp)
    with CaptureQueriesContext(connection) as seen:
        [result] = inspection_sync(user=tech, forms=[form])
    assert Reading.objects.filter(inspection__work_order=wo).count() == len(form["readings"])
    return len(seen), result


def test_queries_per_form_do_not_grow_with_readings_or_findings():
    _queries(2, dp=FINAL_DP_PA + 100)  # the process's first form reads what it keeps (templates, content types)
    few, few_result = _queries(1, dp=120)
    many, many_result = _queries(13, dp=120)
    assert few_result["status"] == many_result["status"] == "stored", (few_result, many_result)
    assert many == few, f"4 readings: {few} queries; 40 readings: {many}"
    one_dirty, _ = _queries(1, dp=FINAL_DP_PA + 100)
    dirty, dirty_result = _queries(13, dp=FINAL_DP_PA + 100)
    # Never more for 13 findings than for one (one finding names its part, and the part is checked once).
    assert dirty <= one_dirty, f"1 finding: {one_dirty} queries; 13 findings: {dirty}"
    assert Finding.objects.filter(inspection__client_uuid=dirty_result["client_uuid"]).count() == 13
    # What findings add is the same for one or thirteen: one insert (in its savepoint), the open corrective work
    # looked up, one corrective work order proposed (in its savepoint: whether one is open for the condition, the
    # insert, the condition's tasks read and inserted) and one link update; the open findings are read anyway.
    assert dirty <= many + 11, f"0 findings: {many} queries; 13 findings: {dirty}"


def _batch(n: int, *, org=None, tech=None):
    """``n`` visits of one technician (each on its own unit of one organisation) and a form for each."""
    forms = []
    for _ in range(n):
        ahu = AHUFactory(building__site__organisation=org) if org is not None else AHUFactory()
        ComponentFactory(ahu=ahu, name="Filter bank 1")
        org = ahu.building.site.organisation
        wo, tech = make_visit(tasks=["filter_check"], ahu=ahu, organisation=org, technician=tech)
        forms.append(_form(wo, dp=120))
    return org, tech, forms


def _batch_queries(n: int) -> tuple[int, list, list[dict]]:
    _org, tech, forms = _batch(n)
    with CaptureQueriesContext(connection) as seen:
        results = inspection_sync(user=tech, forms=forms)
    assert [res["status"] for res in results] == ["stored"] * n, results
    return len(seen), [q["sql"] for q in seen.captured_queries], results


def test_a_batch_costs_a_fixed_number_of_queries_plus_a_small_constant_per_form():
    """What every form of a request shares (work orders, templates, units' components, earlier forms) is read
    once for the request (the templates' rows once for the process): a batch of N forms costs a fixed number of
    queries plus the same few per form."""
    _batch_queries(1)  # the process's first form reads what it keeps (templates, content types)
    one, _, _ = _batch_queries(1)
    two, _, _ = _batch_queries(2)
    five, sqls, _ = _batch_queries(5)
    per_form = two - one
    assert five - two == 3 * per_form, f"1 form: {one}, 2 forms: {two}, 5 forms: {five} queries"
    # The per-form cost: the form's own writes (inspection, readings, evaluations, meter reading, the work
    # order's two moves in one update and its tasks, the answer), the checks they need (the meter read once, the
    # unit's open findings, the findings and faults the completed work answers) and the form's one savepoint
    # (its release). The work orders and their units are locked once per request, their units' filter history
    # read once per request and the audit events written in one insert per request; the meter reading and the
    # completion take no savepoint of their own.
    assert per_form <= 13, f"{per_form} queries per form"
    # The forms' filter history (their banks' readings, and the trends' filter days) is read once per request.
    history = [s for s in sqls if 'FROM "inspections_reading"' in s and '"inspection__finished_at"' in s]
    assert len(history) == 1, history
    assert sum('FROM "automation_filterday"' in s for s in sqls) == 1, "trend filter days: one read per request"
    assert sum('INSERT INTO "accounts_auditevent"' in s for s in sqls) == 1, "audit events: one insert per request"
    # The forms' units are locked once for the request, the rows alone (no join to, and on PostgreSQL no lock of,
    # their buildings and sites); each form's run-hour meter is read once, under that lock, on arrival, and the
    # store checks its reading against that read (nothing of the meter is written between).
    unit_reads = [s for s in sqls if s.startswith('SELECT "inventory_ahu"."id"')]
    assert len(unit_reads) == 1 and not any("JOIN" in s for s in unit_reads), unit_reads
    meter_reads = [s for s in sqls if s.startswith("SELECT") and "FROM scheduling_meterreading" in s]
    assert len(meter_reads) == 5, meter_reads
    # The checklist templates: which versions are newest, asked once per request; the templates and their items
    # read by the process's first request (above) and kept (config.caches.clear_module_caches forgets them).
    versions = [s for s in sqls if 'FROM "inspections_checklisttemplate"' in s]
    templates = [s for s in sqls if 'FROM "inspections_checklistitem"' in s]
    assert len(versions) == 1 and templates == [], (versions, templates)


def test_the_organisation_version_moves_once_per_sync_request():
    """A request of three forms (each stores an inspection, a meter reading and completes its work order, each
    of which changes what today and the board show) moves the organisation's work version and the technician's
    own exactly once each, in the request's transaction, not once per write; the organisation's version (what
    every answer shows) stays, so the other technicians' today stays kept."""
    from accounts.models import Organisation, User

    org, tech, forms = _batch(3)

    def versions():
        o = Organisation.objects.get(pk=org.pk)
        return o.answers_version, o.work_version, User.objects.get(pk=tech.pk).work_version

    def bumps(seen):
        return [q["sql"] for q in seen.captured_queries if "_version" in q["sql"] and q["sql"].startswith("UPDATE")]

    before = versions()
    with CaptureQueriesContext(connection) as seen:
        results = inspection_sync(user=tech, forms=forms)
    assert [res["status"] for res in results] == ["stored"] * 3, results
    assert len(bumps(seen)) == 2, bumps(seen)  # the organisation's work, the technician's own
    assert versions() == (before[0], before[1] + 1, before[2] + 1)
    # The same request replayed: every form a duplicate, nothing written, the versions left alone.
    with CaptureQueriesContext(connection) as seen:
        inspection_sync(user=tech, forms=forms)  # replayed: duplicates, nothing written
    assert len(bumps(seen)) == 0, bumps(seen)


def test_a_failed_step_is_named_from_the_forms_checklist_without_reading_the_templates_again():
    """A failed checklist step's finding is titled with its test and step from the checklist the form was read
    against: the templates' items are read once (by the process's first request), not again for the findings."""
    from tests.factories.inspections import component, make_visit, r, sync_form

    wo, tech = make_visit(tasks=["drain_pan"])
    pan = component(wo.ahu, "Drain pan")
    readings = [
        r("visit.run_hours", 1200),
        r("drain_pan.pan_condition", "standing", pan, note="water stands in the pan"),
        r("drain_pan.drains_freely", "ok", pan),
    ]
    with CaptureQueriesContext(connection) as seen:
        [result] = inspection_sync(user=tech, forms=[sync_form(wo, readings)])
    assert result["status"] == "flagged", result  # no photo of the standing water
    [finding] = Finding.objects.filter(inspection__client_uuid=result["client_uuid"])
    assert finding.title.endswith("Pan condition — Drain pan"), finding.title
    items = [q["sql"] for q in seen.captured_queries if 'FROM "inspections_checklistitem"' in q["sql"]]
    assert len(items) == 1, items
