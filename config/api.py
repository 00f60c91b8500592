"""API glue shared by every app: one error shape that names the field."""

from django.core.exceptions import ValidationError as DjangoValidationError
from rest_framework import exceptions, status
from rest_framework.response import Response
from rest_framework.views import exception_handler as drf_exception_handler


def exception_handler(exc, context):
    """Turn model-level validation errors into 400s with per-field messages.

    Services raise Django's ValidationError (with a field dict); the API answers
    ``{"errors": {field: [message, ...]}, "detail": "..."}``.
    """
    if isinstance(exc, DjangoValidationError):
        if hasattr(exc, "error_dict"):
            errors = {field: [str(m) for m in msgs] for field, msgs in exc.message_dict.items()}
        else:
            errors = {"non_field_errors": list(exc.messages)}
        detail = "; ".join(f"{field}: {' '.join(msgs)}" for field, msgs in errors.items())
        return Response({"detail": detail, "errors": errors}, status=status.HTTP_400_BAD_REQUEST)
    response = drf_exception_handler(exc, context)
    if response is not None and isinstance(exc, exceptions.ValidationError) and isinstance(response.data, dict):
        flat = "; ".join(
            f"{field}: {' '.join(str(m) for m in msgs) if isinstance(msgs, list) else msgs}"
            for field, msgs in response.data.items()
        )
        response.data = {"detail": flat, "errors": response.data}
    return response
