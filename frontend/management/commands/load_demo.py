"""manage.py load_demo — the invented demo scenario, idempotent; prints the demo logins."""

from django.conf import settings
from django.core.management.base import BaseCommand

from engineering.formatting import count_text
from frontend.demo import demo_load
from inventory.demo import demo_logins_table


class Command(BaseCommand):
    help = "Load the invented demo: registry, a year of history, the schedule and today's assignments."

    def handle(self, *args, **options):
        summary = demo_load()
        registry = summary["registry"]
        self.stdout.write(
            f"Registry: {len(registry['sites'])} sites, {len(registry['ahus'])} units "
            f"({count_text(registry['changed'], 'record')} created or changed)."
        )
        for slug, counts in summary["history"].items():
            self.stdout.write(
                f"History for {slug}: " + ", ".join(f"{v} {k.replace('_', ' ')}" for k, v in counts.items())
            )
        for slug, result in summary["generated"].items():
            self.stdout.write(
                f"Schedule for {slug}: {result.created} due occurrences created, {result.moved} moved, "
                f"{result.unchanged} unchanged; {result.work_orders_created} new work orders."
            )
        self.stdout.write(f"Assigned {count_text(summary['assigned'], 'upcoming work order')} to the demo technicians.")
        self.stdout.write(f"Verified {count_text(summary.get('verified', 0), 'older visit')} as the demo supervisor.")
        self.stdout.write("")
        self.stdout.write(demo_logins_table(registry["logins"]))
        self.stdout.write(f"Open {settings.PLENUM_PUBLIC_URL.rstrip('/')} and sign in.")
