"""manage.py load_demo — for now only the registry part of the demo.

The full demo (registry, then maintenance rules, then a year of history) is
chained by a later top-level command; this one stays thin until then.
"""

from inventory.management.commands.load_demo_registry import Command as RegistryCommand


class Command(RegistryCommand):
    help = "Load the invented demo scenario (currently: the registry). Idempotent; prints the demo logins."
