"""The shared shape of the CSV import commands: a file, an organisation, all rows or none."""

from pathlib import Path

from django.core.exceptions import ValidationError
from django.core.management.base import BaseCommand, CommandError

from accounts.models import Organisation


class CsvImportCommand(BaseCommand):
    """Subclasses set ``help`` and implement ``run(organisation, text)`` and ``report(result)``."""

    def add_arguments(self, parser):
        parser.add_argument("file")
        parser.add_argument("--organisation", required=True, help="organisation slug")

    def handle(self, *args, file, organisation, **options):
        org = Organisation.objects.filter(slug=organisation).first()
        if org is None:
            raise CommandError(f"--organisation={organisation!r} is not an organisation slug")
        try:
            text = Path(file).read_text(encoding="utf-8-sig")
        except OSError as exc:
            raise CommandError(f"cannot read {file}: {exc}") from exc
        try:
            result = self.run(organisation=org, text=text)
        except ValidationError as exc:
            raise CommandError("nothing imported:\n" + "\n".join(exc.message_dict.get("file", exc.messages))) from exc
        self.report(result)

    def run(self, *, organisation, text):
        raise NotImplementedError

    def report(self, result) -> None:
        raise NotImplementedError
