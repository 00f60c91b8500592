"""Backup and restore of every Plenum record and every file a record points to.

A backup is a folder:

- ``data.json``: ``dumpdata`` of the Plenum apps (with natural keys for users,
  permissions and content types, so it loads into a fresh database);
- ``media/<name>``: a copy of each stored file (signatures, photos, thumbnails, PDFs);
- ``manifest.json``: when, the record count per model, and for each file the
  record and field that names it, its size and SHA-256.

``backup_restore`` loads such a folder into an empty database (it refuses a
database that already holds Plenum records), after checking every file against
its checksum, and then checks that every count matches the manifest.

Lives in ``reports`` because it must import every app below it.
"""

from __future__ import annotations

import hashlib
import json
import shutil
from dataclasses import dataclass
from pathlib import Path

from django.apps import apps
from django.core.exceptions import ValidationError
from django.core.files.storage import default_storage
from django.core.management import call_command
from django.db import models, transaction
from django.utils import timezone

FORMAT = 1
# What makes up Plenum's data. Permissions and content types are recreated by `migrate`; users point to them
# by natural key. API tokens are included so phones keep working after a restore: keep backups secret.
DUMPED = ["auth.group", "accounts", "authtoken", "inventory", "scheduling", "inspections", "reports"]
NOT_DUMPED: list[str] = []
CHUNK = 1024 * 1024


@dataclass(frozen=True)
class BackupResult:
    path: Path
    records: int
    files: int


def _models() -> list[type[models.Model]]:
    out = []
    for label in DUMPED:
        if "." in label:
            out.append(apps.get_model(label))
        else:
            out += list(apps.get_app_config(label).get_models())
    return [m for m in out if m._meta.label not in NOT_DUMPED]


def _sha256(read) -> str:
    digest = hashlib.sha256()
    while block := read(CHUNK):
        digest.update(block)
    return digest.hexdigest()


def _file_refs():
    """(model label, pk, field name, stored name) of every non-empty file field."""
    for model in _models():
        fields = [f for f in model._meta.concrete_fields if isinstance(f, models.FileField)]
        if not fields:
            continue
        for row in model.objects.order_by("pk").values("pk", *(f.name for f in fields)).iterator():
            for f in fields:
                if row[f.name]:
                    yield model._meta.label, row["pk"], f.name, row[f.name]


def record_counts() -> dict[str, int]:
    return {m._meta.label: m.objects.count() for m in _models()}


def backup_create(*, out_dir: Path) -> BackupResult:
    """Write a backup into ``out_dir`` (created; must be empty). A missing stored file fails the backup."""
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    if any(out_dir.iterdir()):
        raise ValidationError({"out_dir": [f"{out_dir} is not empty; a backup goes into a new folder"]})
    # One snapshot for the records and the file list, so they agree with each other.
    with transaction.atomic():
        counts = record_counts()
        call_command(
            "dumpdata",
            *DUMPED,
            exclude=NOT_DUMPED,
            natural_foreign=True,
            output=str(out_dir / "data.json"),
            verbosity=0,
        )
        refs = list(_file_refs())
    files, missing = [], []
    for label, pk, field, name in refs:
        if not default_storage.exists(name):
            missing.append(f"{label} {pk} {field}: {name}")
            continue
        target = out_dir / "media" / name
        target.parent.mkdir(parents=True, exist_ok=True)
        with default_storage.open(name, "rb") as src, target.open("wb") as dst:
            shutil.copyfileobj(src, dst, CHUNK)
        with target.open("rb") as fh:
            digest = _sha256(fh.read)
        files.append(
            {"model": label, "pk": pk, "field": field, "name": name, "size": target.stat().st_size, "sha256": digest}
        )
    if missing:
        raise ValidationError({"files": [f"stored files are missing: {'; '.join(missing[:20])}"]})
    manifest = {
        "format": FORMAT,
        "created_at": timezone.now().isoformat(),
        "apps": DUMPED,
        "counts": counts,
        "files": files,
    }
    (out_dir / "manifest.json").write_text(json.dumps(manifest, indent=2, sort_keys=True))
    return BackupResult(out_dir, sum(counts.values()), len(files))


def backup_verify(*, in_dir: Path) -> dict:
    """The manifest of a backup folder, after checking that every file in it has its recorded checksum."""
    in_dir = Path(in_dir)
    try:
        manifest = json.loads((in_dir / "manifest.json").read_text())
    except (OSError, ValueError) as exc:
        raise ValidationError({"in_dir": [f"{in_dir} has no readable manifest.json ({exc})"]})
    if manifest.get("format") != FORMAT or not (in_dir / "data.json").exists():
        raise ValidationError({"in_dir": [f"{in_dir} is not a Plenum backup of format {FORMAT}"]})
    bad = []
    for entry in manifest["files"]:
        path = in_dir / "media" / entry["name"]
        if not path.is_file():
            bad.append(f"{entry['name']}: missing")
            continue
        with path.open("rb") as fh:
            if _sha256(fh.read) != entry["sha256"]:
                bad.append(f"{entry['name']}: checksum differs")
    if bad:
        raise ValidationError({"files": [f"the backup is damaged: {'; '.join(bad[:20])}"]})
    return manifest


def backup_restore(*, in_dir: Path) -> BackupResult:
    """Load a backup into an empty, migrated database and its files into the media storage."""
    in_dir = Path(in_dir)
    manifest = backup_verify(in_dir=in_dir)
    present = {label: n for label, n in record_counts().items() if n}
    if present:
        raise ValidationError(
            {
                "database": [
                    f"the database already holds records ({', '.join(sorted(present))}); restore into an "
                    "empty database (migrate a new one)"
                ]
            }
        )
    written = []
    try:
        for entry in manifest["files"]:
            name = entry["name"]
            if default_storage.exists(name):
                with default_storage.open(name, "rb") as fh:
                    if _sha256(fh.read) == entry["sha256"]:
                        continue
                raise ValidationError({"files": [f"{name} already exists in the media storage with other content"]})
            with (in_dir / "media" / name).open("rb") as fh:
                saved = default_storage.save(name, fh)
            written.append(saved)
            if saved != name:
                raise ValidationError({"files": [f"{name} could not be stored under its own name ({saved})"]})
        with transaction.atomic():
            call_command("loaddata", str(in_dir / "data.json"), verbosity=0)
            counts = record_counts()
            if counts != manifest["counts"]:
                diff = {
                    k: (manifest["counts"].get(k), counts.get(k))
                    for k in counts
                    if counts[k] != manifest["counts"].get(k)
                }
                raise ValidationError({"counts": [f"restored counts differ from the backup (expected, got): {diff}"]})
    except BaseException:
        for name in written:
            default_storage.delete(name)
        raise
    _reset_sequences()
    return BackupResult(in_dir, sum(counts.values()), len(manifest["files"]))


def _reset_sequences() -> None:
    """After loading rows with their ids, PostgreSQL's id sequences must move past them."""
    from django.core.management.color import no_style
    from django.db import connection

    statements = connection.ops.sequence_reset_sql(no_style(), _models())
    if statements:
        with connection.cursor() as cursor:
            for sql in statements:
                cursor.execute(sql)
