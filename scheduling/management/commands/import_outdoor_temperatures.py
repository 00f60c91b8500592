from pathlib import Path

from django.core.exceptions import ValidationError
from django.core.management.base import BaseCommand, CommandError

from accounts.models import Organisation
from scheduling.services import outdoor_temperatures_import_csv


class Command(BaseCommand):
    help = (
        "Import outdoor temperatures: daily site_code,date,min_c,max_c[,mean_c] or hourly "
        "site_code,timestamp,temperature_c; all rows or none."
    )

    def add_arguments(self, parser):
        parser.add_argument("file")
        parser.add_argument("--organisation", required=True, help="organisation slug")

    def handle(self, *args, file, organisation, **options):
        org = Organisation.objects.filter(slug=organisation).first()
        if org is None:
            raise CommandError(f"--organisation={organisation!r} is not an organisation slug")
        try:
            counts = outdoor_temperatures_import_csv(organisation=org, text=Path(file).read_text(encoding="utf-8-sig"))
        except OSError as exc:
            raise CommandError(f"cannot read {file}: {exc}") from exc
        except ValidationError as exc:
            raise CommandError("nothing imported:\n" + "\n".join(exc.message_dict.get("file", exc.messages))) from exc
        for code, n in counts.items():
            self.stdout.write(f"{code}: {n} day{'' if n == 1 else 's'}")
