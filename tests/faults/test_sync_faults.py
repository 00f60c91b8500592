"""The sync endpoint under faults: a batch cut off mid-way, a database that refuses writes.

Each form is its own transaction (inspections/services/sync.py): a fault in
form k leaves forms 1…k-1 stored whole, form k not at all, and the retry of
the same batch answers ``duplicate`` for the stored ones and stores the rest
once. A database that refuses the write answers 503 with a message, so the
phone keeps the form in its outbox (see test_outbox_js.py).
"""

import pytest
from django.core.files.storage import default_storage
from django.db import DatabaseError, OperationalError

from inspections.models import Evaluation, Inspection, Photo, Reading
from inspections.services import inspection_sync
from inspections.services import sync as sync_module
from tests.factories.inspections import image_bytes, make_visit
from tests.tenancy.world import filter_form

SYNC = "/api/inspections/sync/"
FORMS = 5


def _batch():
    wo, tech = make_visit(tasks=["filter_check"])
    orders = [wo] + [
        make_visit(tasks=["filter_check"], organisation=wo.organisation, technician=tech)[0] for _ in range(FORMS - 1)
    ]
    forms = [filter_form(o) for o in orders]
    return tech, forms


def _fail_on(monkeypatch, target: str, nth: int, exc: Exception):
    """Make ``sync_module.<target>`` raise ``exc`` on its nth call (inside the form's transaction)."""
    obj, name = target.rsplit(".", 1)
    holder = {"findings_service": sync_module.findings_service}[obj]
    real = getattr(holder, name)
    calls = {"n": 0}

    def flaky(*args, **kwargs):
        calls["n"] += 1
        if calls["n"] == nth:
            raise exc
        return real(*args, **kwargs)

    monkeypatch.setattr(holder, name, flaky)


def _stored_files() -> set[str]:
    names = set()
    for insp in Inspection.objects.all():
        names.add(insp.signature_image.name)
    for p in Photo.objects.all():
        names |= {p.image.name, p.thumbnail.name}
    return names


def _files_on_disk() -> set[str]:
    out = set()
    for top in ("signatures", "inspection-photos"):
        stack = [top]
        while stack:
            d = stack.pop()
            if not default_storage.exists(d):
                continue
            dirs, files = default_storage.listdir(d)
            stack += [f"{d}/{x}" for x in dirs]
            out |= {f"{d}/{x}" for x in files}
    return out


@pytest.mark.django_db
def test_a_batch_cut_off_after_form_k_loses_nothing_and_stores_nothing_twice(monkeypatch):
    """A crash inside form 3 of 5: form 3 not stored at all and answered "error" (the phone keeps it); the forms
    after it are not held back; the retry stores form 3 once."""
    tech, forms = _batch()
    files_before = _files_on_disk()
    _fail_on(monkeypatch, "findings_service.findings_open", 3, RuntimeError("worker killed mid-batch"))
    results = inspection_sync(user=tech, forms=forms)
    assert [r["status"] for r in results] == ["stored", "stored", "error", "stored", "stored"]
    assert results[2]["client_uuid"] == forms[2]["client_uuid"] and results[2]["inspection_id"] is None
    assert Inspection.objects.count() == 4
    assert Reading.objects.count() == 4 * 7
    assert not Inspection.objects.filter(client_uuid=forms[2]["client_uuid"]).exists()
    # The signature file written for the cut-off form is removed again.
    assert _files_on_disk() - files_before == _stored_files() - files_before
    monkeypatch.undo()
    results = inspection_sync(user=tech, forms=forms)
    assert [r["status"] for r in results] == ["duplicate", "duplicate", "stored", "duplicate", "duplicate"]
    assert Inspection.objects.count() == FORMS
    assert Reading.objects.count() == FORMS * 7
    assert Evaluation.objects.values("inspection_id").distinct().count() == FORMS
    again = inspection_sync(user=tech, forms=forms)
    assert {r["status"] for r in again} == {"duplicate"}
    assert Inspection.objects.count() == FORMS


@pytest.mark.django_db
@pytest.mark.parametrize("exc", [OperationalError("server closed the connection"), DatabaseError("disk full")])
def test_a_database_refusing_the_write_is_a_503_with_a_message(api_client, monkeypatch, exc):
    """The phone gets 503 and a message saying to send again; nothing of the request is half-stored.

    The request's forms are one transaction (a savepoint per form, the answer versions moved once at its
    end): the database refusing form 2 leaves nothing of the request stored, and the phone, which keeps
    every form on a 503, sends them all again."""
    tech, forms = _batch()
    forms = forms[:3]
    files_before = _files_on_disk()
    _fail_on(monkeypatch, "findings_service.findings_open", 2, exc)
    api_client.force_authenticate(tech)
    res = api_client.post(SYNC, {"forms": forms}, format="json")
    assert res.status_code == 503, res.content
    assert res["Retry-After"]
    body = res.json()
    assert "send it again" in body["detail"] and type(exc).__name__ in body["detail"]
    assert Inspection.objects.count() == 0  # the request's transaction was rolled back whole
    assert _files_on_disk() == files_before  # and the first form's signature file with it
    monkeypatch.undo()
    res = api_client.post(SYNC, {"forms": forms}, format="json")
    assert res.status_code == 200
    assert [r["status"] for r in res.json()["results"]] == ["stored", "stored", "stored"]
    assert Inspection.objects.count() == 3


@pytest.mark.django_db
def test_a_refused_photo_upload_write_is_a_503(api_client, monkeypatch):
    """The photo upload answers 503, too, when the database refuses the row; no file is left behind."""
    wo, tech = make_visit(tasks=["filter_check"])
    before = _files_on_disk()

    def refuse(*args, **kwargs):
        raise OperationalError("could not write")

    monkeypatch.setattr(Photo, "save", refuse)
    api_client.force_authenticate(tech)
    from django.core.files.uploadedfile import SimpleUploadedFile

    res = api_client.post(
        "/api/inspections/photos/",
        {
            "file": SimpleUploadedFile("p.jpg", image_bytes(), content_type="image/jpeg"),
            "client_uuid": "2f6a5d1e-2b7c-4c1e-9a55-3d2f1b7e9c02",
            "work_order": str(wo.public_id),
        },
    )
    assert res.status_code == 503, res.content
    assert "send it again" in res.json()["detail"]
    assert not Photo.objects.exists()
    leftover = _files_on_disk() - before
    assert not leftover, f"files of a refused upload were left behind: {leftover}"


@pytest.mark.django_db
def test_a_form_cut_off_after_moving_its_work_order_leaves_no_move_and_no_audit(monkeypatch):
    """A crash in form 3 after it completed its work order (moves and audit events written, its answer not yet):
    that work order is neither moved nor audited, and another form for it later in the same request finds it
    as it stood (assigned) and completes it."""
    from accounts.models import AuditEvent
    from scheduling.models import WorkOrder

    tech, forms = _batch()
    third = WorkOrder.objects.get(public_id=forms[2]["work_order"])
    forms.append(filter_form(third))  # the same visit sent again under a new id, after the crash
    real = sync_module.result_json
    calls = {"n": 0}

    def flaky(*args, **kwargs):
        calls["n"] += 1
        if calls["n"] == 3:
            raise RuntimeError("worker killed mid-form")
        return real(*args, **kwargs)

    monkeypatch.setattr(sync_module, "result_json", flaky)
    results = inspection_sync(user=tech, forms=forms)
    assert [r["status"] for r in results] == ["stored", "stored", "error", "stored", "stored", "stored"]
    third.refresh_from_db()
    assert third.state == WorkOrder.State.COMPLETED  # by the sixth form; the third left no trace:
    moves = AuditEvent.objects.filter(object_type="scheduling.workorder", object_id=str(third.pk), action="transition")
    assert [e.changes["to"] for e in moves.order_by("pk")] == ["in_progress", "completed"]
    submits = AuditEvent.objects.filter(action="inspection_submit")
    assert sorted(e.changes["client_uuid"] for e in submits) == sorted(
        f["client_uuid"] for i, f in enumerate(forms) if i != 2
    )
