"""Photos: verified by decoding, metadata stripped, size and pixel caps, served behind the tenancy rule."""

import io
import uuid

import pytest
from PIL import Image

from inspections.models import Inspection, Photo
from tests.factories.inspections import component, data_url, image_bytes, make_visit, r, sync_form

SYNC = "/api/inspections/sync/"
SVG = b'<svg xmlns="http://www.w3.org/2000/svg"><script>alert(1)</script></svg>'


def form_with_photo(wo, data: str, pid=None):
    bank = component(wo.ahu, "Final filters")
    return sync_form(
        wo,
        [r("visit.run_hours", 1200), r("filter_check.dp", 150, bank)],
        photos=[
            {
                "client_uuid": str(pid or uuid.uuid4()),
                "item": "filter_check.photo",
                "component": bank.label_code,
                "data": data,
            }
        ],
    )


def post(client, user, form):
    client.force_authenticate(user)
    return client.post(SYNC, {"forms": [form]}, format="json").json()["results"][0]


@pytest.mark.django_db
def test_photo_in_a_form_is_stored_without_metadata_with_a_thumbnail_and_served_safely(api_client):
    wo, tech = make_visit(tasks=["filter_check"])
    pid = uuid.uuid4()
    res = post(api_client, tech, form_with_photo(wo, data_url(image_bytes("JPEG", (800, 600), exif=True)), pid))
    assert res["status"] in {"stored", "flagged"}
    photo = Photo.objects.get(client_uuid=pid)
    assert photo.inspection_id == res["inspection_id"]
    with photo.image.open("rb") as f:
        stored = Image.open(io.BytesIO(f.read()))
    assert stored.format == "JPEG" and dict(stored.getexif()) == {}
    with photo.thumbnail.open("rb") as f:
        assert max(Image.open(io.BytesIO(f.read())).size) == 320
    resp = api_client.get(f"/api/inspections/photos/{pid}/")
    assert resp.status_code == 200
    assert resp["Content-Type"] == "image/jpeg"
    assert resp["X-Content-Type-Options"] == "nosniff"
    assert resp["Content-Disposition"].startswith("inline; filename=")
    assert api_client.get(f"/api/inspections/photos/{pid}/thumbnail/").status_code == 200
    _, outsider = make_visit(tasks=["filter_check"])
    api_client.force_authenticate(outsider)
    assert api_client.get(f"/api/inspections/photos/{pid}/").status_code == 404


@pytest.mark.django_db
@pytest.mark.parametrize(
    ("payload", "message"),
    [
        (data_url(b"this is not an image at all", "image/jpeg"), "not a readable image"),
        (data_url(image_bytes("GIF"), "image/gif"), "images of type GIF are not accepted"),
        (data_url(SVG, "image/svg+xml"), "not a readable image"),
        ("https://example.invalid/x.jpg", "expected a data URL"),
    ],
)
def test_bad_photos_refuse_the_form_clearly(api_client, payload, message):
    wo, tech = make_visit(tasks=["filter_check"])
    res = post(api_client, tech, form_with_photo(wo, payload))
    assert res["status"] == "refused"
    assert message in res["errors"]["photos[0].data"][0]
    assert Inspection.objects.count() == 0 and Photo.objects.count() == 0


@pytest.mark.django_db
def test_photo_over_the_size_cap_is_refused(api_client, settings):
    settings.PLENUM_PHOTO_MAX_BYTES = 2_000
    wo, tech = make_visit(tasks=["filter_check"])
    big = image_bytes("PNG", (300, 300))
    big = big + b"\0" * max(0, 3_000 - len(big))
    res = post(api_client, tech, form_with_photo(wo, data_url(big, "image/png")))
    assert res["status"] == "refused"
    assert res["errors"]["photos[0].data"] == ["the image is larger than the 2 kB allowed"]


@pytest.mark.django_db
def test_photo_with_too_many_pixels_is_refused_before_decoding(api_client, settings):
    settings.PLENUM_PHOTO_MAX_PIXELS = 10_000
    wo, tech = make_visit(tasks=["filter_check"])
    res = post(api_client, tech, form_with_photo(wo, data_url(image_bytes("JPEG", (200, 100)))))
    assert "200×100 = 20,000 pixels; at most 10,000 allowed" in res["errors"]["photos[0].data"][0]


@pytest.mark.django_db
def test_photo_uploaded_separately_is_idempotent_and_can_be_referred_to_by_a_form(api_client):
    wo, tech = make_visit(tasks=["filter_check"])
    api_client.force_authenticate(tech)
    pid = str(uuid.uuid4())

    def upload(data, name="p.webp"):
        f = io.BytesIO(data)
        f.name = name
        return api_client.post(
            "/api/inspections/photos/",
            {"file": f, "client_uuid": pid, "work_order": str(wo.public_id)},
            format="multipart",
        )

    first = upload(image_bytes("WEBP"))
    assert first.status_code == 201, first.content
    again = upload(image_bytes("WEBP"))
    assert again.status_code == 200 and again.json()["id"] == first.json()["id"]
    form = form_with_photo(wo, "", pid)
    form["photos"][0].pop("data")
    res = post(api_client, tech, form)
    assert res["status"] in {"stored", "flagged"}
    assert Photo.objects.get(client_uuid=pid).inspection_id == res["inspection_id"]


@pytest.mark.django_db
def test_separate_upload_refuses_a_gif_with_a_400(api_client):
    wo, tech = make_visit(tasks=["filter_check"])
    api_client.force_authenticate(tech)
    f = io.BytesIO(image_bytes("GIF"))
    f.name = "x.gif"
    res = api_client.post(
        "/api/inspections/photos/",
        {"file": f, "client_uuid": str(uuid.uuid4()), "work_order": str(wo.public_id)},
        format="multipart",
    )
    assert res.status_code == 400
    assert "GIF are not accepted" in res.json()["errors"]["file"][0]
