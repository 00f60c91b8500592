"""Each fault open before faults had findings gets its one finding (source building-automation trends), said as the
judging says it (``automation.fault_findings.finding_fields``) and holding the fault's corrective work."""

from django.db import migrations

OPEN_WORK = ("planned", "assigned", "in_progress")


def forwards(apps, schema_editor):
    from automation.fault_findings import SOURCE, finding_fields
    from inspections.reasons import render
    from inspections.services.findings import source_problem

    Fault = apps.get_model("automation", "Fault")
    Finding = apps.get_model("inspections", "Finding")
    faults = (
        Fault.objects.filter(state="open", finding__isnull=True)
        .select_related("ahu__building__site", "component", "corrective_work_order")
        .order_by("pk")
    )
    for fault in faults:
        f = finding_fields(fault)
        problem = source_problem(source=SOURCE, rule=f["rule"])
        finding = Finding.objects.filter(
            state="open", ahu_id=fault.ahu_id, component_id=fault.component_id, problem=problem
        ).first()
        if finding is None:
            finding = Finding.objects.create(
                organisation_id=fault.ahu.building.site.organisation_id,
                ahu_id=fault.ahu_id,
                component_id=fault.component_id,
                source=SOURCE,
                rule=f["rule"],
                evidence=f["evidence"],
                problem=problem,
                kind="corrective",
                severity=f["severity"],
                title=f["title"][:200],
                reason=render(f["reason_parts"], "si"),
                reason_parts=f["reason_parts"],
                condition_code=f["condition_code"],
                opened_at=f["first_seen_at"],
                last_seen_at=f["last_seen_at"],
                times_seen=f["times_seen"],
                corrective_work_order_id=fault.corrective_work_order_id,
            )
        fault.finding_id = finding.pk
        fault.save(update_fields=["finding"])


def backwards(apps, schema_editor):
    Fault = apps.get_model("automation", "Fault")
    Finding = apps.get_model("inspections", "Finding")
    Fault.objects.update(finding=None)
    Finding.objects.filter(source="bas_trend").delete()


class Migration(migrations.Migration):
    dependencies = [
        ("automation", "0004_fault_findings"),
    ]

    operations = [migrations.RunPython(forwards, backwards)]
