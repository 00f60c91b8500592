# A checklist item's note_required_when_not_ok is gone: a note is asked on every failed reading, whatever the item
# (inspections.flags), so nothing read the flag any more.

from django.db import migrations, models


class Migration(migrations.Migration):
    dependencies = [
        ("inspections", "0012_coil_balance_off_the_flow_reading"),
    ]

    operations = [
        # State only: taken back past this migration, the column comes back with a database default (False), so
        # code of this version that writes checklist items on the older schema (a rollback, the migration tests)
        # leaves it False instead of failing NOT NULL.
        migrations.SeparateDatabaseAndState(
            state_operations=[
                migrations.AlterField(
                    model_name="checklistitem",
                    name="note_required_when_not_ok",
                    field=models.BooleanField(default=False, db_default=False),
                ),
            ],
        ),
        migrations.RemoveField(
            model_name="checklistitem",
            name="note_required_when_not_ok",
        ),
    ]
