"""Photos and signatures: decoded and verified with Pillow, re-encoded without metadata, stored via Django storage."""

from __future__ import annotations

import base64
import binascii
import io
import uuid
from dataclasses import dataclass

from django.conf import settings
from django.core.exceptions import ValidationError
from django.core.files.base import ContentFile
from django.db import IntegrityError, transaction
from PIL import Image, ImageOps, UnidentifiedImageError

from accounts.models import User
from accounts.services import audit_record
from inventory.models import Component
from scheduling.models import WorkOrder

from ..models import Inspection, Photo

ALLOWED_FORMATS = {"JPEG": "image/jpeg", "PNG": "image/png", "WEBP": "image/webp"}
THUMBNAIL_PX = 320
SIGNATURE_MAX_BYTES = 512 * 1024
SIGNATURE_MAX_PIXELS = 4_000_000


@dataclass(frozen=True)
class CleanImage:
    data: bytes
    content_type: str
    extension: str
    width: int
    height: int
    thumbnail: bytes


def _mb(n: int) -> str:
    if n < 1024 * 1024:
        return f"{n / 1024:.0f} kB"
    return f"{n / (1024 * 1024):.1f} MB"


def data_url_decode(value: object, *, field: str, max_bytes: int) -> bytes:
    """Bytes of a ``data:<type>;base64,<data>`` URL; refuses anything else or anything too large."""
    if not isinstance(value, str) or not value.startswith("data:") or ";base64," not in value[:100]:
        raise ValidationError({field: ["expected a data URL such as data:image/jpeg;base64,…"]})
    payload = value.split(",", 1)[1]
    # Base64 carries 3 bytes per 4 characters: refuse before decoding a huge body.
    if len(payload) * 3 // 4 > max_bytes + 3:
        raise ValidationError({field: [f"the image is larger than the {_mb(max_bytes)} allowed"]})
    try:
        return base64.b64decode(payload, validate=True)
    except (binascii.Error, ValueError):
        raise ValidationError({field: ["the data URL is not valid base64"]})


def image_clean(
    data: bytes,
    *,
    field: str,
    max_bytes: int | None = None,
    max_pixels: int | None = None,
    formats: dict[str, str] = ALLOWED_FORMATS,
) -> CleanImage:
    """Verify an uploaded image by decoding it, then re-encode it without metadata.

    Refused: not an image Pillow can decode, a type outside ``formats``
    (JPEG, PNG, WebP by default: no GIF, no SVG), more bytes than
    PLENUM_PHOTO_MAX_BYTES, more pixels than PLENUM_PHOTO_MAX_PIXELS (checked
    from the header before the pixels are decoded, against decompression bombs).
    """
    max_bytes = settings.PLENUM_PHOTO_MAX_BYTES if max_bytes is None else max_bytes
    max_pixels = settings.PLENUM_PHOTO_MAX_PIXELS if max_pixels is None else max_pixels
    allowed = ", ".join(sorted(formats))
    if len(data) > max_bytes:
        raise ValidationError({field: [f"the image is {_mb(len(data))}; at most {_mb(max_bytes)} is allowed"]})
    try:
        with Image.open(io.BytesIO(data)) as probe:
            fmt = probe.format
            width, height = probe.size
            if fmt not in formats:
                raise ValidationError({field: [f"images of type {fmt} are not accepted; allowed: {allowed}"]})
            if width * height > max_pixels:
                raise ValidationError(
                    {
                        field: [
                            f"the image is {width}×{height} = {width * height:,} pixels; at most {max_pixels:,} allowed"
                        ]
                    }
                )
            probe.verify()
        with Image.open(io.BytesIO(data)) as img:
            img.load()
            img = ImageOps.exif_transpose(img)
            out, thumb = io.BytesIO(), io.BytesIO()
            if fmt == "PNG":
                img.save(out, format="PNG", optimize=True)  # a new file: no text chunks, no EXIF
                ext, content_type = "png", "image/png"
            else:
                rgb = img.convert("RGB")
                rgb.save(out, format="JPEG", quality=85)
                ext, content_type = "jpg", "image/jpeg"
            small = img.convert("RGB")
            small.thumbnail((THUMBNAIL_PX, THUMBNAIL_PX))
            small.save(thumb, format="JPEG", quality=80)
            return CleanImage(out.getvalue(), content_type, ext, img.width, img.height, thumb.getvalue())
    except ValidationError:
        raise
    except (UnidentifiedImageError, Image.DecompressionBombError, OSError, SyntaxError, ValueError) as exc:
        if isinstance(exc, Image.DecompressionBombError):
            raise ValidationError({field: [f"the image has too many pixels; at most {max_pixels:,} allowed"]})
        raise ValidationError({field: [f"the file is not a readable image (allowed: {allowed})"]})


def signature_clean(value: object, *, field: str = "signature.image") -> CleanImage:
    data = data_url_decode(value, field=field, max_bytes=SIGNATURE_MAX_BYTES)
    return image_clean(
        data, field=field, max_bytes=SIGNATURE_MAX_BYTES, max_pixels=SIGNATURE_MAX_PIXELS, formats={"PNG": "image/png"}
    )


def photo_build(
    *,
    image: CleanImage,
    client_uuid: uuid.UUID,
    work_order: WorkOrder,
    user: User | None,
    item_key: str = "",
    component: Component | None = None,
    inspection: Inspection | None = None,
) -> Photo:
    """An unsaved Photo with its files written to storage (the caller saves the row)."""
    photo = Photo(
        client_uuid=client_uuid,
        organisation_id=work_order.organisation_id,
        work_order=work_order,
        inspection=inspection,
        item_key=item_key,
        component=component,
        content_type=image.content_type,
        width=image.width,
        height=image.height,
        size_bytes=len(image.data),
        uploaded_by=user,
    )
    photo.image.save(f"{client_uuid.hex}.{image.extension}", ContentFile(image.data), save=False)
    photo.thumbnail.save(f"{client_uuid.hex}-thumb.jpg", ContentFile(image.thumbnail), save=False)
    return photo


def photo_files_delete(photo: Photo) -> None:
    for f in (photo.image, photo.thumbnail):
        if f.name:
            f.storage.delete(f.name)


def photo_upload(
    *, user: User | None, work_order: WorkOrder, client_uuid: uuid.UUID, data: bytes
) -> tuple[Photo, bool]:
    """Store a photo taken before its form is sent. Returns (photo, created); the same UUID again returns the first."""
    existing = Photo.objects.filter(client_uuid=client_uuid).first()
    if existing is not None:
        if existing.work_order_id != work_order.pk:
            raise ValidationError({"client_uuid": [f"photo {client_uuid} belongs to another work order"]})
        return existing, False
    image = image_clean(data, field="file")
    photo = photo_build(image=image, client_uuid=client_uuid, work_order=work_order, user=user)
    try:
        with transaction.atomic():
            photo.save()
            audit_record(
                actor=user,
                obj=photo,
                action="photo_upload",
                organisation=work_order.organisation,
                changes={"work_order": str(work_order.public_id), "bytes": photo.size_bytes},
            )
    except IntegrityError:
        photo_files_delete(photo)
        first = Photo.objects.filter(client_uuid=client_uuid).first()
        if first is None:
            raise
        return first, False
    except BaseException:
        photo_files_delete(photo)  # the row was not stored (database refused, worker stopped): no orphan files
        raise
    return photo, True
