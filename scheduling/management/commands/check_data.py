"""manage.py check_data [--repair]: stored rows that break the input policy (scheduling.services.data_check)."""

from django.core.management.base import BaseCommand

from engineering.formatting import count_text
from scheduling.services.data_check import stored_data_check


class Command(BaseCommand):
    help = (
        "List stored rows that break the input policy (dates outside 2000 to ten years ahead, numbers that are not "
        "finite or out of range, rules out of bounds); --repair empties what is plainly not a value where the field "
        "may be empty, and reports the rest for a person to correct."
    )

    def add_arguments(self, parser):
        parser.add_argument("--repair", action="store_true", help="empty non-finite numbers and impossible dates")

    def handle(self, *args, repair: bool = False, **options):
        result = stored_data_check(repair=repair)
        for line in result.problems:
            self.stdout.write(f"problem: {line}")
        for line in result.repaired:
            self.stdout.write(f"repaired: {line}")
        self.stdout.write(f"{count_text(len(result.problems), 'problem')} found, {len(result.repaired)} repaired")
        if result.problems and not repair:
            self.stdout.write("run again with --repair to empty what can be emptied safely; correct the rest by hand")
