"""Uploads: only decoded, verified images; byte and pixel caps; metadata (GPS) stripped; served with safe headers."""

import io
import uuid

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.test import override_settings
from PIL import Image

from inspections.models import Photo
from tests.factories.inspections import image_bytes, make_visit

UPLOAD = "/api/inspections/photos/"
GPS_IFD = 0x8825
HTML = b"<html><body><script>alert(document.cookie)</script></body></html>"
SVG = b'<svg xmlns="http://www.w3.org/2000/svg" onload="alert(1)"><script>alert(2)</script></svg>'


def jpeg_with_gps() -> bytes:
    """A JPEG carrying the camera's make and a GPS position, as a phone writes it."""
    img = Image.new("RGB", (640, 480), (90, 120, 150))
    exif = Image.Exif()
    exif[0x010F] = "Invented Phone Maker"  # Make
    gps = exif.get_ifd(GPS_IFD)
    gps[1], gps[2] = "N", (52.0, 22.0, 12.5)  # GPSLatitudeRef, GPSLatitude
    gps[3], gps[4] = "E", (4.0, 53.0, 30.0)  # GPSLongitudeRef, GPSLongitude
    out = io.BytesIO()
    img.save(out, format="JPEG", exif=exif)
    data = out.getvalue()
    assert Image.open(io.BytesIO(data)).getexif().get_ifd(GPS_IFD), "the test image must carry GPS"
    return data


@pytest.fixture
def visit(api_client):
    wo, tech = make_visit(tasks=["filter_check"])
    api_client.force_authenticate(tech)
    return wo


def upload(api_client, wo, data: bytes, name="photo.jpg", content_type="image/jpeg", pid=None):
    return api_client.post(
        UPLOAD,
        {
            "file": SimpleUploadedFile(name, data, content_type=content_type),
            "client_uuid": str(pid or uuid.uuid4()),
            "work_order": str(wo.public_id),
        },
    )


@pytest.mark.django_db
def test_gps_and_every_exif_tag_are_stripped_from_the_stored_file(api_client, visit):
    """The stored image and its thumbnail carry no EXIF at all: no GPS position, no camera make."""
    res = upload(api_client, visit, jpeg_with_gps())
    assert res.status_code == 201, res.content
    photo = Photo.objects.get(client_uuid=res.json()["client_uuid"])
    for f in (photo.image, photo.thumbnail):
        with f.open("rb") as fh:
            raw = fh.read()
        stored = Image.open(io.BytesIO(raw))
        assert dict(stored.getexif()) == {}
        assert not stored.getexif().get_ifd(GPS_IFD)
        assert b"Exif" not in raw and b"Invented Phone Maker" not in raw
    # What is served is the stripped file.
    served = b"".join(api_client.get(f"/api/inspections/photos/{photo.client_uuid}/").streaming_content)
    assert b"Exif" not in served


@pytest.mark.django_db
@pytest.mark.parametrize(
    ("data", "name", "content_type"),
    [
        (HTML, "photo.jpg", "image/jpeg"),  # HTML with an image name and type
        (SVG, "photo.svg", "image/svg+xml"),  # SVG may carry script
        (image_bytes("GIF"), "photo.gif", "image/gif"),  # not an accepted type
        (image_bytes("JPEG")[:200], "photo.jpg", "image/jpeg"),  # truncated
        (b"", "photo.jpg", "image/jpeg"),
    ],
)
def test_anything_but_a_readable_jpeg_png_or_webp_is_refused_naming_the_file(api_client, visit, data, name,
                                                                            content_type):  # fmt: skip
    """Files are judged by decoding them, not by their name or declared type; the 400 names the field."""
    res = upload(api_client, visit, data, name, content_type)
    assert res.status_code == 400, res.content
    body = res.json()
    assert "file" in body["errors"] and body["detail"]
    assert not Photo.objects.exists()


@pytest.mark.django_db
def test_html_appended_to_a_real_jpeg_is_not_kept(api_client, visit):
    """A JPEG with a script tacked on decodes, but the stored file is re-encoded: the tail is gone."""
    res = upload(api_client, visit, image_bytes("JPEG", (100, 80)) + HTML)
    assert res.status_code == 201
    with Photo.objects.get().image.open("rb") as f:
        assert b"<script" not in f.read()


@pytest.mark.django_db
def test_byte_and_pixel_caps(api_client, visit):
    """Over PLENUM_PHOTO_MAX_BYTES or PLENUM_PHOTO_MAX_PIXELS: refused, with the limit in the message."""
    with override_settings(PLENUM_PHOTO_MAX_BYTES=2000):
        res = upload(api_client, visit, image_bytes("PNG", (400, 400)) + b"\0" * 3000)
        assert res.status_code == 400 and "file" in res.json()["errors"]
        assert "MB" in res.json()["detail"] or "kB" in res.json()["detail"]
    with override_settings(PLENUM_PHOTO_MAX_PIXELS=10_000):
        res = upload(api_client, visit, image_bytes("JPEG", (200, 100)))
        assert res.status_code == 400
        assert "pixels" in res.json()["detail"] and "10,000" in res.json()["detail"]
    assert not Photo.objects.exists()


@pytest.mark.django_db
@pytest.mark.filterwarnings("ignore::PIL.Image.DecompressionBombWarning")
def test_decompression_bomb_is_refused_before_decoding(api_client, visit):
    """A small file that declares a huge image (a decompression bomb) is refused from its header."""
    big = Image.new("1", (12000, 12000))  # 144 million pixels, a few kB as PNG
    out = io.BytesIO()
    big.save(out, format="PNG", optimize=True)
    assert len(out.getvalue()) < 2_000_000
    res = upload(api_client, visit, out.getvalue(), "bomb.png", "image/png")
    assert res.status_code == 400
    assert "pixels" in res.json()["detail"]


@pytest.mark.django_db
def test_photos_are_served_with_safe_headers(api_client, visit):
    """image/* only, nosniff, a sandboxing CSP, inline with a plain file name, private caching."""
    res = upload(api_client, visit, image_bytes("PNG", (50, 40)), "p.png", "image/png")
    pid = res.json()["client_uuid"]
    for url in (f"/api/inspections/photos/{pid}/", f"/api/inspections/photos/{pid}/thumbnail/"):
        got = api_client.get(url)
        assert got.status_code == 200
        assert got["Content-Type"] in ("image/png", "image/jpeg", "image/webp")
        assert got["X-Content-Type-Options"] == "nosniff"
        assert "sandbox" in got["Content-Security-Policy"] and "default-src 'none'" in got["Content-Security-Policy"]
        assert got["Content-Disposition"].startswith("inline; filename=")
        assert "private" in got["Cache-Control"]
