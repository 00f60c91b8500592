"""Test data for reports, made with the other apps' own installers and models.

The sync service is the normal way inspections come in; these builders write the
same rows directly so report tests stay small and independent of the phone contract.
"""

from __future__ import annotations

import datetime as dt
import io
import uuid

from django.core.files.base import ContentFile
from PIL import Image

from inspections.models import Amendment, Evaluation, Finding, Inspection, Photo, Reading
from inspections.services.findings import problem_of
from scheduling.models import TaskDefinition, WorkOrder, overdue_day
from scheduling.services.library import task_library_install
from tests.factories.scheduling import add_task

UTC = dt.UTC


def at(day: str, hour: int = 10) -> dt.datetime:
    return dt.datetime.fromisoformat(day).replace(hour=hour, tzinfo=UTC)


def library() -> dict[str, TaskDefinition]:
    task_library_install()
    return {t.code: t for t in TaskDefinition.objects.filter(organisation__isnull=True)}


def preventive(
    ahu,
    task: TaskDefinition,
    due: str,
    *,
    done: str | None = None,
    state: str | None = None,
    component=None,
    **wo_fields,
) -> WorkOrder:
    """A preventive visit with one task occurrence; ``done`` completes both on that day. Its first overdue day is
    the scheduler's (``overdue_day`` of the due date and the task's grace) unless ``overdue_on`` is given."""
    done_at = at(done) if done else None
    wo_fields.setdefault("overdue_on", overdue_day(dt.date.fromisoformat(due), task.grace_days))
    wo = WorkOrder.objects.create(
        organisation=ahu.building.site.organisation,
        ahu=ahu,
        kind=WorkOrder.Kind.PREVENTIVE,
        title=wo_fields.pop("title", task.name),
        due_date=dt.date.fromisoformat(due),
        state=state or (WorkOrder.State.COMPLETED if done else WorkOrder.State.PLANNED),
        completed_at=done_at,
        **wo_fields,
    )
    add_task(wo, task, component, key=f"{due}-{uuid.uuid4().hex[:8]}", completed_at=done_at)
    return wo


def png_bytes(colour=(40, 90, 140), size=(64, 48)) -> bytes:
    out = io.BytesIO()
    Image.new("RGB", size, colour).save(out, format="PNG")
    return out.getvalue()


def inspection(work_order: WorkOrder, technician, *, finished: str, unit_system: str = "si") -> Inspection:
    finished_at = at(finished, 11)
    insp = Inspection(
        client_uuid=uuid.uuid4(),
        organisation=work_order.organisation,
        work_order=work_order,
        ahu=work_order.ahu,
        technician=technician,
        template_versions={},
        unit_system=unit_system,
        work_order_version_seen=work_order.version,
        started_at=finished_at - dt.timedelta(minutes=50),
        finished_at=finished_at,
        received_at=finished_at,
        complete=True,
        work_order_completed=True,
        signature_name=str(technician),
        signed_at=finished_at,
    )
    insp.signature_image.save("sig.png", ContentFile(png_bytes((0, 0, 0), (120, 40))), save=False)
    insp.save()
    return insp


def reading(
    insp: Inspection, api_key: str, *, component=None, value_si=None, value_text="", verdict="", reason="", note=""
) -> Reading:
    from inspections.services.library import templates_current  # imported late: the package is still growing

    code, key = api_key.split(".")
    item = templates_current(codes=[code])[code].items.get(key=key)
    insp_versions = dict(insp.template_versions)
    if code not in insp_versions:
        insp_versions[code] = item.template.version
        Inspection.objects.filter(pk=insp.pk).update(template_versions=insp_versions)
        insp.template_versions = insp_versions
    return Reading.objects.create(
        inspection=insp,
        item=item,
        component=component,
        value_si=value_si,
        value_text=value_text,
        verdict=verdict,
        reason=reason,
        note=note,
    )


def evaluation(
    insp: Inspection,
    check: str,
    item_key: str,
    *,
    verdict: str,
    reason: str,
    component=None,
    derived=None,
    method="",
    condition_code="",
) -> Evaluation:
    return Evaluation.objects.create(
        inspection=insp,
        check_name=check,
        item_key=item_key,
        component=component,
        verdict=verdict,
        reason=reason,
        derived=derived or {},
        method=method,
        condition_code=condition_code,
    )


def finding(
    insp: Inspection,
    ev: Evaluation,
    *,
    severity: str,
    title: str,
    opened: str,
    corrective: WorkOrder | None = None,
    closed: str | None = None,
) -> Finding:
    return Finding.objects.create(
        organisation=insp.organisation,
        inspection=insp,
        evaluation=ev,
        ahu=insp.ahu,
        component=ev.component,
        problem=problem_of(check=ev.check_name, item=ev.item_key),
        severity=severity,
        title=title,
        reason=ev.reason,
        condition_code=ev.condition_code,
        state=Finding.State.CLOSED if closed else Finding.State.OPEN,
        opened_at=at(opened),
        last_seen_at=at(opened),
        latest_evaluation=ev,
        latest_inspection=insp,
        closed_at=at(closed) if closed else None,
        corrective_work_order=corrective,
    )


def photo(insp: Inspection, user, *, item_key: str, component=None) -> Photo:
    data = png_bytes()
    p = Photo(
        client_uuid=uuid.uuid4(),
        organisation=insp.organisation,
        work_order=insp.work_order,
        inspection=insp,
        item_key=item_key,
        component=component,
        content_type="image/png",
        width=64,
        height=48,
        size_bytes=len(data),
        uploaded_by=user,
    )
    p.image.save("p.png", ContentFile(data), save=False)
    p.thumbnail.save("t.png", ContentFile(data), save=False)
    p.save()
    return p


def amendment(insp: Inspection, user, *, reason: str, changes: list, created: str) -> Amendment:
    return Amendment.objects.create(
        inspection=insp, created_by=user, reason=reason, changes=changes, created_at=at(created, 15)
    )


FREEZE_STEPS_PER_HEATER = (
    "stage_on_temp",
    "stages",
    "airflow_interlock",
    "primary_limit",
    "high_limit",
    "set_points_restored",
)
FREEZE_STEPS_PER_UNIT = ("freeze_trip_temp", "freeze_trip_test")


def freeze_test(
    work_order: WorkOrder, technician, *, finished: str, heaters=(), verdicts: dict | None = None
) -> Inspection:
    """A preheater and freeze-protection test: every step of the current template judged ok unless
    ``verdicts`` ({step key: verdict}) says otherwise; per-heater steps for each of ``heaters``."""
    verdicts = verdicts or {}
    insp = inspection(work_order, technician, finished=finished)
    steps = [(k, h) for h in heaters for k in FREEZE_STEPS_PER_HEATER] + [(k, None) for k in FREEZE_STEPS_PER_UNIT]
    for key, heater in steps:
        v = verdicts.get(key, "ok")
        evaluation(
            insp,
            "limits" if key.endswith("temp") else "check",
            f"preheater_freeze.{key}",
            component=heater,
            verdict=v,
            reason=f"{key.replace('_', ' ')}: {v}",
            condition_code="freeze_protection_failed",
        )
    return insp
