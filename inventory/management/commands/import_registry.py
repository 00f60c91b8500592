"""manage.py import_registry --kind sites|ahus|components FILE [--organisation SLUG] [--dry-run]"""

from pathlib import Path

from django.core.management.base import BaseCommand, CommandError

from accounts.models import Organisation
from inventory import csv_io


def organisation_from(slug: str | None) -> Organisation:
    if slug:
        org = Organisation.objects.filter(slug=slug).first()
        if org is None:
            raise CommandError(f"--organisation={slug!r}: no organisation has this slug")
        return org
    orgs = list(Organisation.objects.filter(kind=Organisation.Kind.CONTRACTOR)[:2])
    if len(orgs) != 1:
        raise CommandError("name the organisation with --organisation SLUG")
    return orgs[0]


class Command(BaseCommand):
    help = "Import sites, units or components from CSV. Every row is checked; one bad row imports nothing."

    def add_arguments(self, parser):
        parser.add_argument("--kind", required=True, choices=csv_io.KINDS)
        parser.add_argument("file", type=Path)
        parser.add_argument("--organisation", help="slug of the maintaining organisation")
        parser.add_argument("--dry-run", action="store_true", help="check the file, save nothing")

    def handle(self, *args, kind, file, organisation, dry_run, **options):
        org = organisation_from(organisation)
        try:
            source = csv_io.decode_upload(file.read_bytes())
            result = csv_io.registry_import(kind=kind, source=source, organisation=org, dry_run=dry_run)
        except OSError as exc:
            raise CommandError(f"cannot read {file}: {exc.strerror}") from None
        except csv_io.ImportFailed as exc:
            for error in exc.errors:
                self.stderr.write(str(error))
            raise CommandError(str(exc)) from None
        verb = "would import" if dry_run else "imported"
        self.stdout.write(f"{kind}: {verb} {result.created} new, {result.updated} updated, into {org.slug}")
