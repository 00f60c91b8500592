"""``manage.py restore_data IN_DIR``: load a backup into an empty, migrated database and its media storage."""

from pathlib import Path

from django.core.exceptions import ValidationError
from django.core.management.base import BaseCommand, CommandError

from reports.backup import backup_restore


class Command(BaseCommand):
    help = "Restore a backup made by backup_data into an empty database; every file is checked against its SHA-256."

    def add_arguments(self, parser):
        parser.add_argument("in_dir", type=Path)

    def handle(self, *args, in_dir: Path, **options):
        try:
            result = backup_restore(in_dir=in_dir)
        except ValidationError as exc:
            raise CommandError(" ".join(exc.messages))
        self.stdout.write(f"Restored {result.records} records and {result.files} files from {result.path}")
