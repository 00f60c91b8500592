"""Placeholder until the document is written."""

from django.core.exceptions import ValidationError


def prepare(*, user, parameters: dict, requested_at):
    raise ValidationError({"kind": "not available yet"})


def build(*, report):
    raise NotImplementedError
