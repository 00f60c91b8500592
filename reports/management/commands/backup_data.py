"""``manage.py backup_data OUT_DIR``: every Plenum record and stored file, with a manifest of checksums."""

from pathlib import Path

from django.core.exceptions import ValidationError
from django.core.management.base import BaseCommand, CommandError

from reports.backup import backup_create


class Command(BaseCommand):
    help = "Write a backup (data.json, media/, manifest.json with SHA-256 of each file) into a new folder."

    def add_arguments(self, parser):
        parser.add_argument("out_dir", type=Path)

    def handle(self, *args, out_dir: Path, **options):
        try:
            result = backup_create(out_dir=out_dir)
        except ValidationError as exc:
            raise CommandError(" ".join(exc.messages))
        self.stdout.write(f"Backed up {result.records} records and {result.files} files to {result.path}")
