"""The API's error shapes, described once for the schema; every app's views name these in their answers.

The bodies are built elsewhere: ``config.api.error_body`` (every refusal and every 4xx, through DRF's exception
handler and ``config.errors``) and the file imports' lists of bad rows (``inventory.csv_io.ImportFailed``).
``config`` sits above the apps (its urls import them all), so the descriptions live in the lowest app, where each
app may import them (the layers in ``pyproject.toml``).
"""

from typing import Any

from rest_framework import serializers


class ErrorOutput(serializers.Serializer[Any]):
    """Any refusal: a sentence, and the fields it concerns."""

    # config.api.error_body builds it; tests/security/test_error_shape.py holds the two together.
    detail = serializers.CharField(help_text="A sentence a person can read: what was refused and why.")
    # A declared field, not Serializer.errors: DRF's metaclass takes declared fields off the class.
    errors = serializers.DictField(  # type: ignore[assignment]
        child=serializers.ListField(child=serializers.CharField()),
        help_text="Each field concerned (a dotted path inside nested input, `non_field_errors` for the whole) "
        "and its messages, each naming the value and what is allowed; empty when no field is at fault.",
    )


class RowErrorOutput(serializers.Serializer[Any]):
    """One bad row or cell of an uploaded file."""

    # inventory.csv_io.RowError.as_dict
    line = serializers.IntegerField()
    column = serializers.CharField()
    value = serializers.CharField(allow_blank=True)
    reason = serializers.CharField()


class RowErrorsOutput(serializers.Serializer[Any]):
    """A file refused whole: every bad row or cell, and nothing stored."""

    detail = serializers.CharField()
    errors = RowErrorOutput(many=True)  # type: ignore[assignment]
