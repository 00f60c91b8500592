"""``overdue_on`` becomes the first day after the grace window (due + grace + 1 day).

Rows written before held due + grace, the last day still on time; each moves one day later.
"""

import datetime as dt

from django.db import migrations, models

BATCH = 2000


def _shift(apps, days: int) -> None:
    WorkOrder = apps.get_model("scheduling", "WorkOrder")
    step = dt.timedelta(days=days)
    rows = WorkOrder.objects.filter(overdue_on__isnull=False).only("id", "overdue_on").order_by("id")
    batch = []
    for wo in rows.iterator(chunk_size=BATCH):
        wo.overdue_on += step
        batch.append(wo)
        if len(batch) >= BATCH:
            WorkOrder.objects.bulk_update(batch, ["overdue_on"])
            batch = []
    if batch:
        WorkOrder.objects.bulk_update(batch, ["overdue_on"])


def forwards(apps, schema_editor):
    _shift(apps, 1)


def backwards(apps, schema_editor):
    _shift(apps, -1)


class Migration(migrations.Migration):
    dependencies = [
        ("scheduling", "0002_calendarfeed_meterreading_outdoortemperature_and_more"),
    ]

    operations = [
        migrations.AlterField(
            model_name="workorder",
            name="overdue_on",
            field=models.DateField(
                blank=True,
                help_text="First day it counts as overdue: the day after the grace window (due + grace + 1 day).",
                null=True,
            ),
        ),
        migrations.RunPython(forwards, backwards),
    ]
