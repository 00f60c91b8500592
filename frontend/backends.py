"""The one place the pages call other apps' selectors and services.

Pages import from here so a change of name elsewhere is fixed once.
The inspections app is imported at call time so a page that does not need
it keeps working while that app changes.
"""

from __future__ import annotations

from accounts.selectors import technicians_of  # noqa: F401
from inventory.selectors import ahus_visible_to, label_lookup
from scheduling.selectors import (  # noqa: F401
    assignment_check,
    board_for,
    suggested_technicians,
    technician_load,
    today_visits_for,
    work_order_for,
    work_orders_managed_by,
    work_orders_to_verify,
    work_orders_visible_to,
)
from scheduling.services.work_orders import (  # noqa: F401
    corrective_work_order_approve,
    corrective_work_order_reject,
    work_order_assign,
    work_order_verify,
)


def ahus_by_id(*, ids) -> dict:
    """Units by id with their building and site, in one query (the units of work the person already sees)."""
    from inventory.models import AHU

    return {ahu.pk: ahu for ahu in AHU.objects.filter(pk__in=list(ids)).select_related("building__site")}


def unit_for_label(*, user, code: str):
    """(unit, component or None) behind a label code the person may see; (None, None) otherwise."""
    found = label_lookup(user=user, code=code)
    if found is None:
        return None, None
    if found._meta.model_name == "component":
        return ahus_visible_to(user=user).get(pk=found.ahu_id), found
    return found, None


def checklist_for(*, user, work_order) -> dict:
    """The checklist dict of inspections/SYNC.md §1."""
    from inspections.selectors import checklist_for as real

    return real(work_order=work_order, user=user)


def findings_visible_to(*, user):
    from inspections.selectors import findings_visible_to as real

    return real(user=user)


def flagged_forms_for(*, user):
    from inspections.selectors import flagged_forms_for as real

    return real(user=user)


def sync_forms(*, user, forms: list[dict]) -> list[dict]:
    """The results of inspections/SYNC.md §2, for forms posted without scripts."""
    from inspections.services import inspection_sync

    return inspection_sync(user=user, forms=forms)


def flag_resolve(*, inspection, by, note: str):
    """inspections' resolve-flag service (SYNC.md §4)."""
    from inspections.services import flagged_form_resolve

    return flagged_form_resolve(inspection=inspection, by=by, note=note)


def report_request(*, user, kind: str, parameters: dict, pdfa: bool = False):
    """reports' request service: checks tenancy (Http404 for a site the person may not see) and queues the PDF."""
    from reports.services import report_request as real

    return real(user=user, kind=kind, parameters=parameters, pdfa=pdfa)


def reports_visible_to(*, user, limit: int = 50):
    from reports.selectors import reports_visible_to as real

    return real(user=user, limit=limit)


def inspection_verify(*, inspection, by):
    """inspections' verify service: the inspection and its completed work order become verified."""
    from inspections.services import inspection_verify as real

    return real(inspection=inspection, by=by)


def submission_allowed(*, user, work_order) -> bool:
    """Whether the person fills forms for the work order (property managers only read)."""
    from inspections.selectors import submission_allowed as real

    return real(user=user, work_order=work_order)


def amendment_allowed(*, user, inspection) -> bool:
    """The technician who signed the inspection or a supervisor of its site."""
    from inspections.selectors import amendment_allowed as real

    return real(user=user, inspection=inspection)


def inspection_status(*, inspection) -> str:
    """What a stored form is now: verified, flagged while a flag is unresolved, else stored."""
    from inspections.selectors import inspection_status as real

    return real(inspection=inspection)


def inspection_amend(*, inspection, by, reason: str, readings: list, unit_system: str):
    """inspections' amend service: a correction beside the signed record, judged again."""
    from inspections.services import inspection_amend as real

    return real(inspection=inspection, by=by, reason=reason, readings=readings, unit_system=unit_system)


def visit_records(*, work_order, system: str, photo_src, signature_src) -> list[dict]:
    """The record of each stored form of the work order, as the inspection report prints it."""
    from reports.documents.inspection_report import visit_records as real

    visits, _components, _cautions = real(
        work_order=work_order, system=system, photo_src=photo_src, signature_src=signature_src
    )
    return visits


def image_data_uri(stored_file, *, max_px: int) -> str | None:
    """A stored image (a signature) as a small data URI, as the PDFs embed it."""
    from reports.rendering import stored_file_data_uri

    return stored_file_data_uri(stored_file, max_px=max_px)


def inspections_visible_to(*, user):
    from inspections.selectors import inspections_visible_to as real

    return real(user=user)


def inspection_for(*, user, pk, write: bool = False, queryset=None):
    """inspections' access function of a stored form: Http404 when not visible, PermissionDenied to change it."""
    from inspections.selectors import inspection_for as real

    return real(user=user, pk=pk, write=write, queryset=queryset)
