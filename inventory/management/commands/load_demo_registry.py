"""manage.py load_demo_registry — the invented demo registry (idempotent) and its logins."""

from django.core.management.base import BaseCommand

from engineering.formatting import count_text
from inventory.demo import demo_logins_table, demo_registry_load


class Command(BaseCommand):
    help = "Load the invented demo registry (organisations, people, sites, units). Running it again changes nothing."

    def handle(self, *args, **options):
        loaded = demo_registry_load()
        self.stdout.write(
            f"Demo registry: {count_text(len(loaded['sites']), 'site')}, "
            f"{count_text(len(loaded['buildings']), 'building')}, {count_text(len(loaded['ahus']), 'unit')}; "
            f"{count_text(loaded['changed'], 'record')} created or changed."
        )
        self.stdout.write(demo_logins_table(loaded["logins"]))
