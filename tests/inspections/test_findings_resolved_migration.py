"""Migration 0009 closes the open findings that later visits already resolved, as the live service now does."""

import pytest
from django.db import connection
from django.db.migrations.executor import MigrationExecutor

from accounts.models import AuditEvent
from inspections.models import Finding
from inspections.services.findings import problem_of
from scheduling.models import WorkOrder
from tests.factories.inspections import make_visit
from tests.factories.scheduling import WorkOrderFactory
from tests.reports import builders as b

BEFORE = ("inspections", "0008_findings_resolved_later")


@pytest.mark.django_db(transaction=True)
def test_open_findings_resolved_by_later_visits_are_closed_and_later_failures_become_a_new_finding():
    """Pre-filters loaded on 5 Jun (a pending "filter replacement" proposal), replaced on 5 Jul, loaded again on
    1 Dec and merged into the June finding: the June finding closes "filters replaced" at the July visit, the
    December failure becomes a new open finding first seen on 1 Dec, and the proposal is withdrawn. A damper
    finding whose next visit reads ok closes "ok on a later visit"; a freeze-protection step read ok later stays
    open (its corrective retest closes it); a finding with no later ok is left alone."""
    executor = MigrationExecutor(connection)
    executor.migrate([BEFORE])
    # Findings as the table was then (later migrations add columns); the other rows' tables are unchanged since.
    OldFinding = executor.loader.project_state([BEFORE]).apps.get_model("inspections", "Finding")

    def old_finding(insp, ev, *, severity, title, opened):
        return OldFinding.objects.create(
            organisation_id=insp.organisation_id,
            inspection_id=insp.pk,
            evaluation_id=ev.pk,
            ahu_id=insp.ahu_id,
            component_id=ev.component_id,
            problem=problem_of(check=ev.check_name, item=ev.item_key),
            severity=severity,
            title=title,
            reason=ev.reason,
            condition_code=ev.condition_code,
            opened_at=b.at(opened),
            last_seen_at=b.at(opened),
            latest_evaluation_id=ev.pk,
            latest_inspection_id=insp.pk,
        )

    wo, tech = make_visit(tasks=["filter_check"])
    ahu = wo.ahu
    pre, damper = ahu.components.get(name="Pre-filters"), ahu.components.get(name="Outdoor-air damper")
    pan = ahu.components.get(name="Drain pan")
    june, july, dec = (b.inspection(wo, tech, finished=d) for d in ("2026-06-05", "2026-07-05", "2026-12-01"))

    def ev(insp, check, item, verdict, component=None, condition=""):
        return b.evaluation(
            insp,
            check,
            item,
            verdict=verdict,
            reason=f"{item} {verdict}",
            component=component,
            condition_code=condition,
        )

    loaded = [ev(i, "filter_loading", "filter_check.dp", "fail", pre, "filter_loaded") for i in (june, july, dec)]
    b.reading(july, "filter_replace.replaced", component=pre, value_text="ok", verdict="ok")
    proposal = WorkOrderFactory(
        ahu=ahu, kind=WorkOrder.Kind.CORRECTIVE, approval=WorkOrder.Approval.PENDING, title="Filter replacement"
    )
    filters = old_finding(june, loaded[0], severity="medium", title="Filter loaded — Pre-filters", opened="2026-06-05")
    OldFinding.objects.filter(pk=filters.pk).update(
        times_seen=3,
        last_seen_at=dec.finished_at,
        latest_evaluation=loaded[2],
        latest_inspection=dec,
        corrective_work_order=proposal,
    )
    off = ev(june, "damper_position", "damper_actuator.position", "fail", damper, "damper_position")
    ev(july, "damper_position", "damper_actuator.position", "ok", damper, "damper_position")
    damper_finding = old_finding(june, off, severity="medium", title="Damper", opened="2026-06-05")
    trip = ev(june, "check", "preheater_freeze.freeze_trip_test", "fail", None, "freeze_protection_failed")
    ev(july, "check", "preheater_freeze.freeze_trip_test", "ok", None, "freeze_protection_failed")
    freeze = old_finding(june, trip, severity="critical", title="Freeze", opened="2026-06-05")
    standing = ev(june, "choice", "drain_pan.pan_condition", "fail", pan)
    ev(july, "choice", "drain_pan.pan_condition", "fail", pan)
    untouched = old_finding(june, standing, severity="medium", title="Pan", opened="2026-06-05")

    executor = MigrationExecutor(connection)
    executor.loader.build_graph()
    executor.migrate(executor.loader.graph.leaf_nodes())

    old = Finding.objects.get(pk=filters.pk)
    assert (old.state, old.close_cause, old.closed_at) == ("closed", "replaced", july.finished_at)
    assert old.times_seen == 2 and old.latest_inspection_id == july.pk, "June and the old set's July reading"
    [new] = Finding.objects.filter(ahu=ahu, component=pre, state=Finding.State.OPEN)
    assert new.pk != old.pk and new.evaluation_id == loaded[2].pk
    assert (new.opened_at, new.times_seen, new.corrective_work_order_id) == (dec.finished_at, 1, None)
    proposal.refresh_from_db()
    assert proposal.state == WorkOrder.State.CANCELLED and "resolved" in proposal.cancel_reason
    d = Finding.objects.get(pk=damper_finding.pk)
    assert (d.state, d.close_cause, d.closed_at) == ("closed", "ok_later", july.finished_at)
    assert Finding.objects.get(pk=freeze.pk).state == Finding.State.OPEN
    u = Finding.objects.get(pk=untouched.pk)
    assert (u.state, u.close_cause, u.times_seen) == ("open", "", 1), "not touched"
    assert AuditEvent.objects.filter(object_type="inspections.finding", action="finding_close").count() == 2
