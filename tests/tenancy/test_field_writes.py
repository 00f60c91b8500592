"""A technician adds to a work order only when he may see it (or it was his and was taken from him).

Tess works on site A of our organisation; site B (Marrowgate) is Omar's. What Tess may not see on the
API, the page and the checklist, she may not write to either: the photo upload and the sync answer her
as they answer a work order that does not exist, word for word, and say nothing about the unit.
"""

from __future__ import annotations

import json
import uuid

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.utils import timezone

from inspections.models import Inspection, Photo
from scheduling.models import WorkOrder
from tests.factories.inspections import image_bytes
from tests.factories.scheduling import WorkOrderFactory
from tests.tenancy.world import World, build, filter_form

pytestmark = pytest.mark.usefixtures("clock")  # the world's work is dated the clock's today

SYNC = "/api/inspections/sync/"
PHOTOS = "/api/inspections/photos/"


@pytest.fixture
def world(db) -> World:
    return build()


def _upload(client, work_order: str):
    body = {
        "work_order": work_order,
        "client_uuid": str(uuid.uuid4()),
        "file": SimpleUploadedFile("p.jpg", image_bytes(), content_type="image/jpeg"),
    }
    return client.post(PHOTOS, body, format="multipart")


def _planned_at_b(world: World) -> WorkOrder:
    """Planned work on Omar's site, never assigned to anybody."""
    return WorkOrderFactory(
        ahu=world.b.ahu,
        organisation=world.ours,
        assignee=None,
        state=WorkOrder.State.PLANNED,
        title="Marrowgate coil clean",
        due_date=timezone.localdate(),
    )


def test_a_photo_for_work_on_a_site_she_cannot_see_is_not_found_like_an_unknown_one(world, api_client):
    """The upload answers 404 with the same words as a made-up id, and keeps nothing."""
    api_client.force_authenticate(world.technician)
    hidden = str(world.b.open_work_order.public_id)
    assert api_client.get(f"/api/inspections/work-orders/{hidden}/checklist/").status_code == 404
    photos_before = Photo.objects.count()
    res = _upload(api_client, hidden)
    unknown = _upload(api_client, str(uuid.uuid4()))
    assert res.status_code == 404, res.content
    assert unknown.status_code == 404
    assert res.json() == unknown.json()
    assert Photo.objects.count() == photos_before


@pytest.mark.parametrize("which", ["assigned_to_a_colleague", "planned_never_assigned"])
def test_a_form_for_work_she_cannot_see_is_refused_like_an_unknown_one(world, api_client, which):
    """The form is refused in a 200 answer with the words of an unknown work order; nothing is stored or told."""
    wo = world.b.open_work_order if which == "assigned_to_a_colleague" else _planned_at_b(world)
    api_client.force_authenticate(world.technician)
    before = Inspection.objects.count()
    hidden_form = filter_form(wo)
    made_up = {**filter_form(wo), "work_order": str(uuid.uuid4())}
    res = api_client.post(SYNC, {"forms": [hidden_form, made_up]}, format="json")
    assert res.status_code == 200, res.content
    hidden, unknown = res.json()["results"]
    assert hidden["status"] == "refused", hidden
    assert hidden["flags"] == []
    assert set(hidden["errors"]) == set(unknown["errors"]) == {"work_order"}
    assert hidden["errors"]["work_order"][0].replace(str(wo.public_id), "<id>") == unknown["errors"]["work_order"][
        0
    ].replace(made_up["work_order"], "<id>")
    assert "no such work order that you may see" in hidden["errors"]["work_order"][0]
    assert Inspection.objects.count() == before
    text = json.dumps(hidden)
    for marker in [*world.b.markers, wo.title, "filter", "run-hour", "meter"]:
        if marker != str(wo.public_id):
            assert marker.lower() not in text.lower(), marker


def test_a_bad_form_for_work_she_cannot_see_tells_nothing_of_its_unit(world, api_client):
    """Readings that would be judged against the unit's checklist and meter are not judged at all."""
    wo = _planned_at_b(world)
    api_client.force_authenticate(world.technician)
    form = filter_form(wo)
    form["readings"] = [
        {"item": "visit.run_hours", "component": None, "value": 1, "note": ""},
        {"item": "filter_check.dp", "component": world.b.component.label_code, "value": 99999, "note": ""},
        {"item": "filter_check.nonsense", "component": None, "value": 1, "note": ""},
    ]
    res = api_client.post(SYNC, {"forms": [form]}, format="json")
    [result] = res.json()["results"]
    assert result["status"] == "refused"
    assert set(result["errors"]) == {"work_order"}
    assert world.b.component.label_code not in res.content.decode()


def test_her_own_work_still_takes_photos_and_forms(world, api_client):
    """The legitimate case is untouched: her open visit on site A takes a photo and a form."""
    api_client.force_authenticate(world.technician)
    assert _upload(api_client, str(world.a.open_work_order.public_id)).status_code == 201
    res = api_client.post(SYNC, {"forms": [filter_form(world.a.open_work_order)]}, format="json")
    [result] = res.json()["results"]
    assert result["status"] in ("stored", "flagged"), result
