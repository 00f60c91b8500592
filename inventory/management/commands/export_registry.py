"""manage.py export_registry --kind sites|ahus|components [--site CODE] [--organisation SLUG] FILE"""

import sys
from pathlib import Path

from django.core.management.base import BaseCommand, CommandError

from engineering.formatting import count_text
from inventory import csv_io
from inventory.models import Site


class Command(BaseCommand):
    help = "Export sites, units or components as CSV, in the format import_registry reads. FILE '-' is stdout."

    def add_arguments(self, parser):
        parser.add_argument("--kind", required=True, choices=csv_io.KINDS)
        parser.add_argument("file")
        parser.add_argument("--site", help="only the site with this code")
        parser.add_argument("--organisation", help="only this organisation's sites (slug)")

    def handle(self, *args, kind, file, site, organisation, **options):
        # An operator's command on the server, not a person's request: all sites, narrowed by the options.
        sites = Site.objects.all()
        if organisation:
            sites = sites.filter(organisation__slug=organisation)
        if site:
            sites = sites.filter(code=site)
            if not sites.exists():
                raise CommandError(f"--site={site!r}: no such site")
        if file == "-":
            count = csv_io.registry_export(kind=kind, sites=sites, out=sys.stdout)
            return
        try:
            with Path(file).open("w", encoding="utf-8", newline="") as out:
                count = csv_io.registry_export(kind=kind, sites=sites, out=out)
        except OSError as exc:
            raise CommandError(f"cannot write {file}: {exc.strerror}") from None
        self.stdout.write(f"{kind}: wrote {count_text(count, 'row')} to {file}")
