from django.core.management.base import BaseCommand, CommandError

from accounts.models import Organisation
from inventory.models import Site
from scheduling.engine import work_orders_generate


class Command(BaseCommand):
    help = "Generate the due preventive work orders and print what was created, moved and left alone."

    def add_arguments(self, parser):
        parser.add_argument("--horizon", type=int, default=90, help="days ahead (default 90)")
        parser.add_argument("--site", help="only this site code")
        parser.add_argument("--organisation", help="only this organisation slug")
        parser.add_argument("--dry-run", action="store_true", help="compute and print, write nothing")

    def handle(self, *args, horizon, site, organisation, dry_run, **options):
        if horizon < 1 or horizon > 730:
            raise CommandError(f"--horizon={horizon}: allowed 1 to 730 days")
        orgs = Organisation.objects.all()
        if organisation:
            orgs = orgs.filter(slug=organisation)
            if not orgs.exists():
                raise CommandError(f"--organisation={organisation!r} is not an organisation slug")
        totals = [0, 0, 0]
        for org in orgs:
            site_obj = None
            if site:
                site_obj = Site.objects.filter(organisation=org, code=site).first()
                if site_obj is None:
                    continue
            result = work_orders_generate(organisation=org, horizon_days=horizon, site=site_obj, dry_run=dry_run)
            totals = [totals[0] + result.created, totals[1] + result.moved, totals[2] + result.unchanged]
            self.stdout.write(
                f"{org.slug}: created {result.created}, moved {result.moved}, unchanged {result.unchanged}"
                + (" (dry run)" if dry_run else "")
            )
            for line in result.lines:
                self.stdout.write(f"  {line}")
            for line in result.skipped:
                self.stdout.write(f"  skipped: {line}")
        if site and not any(Site.objects.filter(organisation=o, code=site).exists() for o in orgs):
            raise CommandError(f"--site={site!r} is not a site code")
        self.stdout.write(f"total: created {totals[0]}, moved {totals[1]}, unchanged {totals[2]}")
