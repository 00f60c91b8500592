"""Writes of the inspections app. Import from here: ``from inspections.services import inspection_sync``."""

from .findings import findings_open, freeze_season_near
from .library import checklist_library_install, templates_current
from .photos import image_clean, photo_upload
from .signoff import flagged_form_resolve, inspection_amend, inspection_edit, inspection_verify
from .sync import inspection_submit, inspection_sync

__all__ = [
    "checklist_library_install",
    "findings_open",
    "flagged_form_resolve",
    "freeze_season_near",
    "image_clean",
    "inspection_amend",
    "inspection_edit",
    "inspection_submit",
    "inspection_sync",
    "inspection_verify",
    "photo_upload",
    "templates_current",
]
