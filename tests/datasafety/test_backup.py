"""Backup and restore: a dump and load round trip keeps every record and every file reference with its checksum."""

import hashlib
import json

import pytest
from django.core.files.storage import default_storage
from django.core.management import CommandError, call_command
from django.test import override_settings

from inspections.models import Inspection, Photo
from reports.backup import _file_refs, record_counts
from reports.models import Report
from tests.tenancy.world import build


def _checksums() -> dict[tuple, str]:
    out = {}
    for label, pk, field, name in _file_refs():
        with default_storage.open(name, "rb") as fh:
            out[(label, pk, field, name)] = hashlib.sha256(fh.read()).hexdigest()
    return out


@pytest.mark.django_db(transaction=True)
def test_backup_and_restore_into_an_empty_database_round_trip(tmp_path):
    """Every record count is equal after the restore and every file reference opens with the same SHA-256."""
    build()
    counts = record_counts()
    sums = _checksums()
    assert counts["inspections.Inspection"] and counts["inspections.Photo"] and counts["reports.Report"]
    assert len(sums) >= 4 * 3  # per site: signature, photo, thumbnail, report PDF
    out = tmp_path / "backup"
    call_command("backup_data", str(out), verbosity=0)
    manifest = json.loads((out / "manifest.json").read_text())
    assert manifest["counts"] == counts
    assert {(f["model"], f["pk"], f["field"], f["name"]): f["sha256"] for f in manifest["files"]} == sums

    call_command("flush", interactive=False, verbosity=0)
    assert not any(record_counts().values())
    with override_settings(MEDIA_ROOT=tmp_path / "fresh-media"):
        assert not default_storage.exists(next(iter(sums))[3])
        call_command("restore_data", str(out), verbosity=0)
        assert record_counts() == counts
        assert _checksums() == sums
        # The restored records work: files open through their fields, relations resolve.
        photo = Photo.objects.select_related("work_order__ahu").first()
        assert photo.image.open("rb").read(4)
        insp = Inspection.objects.first()
        assert insp.readings.count() and insp.signature_image.size
        assert Report.objects.first().file.read(4) == b"%PDF"
        # A new record after the restore gets a fresh id (PostgreSQL sequences moved past the loaded ids).
        from tests.factories.accounts import OrganisationFactory

        assert OrganisationFactory().pk


@pytest.mark.django_db(transaction=True)
def test_restore_refuses_a_database_that_is_not_empty(tmp_path):
    build()
    call_command("backup_data", str(tmp_path / "b"), verbosity=0)
    with pytest.raises(CommandError, match="already holds records"):
        call_command("restore_data", str(tmp_path / "b"), verbosity=0)


@pytest.mark.django_db(transaction=True)
def test_a_damaged_backup_is_refused_before_anything_is_loaded(tmp_path):
    """A file whose checksum no longer matches stops the restore; the database stays empty."""
    build()
    out = tmp_path / "b"
    call_command("backup_data", str(out), verbosity=0)
    victim = json.loads((out / "manifest.json").read_text())["files"][0]["name"]
    (out / "media" / victim).write_bytes(b"tampered")
    call_command("flush", interactive=False, verbosity=0)
    with override_settings(MEDIA_ROOT=tmp_path / "fresh"), pytest.raises(CommandError, match="checksum"):
        call_command("restore_data", str(out), verbosity=0)
    assert not any(record_counts().values())


@pytest.mark.django_db
def test_backup_goes_into_a_new_folder(tmp_path):
    (tmp_path / "old.txt").write_text("x")
    with pytest.raises(CommandError, match="not empty"):
        call_command("backup_data", str(tmp_path), verbosity=0)
