"""The sync's answers to the phone, one per form: stored or flagged, a duplicate of the first, refused, or failed.

Contract: inspections/SYNC.md (the shape the phone reads).
"""

from __future__ import annotations

import uuid
from typing import Any

from accounts.models import User
from scheduling.models import WorkOrder

from .. import selectors
from ..check import Errors
from ..models import Evaluation, Finding, Inspection


def result_json(
    inspection: Inspection,
    status: str,
    flags: list[dict[str, str]],
    evals: list[Evaluation],
    found: list[Finding],
    wo: WorkOrder,
    *,
    unit_system: str = "si",
) -> dict[str, Any]:
    """The answer to the phone; reasons in ``unit_system`` (the sender's), ``reason_si`` as recorded."""
    return {
        "client_uuid": str(inspection.client_uuid),
        "status": status,
        "inspection_id": inspection.pk,
        "work_order_state": wo.state,
        "flags": flags,
        "errors": {},
        "evaluation": [
            {
                "check": e.check_name,
                "item": e.item_key,
                "component": e.component.label_code if e.component else None,
                "verdict": e.verdict,
                "reason": selectors.reason_for(evaluation=e, unit_system=unit_system),
                "reason_si": e.reason,
                "method": e.method,
                "derived": e.derived,
            }
            for e in evals
        ],
        "findings": [selectors.finding_shape(finding=f, unit_system=unit_system) for f in found],
        "clock_skew_s": inspection.clock_skew_s,
    }


def duplicate_result(inspection: Inspection, *, user: User) -> dict[str, Any]:
    if inspection.technician_id != user.pk:
        errors = Errors()
        errors.add(
            "client_uuid",
            f"The form's id {inspection.client_uuid} is already used by another person's form; generate a new one",
        )
        return refused_result(inspection.client_uuid, errors)
    first = dict(inspection.sync_result)
    return {**first, "status": "duplicate", "first_status": first.get("status")}


def refused_result(client_uuid: uuid.UUID | None, errors: Errors) -> dict[str, Any]:
    return {
        "client_uuid": str(client_uuid) if client_uuid else None,
        "status": "refused",
        "inspection_id": None,
        "work_order_state": None,
        "flags": [],
        "errors": dict(errors),
        "evaluation": [],
        "findings": [],
        "clock_skew_s": None,
    }


def failed_result(form: object) -> dict[str, Any]:
    """A form the server could not handle (a defect, logged): kept on the phone and sent again later."""
    raw_id = form.get("client_uuid") if isinstance(form, dict) else None
    errors = Errors()
    errors.add("form", "the server could not store this form just now; it stays on the phone and is sent again")
    return {
        **refused_result(None, errors),  # the same empty answer, with its own status
        "client_uuid": raw_id if isinstance(raw_id, str) and len(raw_id) <= 36 else None,
        "status": "error",
    }
