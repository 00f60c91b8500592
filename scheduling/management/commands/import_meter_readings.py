from pathlib import Path

from django.core.exceptions import ValidationError
from django.core.management.base import BaseCommand, CommandError

from accounts.models import Organisation
from scheduling.services import meter_readings_import_csv


class Command(BaseCommand):
    help = (
        "Import run-hour meter readings from a building-automation CSV "
        "(unit_label,taken_at,hours[,component_label,is_reset]); all rows or none."
    )

    def add_arguments(self, parser):
        parser.add_argument("file")
        parser.add_argument("--organisation", required=True, help="organisation slug")

    def handle(self, *args, file, organisation, **options):
        org = Organisation.objects.filter(slug=organisation).first()
        if org is None:
            raise CommandError(f"--organisation={organisation!r} is not an organisation slug")
        try:
            rows = meter_readings_import_csv(organisation=org, text=Path(file).read_text(encoding="utf-8-sig"))
        except OSError as exc:
            raise CommandError(f"cannot read {file}: {exc}") from exc
        except ValidationError as exc:
            raise CommandError("nothing imported:\n" + "\n".join(exc.message_dict.get("file", exc.messages))) from exc
        self.stdout.write(f"imported {len(rows)} reading{'' if len(rows) == 1 else 's'}")
