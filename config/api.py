"""API glue shared by every app: one error shape that names the field."""

import logging

from django.core.exceptions import ValidationError as DjangoValidationError
from django.db import DatabaseError, DataError, IntegrityError, NotSupportedError, ProgrammingError
from rest_framework import exceptions, status
from rest_framework.response import Response
from rest_framework.views import exception_handler as drf_exception_handler
from rest_framework.views import set_rollback

logger = logging.getLogger(__name__)
# These say the code or the data is wrong; sending again would not help, so they stay server errors.
BUGS_NOT_OUTAGES = (IntegrityError, DataError, ProgrammingError, NotSupportedError)
DATABASE_BUSY = (
    "The database could not store this just now ({kind}); nothing that was not confirmed stored was saved. "
    "Keep the data and send it again in a moment."
)


def error_body(*, detail: str, errors: dict | None = None) -> dict:
    """The one error shape of the API: a sentence a person can read, and the fields it concerns."""
    return {"detail": detail, "errors": errors or {}}


def flat_errors(data, prefix: str = "") -> dict[str, list[str]]:
    """DRF's nested errors as one level: ``{"values.t_outdoor_c": ["…"], "forms.2": ["…"]}``, every message a
    plain string (a nested serializer or a list field would otherwise show Python's repr in the sentence)."""
    out: dict[str, list[str]] = {}
    if isinstance(data, dict):
        for key, value in data.items():
            out.update(flat_errors(value, f"{prefix}.{key}" if prefix else str(key)))
    elif isinstance(data, list) and any(isinstance(v, dict | list) for v in data):
        for i, value in enumerate(data):
            if value:  # DRF puts an empty entry for each item of a list that was fine
                out.update(flat_errors(value, f"{prefix}.{i}" if prefix else str(i)))
    elif isinstance(data, list):
        out[prefix or "non_field_errors"] = [str(m) for m in data]
    else:
        out[prefix or "non_field_errors"] = [str(data)]
    return out


def exception_handler(exc, context):
    """Turn model-level validation errors into 400s with per-field messages.

    Services raise Django's ValidationError (with a field dict); the API answers
    ``{"errors": {field: [message, ...]}, "detail": "..."}``.
    """
    if isinstance(exc, DatabaseError) and not isinstance(exc, BUGS_NOT_OUTAGES):
        # A refused or lost database write is the server's trouble, not the phone's: 503 and a retry hint,
        # so an offline outbox keeps the form (inspections/SYNC.md) instead of showing a bare 500.
        logger.exception("database refused a write")
        set_rollback()
        return Response(
            error_body(detail=DATABASE_BUSY.format(kind=type(exc).__name__)),
            status=status.HTTP_503_SERVICE_UNAVAILABLE,
            headers={"Retry-After": "30"},
        )
    if isinstance(exc, DjangoValidationError):
        if hasattr(exc, "error_dict"):
            errors = {field: [str(m) for m in msgs] for field, msgs in exc.message_dict.items()}
        else:
            errors = {"non_field_errors": list(exc.messages)}
        detail = "; ".join(f"{field}: {' '.join(msgs)}" for field, msgs in errors.items())
        return Response(error_body(detail=detail, errors=errors), status=status.HTTP_400_BAD_REQUEST)
    response = drf_exception_handler(exc, context)
    if response is not None and isinstance(exc, exceptions.ValidationError) and isinstance(response.data, dict):
        errors = flat_errors(response.data)
        flat = "; ".join(f"{field}: {' '.join(msgs)}" for field, msgs in errors.items())
        response.data = error_body(detail=flat, errors=errors)
    elif response is not None and isinstance(response.data, dict) and set(response.data) == {"detail"}:
        # 401, 403, 404, 405, 429...: the same shape, with the sentence DRF or the view gave.
        response.data = error_body(detail=str(response.data["detail"]))
    return response
