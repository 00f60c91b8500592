"""A coil's heat balance is a check of five readings, not the flow's own verdict: take the balance's verdict and
reason off the flow readings it was copied to (inspections.evaluation.results.SPANNING_CHECKS, as the sync now
stores them). Only a reading that carries exactly the balance's verdict and reason is cleared; the balance's own
judgement (its Evaluation) is kept and shown on a row of its own."""

from django.db import migrations


def _clear(apps, schema_editor):
    Evaluation = apps.get_model("inspections", "Evaluation")
    Reading = apps.get_model("inspections", "Reading")
    for e in Evaluation.objects.filter(check_name="coil_balance", amendment__isnull=True).iterator():
        code, _, key = e.item_key.partition(".")
        Reading.objects.filter(
            inspection_id=e.inspection_id,
            component_id=e.component_id,
            item__template__code=code,
            item__key=key,
            verdict=e.verdict,
            reason=e.reason,
        ).update(verdict="", reason="", reason_parts=[])


class Migration(migrations.Migration):
    dependencies = [("inspections", "0011_finding_sources")]

    operations = [migrations.RunPython(_clear, migrations.RunPython.noop)]
