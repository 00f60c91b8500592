"""Close the open findings that later visits already resolved, as inspections.services.findings now does live.

An open finding (not a freeze-protection one: its corrective retest closes it) is walked through its unit's
visits in time: its failures (fail evaluations of the same part and problem) and what resolves it (an ok
evaluation of the same part and problem on a visit with no failure of it; for a filter finding, that bank's
filters replaced, the old set's own reading on that visit aside). The first resolution closes the finding at
that visit's finish ("ok on a later visit" / "filters replaced"); failures after it form a NEW finding (open,
or closed in turn by a later resolution), no longer counted on the old one. Corrective work still awaiting
approval whose findings are then all closed is withdrawn (cancelled with a reason). Audited like the service.
"""

from django.db import migrations

# The rules below are copies of inspections.services.findings as it stood when this migration was written:
# a migration cannot import the service, which changes later while this step must keep doing what it did.
OUTDOOR_AIR = {"oa_fraction_temperature", "oa_fraction_co2"}
STEPS = {"check", "choice", "limits"}
FILTER_CHECKS = {"filter_loading", "filter_after_change"}
OPEN_STATES = {"planned", "assigned", "in_progress"}
NOTE = "withdrawn: its findings were resolved on a later visit before the work was approved"


def _problem(check, item):
    # As inspections.services.findings.problem_of at the time of this migration.
    if check in OUTDOOR_AIR:
        return "outdoor_air"
    if check in STEPS:
        return item
    return f"{check}:{item}"[:120]


def _audit(AuditEvent, *, organisation_id, object_type, pk, action, changes):
    AuditEvent.objects.create(
        organisation_id=organisation_id,
        object_type=object_type,
        object_id=str(pk),
        action=action,
        changes=changes,
    )


def _events(apps, f):
    """[(time, order, kind, evaluation or None)] of a finding's unit, part and problem from its first failure."""
    Evaluation = apps.get_model("inspections", "Evaluation")
    Reading = apps.get_model("inspections", "Reading")
    rows = Evaluation.objects.filter(
        inspection__ahu_id=f.ahu_id,
        component_id=f.component_id,
        amendment__isnull=True,
        verdict__in=("ok", "fail"),
        inspection__finished_at__gte=f.opened_at,
    ).select_related("inspection")
    evals = [e for e in rows if _problem(e.check_name, e.item_key) == f.problem]
    is_filter = f.condition_code == "filter_loaded" or f.problem.split(":", 1)[0] in FILTER_CHECKS
    # A failure on a visit stands over an ok of the same problem on it (the other method of the same check);
    # the old set's reading on the visit that replaced it does not.
    replaced_at = set()
    if is_filter and f.component_id is not None:
        replaced_at = set(
            Reading.objects.filter(
                inspection__ahu_id=f.ahu_id,
                component_id=f.component_id,
                item__template__code="filter_replace",
                item__key="replaced",
                value_text="ok",
                inspection__finished_at__gt=f.opened_at,
            ).values_list("inspection_id", flat=True)
        )
    failed_at = {
        e.inspection_id
        for e in evals
        if e.verdict == "fail" and not (e.check_name == "filter_loading" and e.inspection_id in replaced_at)
    }
    out = []
    for e in evals:
        at = e.inspection.finished_at
        if e.verdict == "fail":
            out.append((at, 0, "fail", e))
        elif e.inspection_id not in failed_at and e.inspection_id != f.inspection_id:
            out.append((at, 1, "ok_later", e))
    Inspection = apps.get_model("inspections", "Inspection")
    for insp in Inspection.objects.filter(pk__in=replaced_at - failed_at):
        out.append((insp.finished_at, 1, "replaced", None))
    out.sort(key=lambda x: (x[0], x[1], x[3].pk if x[3] is not None else 0))
    return out


def _segments(events):
    """[(failures, (time, cause) or None)]: runs of failures, each ended by the resolution that followed it."""
    out, fails = [], []
    for at, _, kind, ev in events:
        if kind == "fail":
            fails.append(ev)
        elif fails:
            out.append((fails, (at, kind)))
            fails = []
    if fails:
        out.append((fails, None))
    return out


def close_resolved(apps, schema_editor):
    Finding = apps.get_model("inspections", "Finding")
    WorkOrder = apps.get_model("scheduling", "WorkOrder")
    AuditEvent = apps.get_model("accounts", "AuditEvent")
    touched_wos = set()
    for f in Finding.objects.filter(state="open").exclude(condition_code="freeze_protection_failed").order_by("pk"):
        segments = _segments(_events(apps, f))
        if not segments or segments[0][1] is None:
            continue  # never resolved since it opened
        for n, (fails, end) in enumerate(segments):
            first, last = fails[0], fails[-1]
            if n == 0:
                row = f
            else:
                row = Finding.objects.filter(evaluation=first).first()  # a duplicate merged into it earlier
                if row is None:
                    row = Finding(
                        organisation_id=f.organisation_id,
                        evaluation=first,
                        ahu_id=f.ahu_id,
                        component_id=f.component_id,
                        kind=f.kind,
                        problem=f.problem,
                        severity=f.severity,
                        title=f.title,
                        condition_code=f.condition_code,
                    )
                row.inspection_id, row.opened_at, row.merged_into_id = (
                    first.inspection_id,
                    first.inspection.finished_at,
                    None,
                )
                row.corrective_work_order_id = None  # the next failing visit proposes work for it
            row.times_seen = len({e.inspection_id for e in fails})
            row.last_seen_at = last.inspection.finished_at
            row.latest_evaluation_id, row.latest_inspection_id = last.pk, last.inspection_id
            row.reason, row.reason_parts = last.reason[:500], last.reason_parts or []
            if end is None:
                row.state, row.closed_at, row.close_cause = "open", None, ""
            else:
                row.state, row.closed_at, row.close_cause = "closed", end[0], end[1]
            row.save()
            if end is not None:
                _audit(
                    AuditEvent,
                    organisation_id=row.organisation_id,
                    object_type="inspections.finding",
                    pk=row.pk,
                    action="finding_close",
                    changes={"cause": end[1], "note": "resolved by a later visit (data migration)"},
                )
            if n > 0:
                _audit(
                    AuditEvent,
                    organisation_id=row.organisation_id,
                    object_type="inspections.finding",
                    pk=row.pk,
                    action="finding_split",
                    changes={"from": f.pk, "note": "failures after the finding was resolved (data migration)"},
                )
        if f.corrective_work_order_id:
            touched_wos.add(f.corrective_work_order_id)
    for wo in WorkOrder.objects.filter(pk__in=touched_wos, approval="pending", state__in=OPEN_STATES).order_by("pk"):
        if Finding.objects.filter(corrective_work_order=wo, state="open").exists():
            continue
        wo.state, wo.cancel_reason, wo.version = "cancelled", NOTE[:300], wo.version + 1
        wo.save(update_fields=["state", "cancel_reason", "version"])
        _audit(
            AuditEvent,
            organisation_id=wo.organisation_id,
            object_type="scheduling.workorder",
            pk=wo.pk,
            action="transition",
            changes={"to": "cancelled", "reason": NOTE},
        )


class Migration(migrations.Migration):
    dependencies = [
        ("inspections", "0008_findings_resolved_later"),
        ("scheduling", "0003_overdue_on_after_grace"),
        ("accounts", "0003_change_stamp"),
    ]

    operations = [migrations.RunPython(close_resolved, migrations.RunPython.noop)]
