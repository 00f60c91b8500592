"""Migration 0006 merges the duplicate open findings an older database holds (one per visit) into one."""

import uuid

import pytest
from django.db import connection
from django.db.migrations.executor import MigrationExecutor

from accounts.models import AuditEvent
from inspections.models import Finding
from scheduling.models import WorkOrder
from tests.factories.inspections import make_visit
from tests.factories.scheduling import WorkOrderFactory
from tests.reports import builders as b

BEFORE = ("inspections", "0005_checklistitem_unit_filter")


@pytest.mark.django_db(transaction=True)
def test_duplicate_open_findings_become_one_seen_on_every_visit():
    """Three monthly visits each opened a "standing water" finding with its own pending work order: after the
    migration one finding stays open, first seen on the first visit, last seen on the third, seen three times,
    holding one pending work order; the other two are closed as merged (at their own opening, so no age figure
    counts them) and their now empty proposals are cancelled, both audited. A finding on another problem is
    left alone; an outdoor-air finding whose shortfall is the design's becomes a design review and its pending
    proposal is withdrawn."""
    executor = MigrationExecutor(connection)
    executor.migrate([BEFORE])
    old_apps = executor.loader.project_state([BEFORE]).apps
    old = old_apps.get_model("inspections", "Finding")
    # The inspections tables as they were before the migration (later migrations of the app are undone too).
    OldInspection = old_apps.get_model("inspections", "Inspection")
    OldEvaluation = old_apps.get_model("inspections", "Evaluation")

    def inspection(day: str):
        at = b.at(day, 11)
        return OldInspection.objects.create(
            client_uuid=uuid.uuid4(),
            organisation_id=wo.organisation_id,
            work_order_id=wo.pk,
            ahu_id=wo.ahu_id,
            technician_id=tech.pk,
            template_versions={},
            work_order_version_seen=wo.version,
            started_at=at,
            finished_at=at,
            received_at=at,
            complete=True,
            signature_name="Ana Field",
            signature_image="signatures/test.png",
            signed_at=at,
        )

    def evaluation(insp, item: str, check: str, reason: str, component_id=None, derived=None):
        return OldEvaluation.objects.create(
            inspection_id=insp.pk,
            check_name=check,
            item_key=item,
            component_id=component_id,
            verdict="fail",
            reason=reason,
            derived=derived or {},
        )

    wo, tech = make_visit(tasks=["drain_pan"])
    ahu, pan = wo.ahu, wo.ahu.components.get(name="Drain pan")
    rows, proposals = [], []
    for day in ("2025-01-06", "2025-02-03", "2025-03-03"):
        insp = inspection(day)
        ev = evaluation(insp, "drain_pan.pan_condition", "choice", "Pan: standing water", component_id=pan.pk)
        cwo = WorkOrderFactory(
            ahu=ahu, kind=WorkOrder.Kind.CORRECTIVE, approval=WorkOrder.Approval.PENDING, title="Drain pan"
        )
        proposals.append(cwo)
        rows.append(
            old.objects.create(
                organisation_id=wo.organisation_id,
                inspection_id=insp.pk,
                evaluation_id=ev.pk,
                ahu_id=ahu.pk,
                component_id=pan.pk,
                severity="medium",
                title="Drain pan: standing water",
                reason=ev.reason,
                opened_at=insp.finished_at,
                corrective_work_order_id=cwo.pk,
            )
        )
    other_ev = evaluation(insp, "drain_pan.drains_freely", "check", "Drains: not ok")
    other = old.objects.create(
        organisation_id=wo.organisation_id,
        inspection_id=insp.pk,
        evaluation_id=other_ev.pk,
        ahu_id=ahu.pk,
        severity="medium",
        title="Drain blocked",
        reason="Drains: not ok",
        opened_at=insp.finished_at,
    )
    # 40 % ± 3 against a 25 % design minimum (0.75 m³/s) on a space that needs 1.404 m³/s: a design matter.
    oa_ev = evaluation(
        insp,
        "ventilation_check.mixed_air",
        "oa_fraction_temperature",
        "by temperatures: …: fail",
        derived={
            "oa_fraction": 0.40,
            "uncertainty": 0.03,
            "design_min_oa_fraction": 0.25,
            "design_min_outdoor_airflow_m3s": 0.75,
            "required_outdoor_airflow_m3s": 1.404,
        },
    )
    oa_work = WorkOrderFactory(
        ahu=ahu, kind=WorkOrder.Kind.CORRECTIVE, approval=WorkOrder.Approval.PENDING, title="Outdoor air"
    )
    oa = old.objects.create(
        organisation_id=wo.organisation_id,
        inspection_id=insp.pk,
        evaluation_id=oa_ev.pk,
        ahu_id=ahu.pk,
        severity="high",
        title="Outdoor air below minimum",
        reason=oa_ev.reason,
        opened_at=insp.finished_at,
        corrective_work_order_id=oa_work.pk,
    )

    executor = MigrationExecutor(connection)
    executor.loader.build_graph()
    executor.migrate(executor.loader.graph.leaf_nodes())

    [kept] = Finding.objects.filter(ahu=ahu, state=Finding.State.OPEN, problem="drain_pan.pan_condition")
    first, second, third = (Finding.objects.get(pk=r.pk) for r in rows)
    assert kept == first and kept.times_seen == 3
    assert kept.opened_at == first.opened_at and kept.last_seen_at == third.opened_at
    assert kept.latest_inspection_id == third.inspection_id
    assert kept.corrective_work_order_id == proposals[0].pk
    for merged in (second, third):
        assert merged.state == Finding.State.CLOSED and merged.close_cause == Finding.CloseCause.MERGED
        assert merged.merged_into == kept and merged.closed_at == merged.opened_at
    states = {p.pk: WorkOrder.objects.get(pk=p.pk).state for p in proposals}
    assert states == {
        proposals[0].pk: WorkOrder.State.PLANNED,
        proposals[1].pk: WorkOrder.State.CANCELLED,
        proposals[2].pk: WorkOrder.State.CANCELLED,
    }
    assert AuditEvent.objects.filter(object_type="inspections.finding", action="finding_close").count() == 2
    assert AuditEvent.objects.filter(object_type="scheduling.workorder", action="transition").count() == 3
    other = Finding.objects.get(pk=other.pk)
    assert other.state == Finding.State.OPEN and other.problem == "drain_pan.drains_freely" and other.times_seen == 1
    oa = Finding.objects.get(pk=oa.pk)
    assert oa.kind == Finding.Kind.DESIGN_REVIEW and oa.problem == "outdoor_air" and oa.state == Finding.State.OPEN
    oa_work.refresh_from_db()
    assert oa_work.state == WorkOrder.State.CANCELLED and "design review" in oa_work.cancel_reason
