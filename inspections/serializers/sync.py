"""The sync endpoint's shapes: the forms sent, each form's result, its flags, judgements and findings."""

from __future__ import annotations

from rest_framework import serializers

from ..models import VERDICT_CHOICES, Finding


class RawJSONField(serializers.JSONField):
    """Any parsed JSON value, as it came: each form is judged on its own by the service (inspections/check.py)."""

    def to_internal_value(self, data):
        return data


class SyncInput(serializers.Serializer):
    # null too: each entry, whatever it is, is judged on its own and gets its own result.
    forms = serializers.ListField(
        child=RawJSONField(allow_null=True), max_length=50, help_text="Finished forms; shape in inspections/SYNC.md."
    )
    sent_at = RawJSONField(
        required=False,
        help_text="The phone's clock when it sent the batch (ISO 8601 with offset); a form's own sent_at wins.",
    )


class FlagOutput(serializers.Serializer):
    """Why a stored form waits for a supervisor (inspections/flags.py names every code)."""

    code = serializers.CharField()
    reason = serializers.CharField(help_text="In plain words, with the items or values concerned.")


class EvaluationOutput(serializers.Serializer):
    """One check's judgement of a visit's readings."""

    check = serializers.CharField()
    item = serializers.CharField(help_text="The item's key, or empty for a check over several readings.")
    component = serializers.CharField(allow_null=True, help_text="The part's label code; null for the unit.")
    verdict = serializers.ChoiceField(choices=VERDICT_CHOICES)
    reason = serializers.CharField(help_text="Why, in the reader's units.")
    reason_si = serializers.CharField(help_text="Why, as recorded (SI).")
    method = serializers.CharField()
    derived = serializers.DictField(help_text="Values the check worked out on the way (name: SI value).")


class FindingEvidenceOutput(serializers.Serializer):
    """What the building-automation trends hold as a fault rule's evidence (null for a finding of visits)."""

    section = serializers.CharField(help_text="The rule's section in the published guideline.")
    window_start = serializers.DateTimeField(allow_null=True, help_text="The latest evidence window's start.")
    window_end = serializers.DateTimeField(allow_null=True)
    share = serializers.FloatField(
        allow_null=True, help_text="Share (0–1) of the operating time the rule could judge on its latest day."
    )
    days = serializers.IntegerField(help_text="Days the trends showed it.")
    lowest_supply_air_c = serializers.FloatField(
        allow_null=True, help_text="A freeze event's lowest supply-air temperature, °C (stored SI)."
    )


class FindingOutput(serializers.Serializer):
    """The shape of ``inspections.selectors.finding_shape`` (for the schema)."""

    id = serializers.IntegerField()
    kind = serializers.ChoiceField(choices=Finding.Kind.choices)
    kind_label = serializers.CharField()
    severity = serializers.ChoiceField(choices=Finding.Severity.choices)
    state = serializers.ChoiceField(choices=Finding.State.choices)
    title = serializers.CharField()
    text = serializers.CharField(help_text="The check, its numbers and the limit that failed it, in your units.")
    first_seen = serializers.DateTimeField(help_text="The first visit that saw it; its age counts from here.")
    last_seen = serializers.DateTimeField()
    times_seen = serializers.IntegerField(help_text="Visits that saw it (from the trends: days).")
    corrective_work_order = serializers.UUIDField(allow_null=True)
    source = serializers.ChoiceField(choices=Finding.Source.choices)
    source_words = serializers.CharField(
        help_text='Who saw it, as pages say it ("building-automation trends, rule FC6"); empty for visits.'
    )
    rule = serializers.CharField(
        help_text="The fault rule that found it in the trends (FC1–FC15, FREEZE); empty for visits."
    )
    evidence = FindingEvidenceOutput(allow_null=True)


class SyncResultOutput(serializers.Serializer):
    client_uuid = serializers.CharField(allow_null=True)
    status = serializers.ChoiceField(choices=["stored", "flagged", "duplicate", "refused"])
    first_status = serializers.CharField(required=False)
    inspection_id = serializers.IntegerField(allow_null=True)
    work_order_state = serializers.CharField(allow_null=True)
    flags = FlagOutput(many=True)
    errors = serializers.DictField(
        child=serializers.ListField(child=serializers.CharField()),
        help_text="A refused form's problems: each field (dotted inside the form) and its messages.",
    )
    evaluation = EvaluationOutput(many=True)
    findings = FindingOutput(many=True)
    clock_skew_s = serializers.FloatField(
        allow_null=True, help_text="The phone's clock minus the server's at receipt, in seconds; null when unknown."
    )


class SyncOutput(serializers.Serializer):
    results = SyncResultOutput(many=True)
