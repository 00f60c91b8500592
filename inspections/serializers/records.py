"""Photos, amendments, inspections as stored, flagged forms and freeze readiness as the API answers them."""

from __future__ import annotations

from drf_spectacular.utils import extend_schema_field
from rest_framework import serializers

from engineering.units import SYSTEMS
from scheduling.serializers import SiteRefOutput, UnitBriefOutput

from ..models import VERDICT_CHOICES, Inspection
from ..selectors import reason_for
from .sync import EvaluationOutput, FindingOutput, FlagOutput


class PhotoUploadInput(serializers.Serializer):
    file = serializers.FileField()
    client_uuid = serializers.UUIDField()
    work_order = serializers.UUIDField()


class PhotoOutput(serializers.Serializer):
    client_uuid = serializers.UUIDField()
    id = serializers.IntegerField()
    url = serializers.CharField()
    thumbnail_url = serializers.CharField()
    width = serializers.IntegerField()
    height = serializers.IntegerField()


class AmendmentInput(serializers.Serializer):
    reason = serializers.CharField()
    unit_system = serializers.ChoiceField(choices=list(SYSTEMS))
    readings = serializers.ListField(child=serializers.JSONField(), min_length=1)


class ReadingBeforeOutput(serializers.Serializer):
    value_si = serializers.FloatField(allow_null=True)
    value_text = serializers.CharField()
    note = serializers.CharField()
    verdict = serializers.ChoiceField(choices=VERDICT_CHOICES, allow_blank=True, help_text="Empty: not judged.")


class ReadingAfterOutput(ReadingBeforeOutput):
    condition_code = serializers.CharField(
        required=False,
        allow_blank=True,
        help_text="The condition the corrected reading's judgement names (empty: none); amendments made before it was "
        "kept leave it out.",
    )
    reason = serializers.CharField(help_text="Why, as recorded (SI).")
    reason_parts = serializers.ListField(
        child=serializers.JSONField(), help_text="The reason as text and SI quantities (inspections.reasons)."
    )


class AmendmentChangeOutput(serializers.Serializer):
    """One corrected reading: what it was and what it is."""

    item = serializers.CharField()
    component = serializers.CharField(allow_null=True)
    before = ReadingBeforeOutput(allow_null=True, help_text="null: the item was not answered before.")
    after = ReadingAfterOutput()
    finding = serializers.IntegerField(required=False, help_text="The finding the correction opened.")
    cleared_finding = serializers.IntegerField(required=False, help_text="The finding the correction cleared.")


class AmendmentOutput(serializers.Serializer):
    id = serializers.IntegerField()
    public_id = serializers.UUIDField()
    inspection_id = serializers.IntegerField()
    reason = serializers.CharField()
    created_at = serializers.DateTimeField()
    changes = AmendmentChangeOutput(many=True)
    findings = FindingOutput(many=True, help_text="Findings newly failed by it.")


class NoteInput(serializers.Serializer):
    note = serializers.CharField()


class ReadingOutput(serializers.Serializer):
    item = serializers.CharField()
    component = serializers.CharField(allow_null=True)
    value_si = serializers.FloatField(allow_null=True, help_text="A number in its SI storage unit.")
    value_text = serializers.CharField(help_text="ok, not_ok, na, a choice's value or text.")
    entered = serializers.JSONField(allow_null=True, help_text="The value as typed, in the form's units.")
    note = serializers.CharField()
    verdict = serializers.ChoiceField(choices=VERDICT_CHOICES, allow_blank=True, help_text="Empty: not judged.")
    reason = serializers.CharField(help_text="Why, in the reader's units.")
    reason_si = serializers.CharField(help_text="Why, as recorded (SI).")
    improbable = serializers.BooleanField()


class InspectionEvaluationOutput(EvaluationOutput):
    amendment = serializers.IntegerField(allow_null=True, help_text="The amendment that judged it; null: the visit.")


class InspectionAmendmentOutput(serializers.Serializer):
    id = serializers.IntegerField()
    reason = serializers.CharField()
    created_at = serializers.DateTimeField()
    by = serializers.CharField()
    changes = AmendmentChangeOutput(many=True)
    findings = serializers.ListField(child=serializers.IntegerField(), help_text="The findings it opened (ids).")


class PhoneTimesOutput(serializers.Serializer):
    """The times as the phone sent them (its clock, as text), before they were placed on the server's timeline."""

    started_at = serializers.CharField(allow_null=True, required=False)
    finished_at = serializers.CharField(allow_null=True, required=False)
    signed_at = serializers.CharField(allow_null=True, required=False)
    sent_at = serializers.CharField(allow_null=True, required=False)
    received_at = serializers.CharField(required=False, help_text="The server's clock when the form arrived.")
    skew_from = serializers.ChoiceField(
        choices=["sent_at", "times"],
        allow_null=True,
        required=False,
        help_text="What the clock difference was measured from; null when unknown.",
    )


class InspectionOutput(serializers.Serializer):
    id = serializers.IntegerField()
    client_uuid = serializers.UUIDField()
    work_order = serializers.UUIDField(source="work_order.public_id")
    unit = serializers.CharField(source="ahu.tag")
    technician = serializers.CharField()
    state = serializers.CharField()
    template_versions = serializers.DictField(
        child=serializers.IntegerField(), help_text="{template code: version} filled against."
    )
    started_at = serializers.DateTimeField()
    finished_at = serializers.DateTimeField()
    signature_name = serializers.CharField()
    signed_at = serializers.DateTimeField()
    received_at = serializers.DateTimeField()
    clock_skew_s = serializers.FloatField(
        allow_null=True, read_only=True, help_text="The phone's clock minus the server's, seconds."
    )
    phone_times = serializers.SerializerMethodField(help_text="The times as the phone's clock gave them.")
    complete = serializers.BooleanField()
    flags = serializers.SerializerMethodField()
    flag_resolved_at = serializers.DateTimeField(allow_null=True)
    flag_resolution_note = serializers.CharField()
    verified_at = serializers.DateTimeField(allow_null=True)
    readings = serializers.SerializerMethodField()
    evaluations = serializers.SerializerMethodField()
    amendments = serializers.SerializerMethodField()

    def _system(self) -> str:
        # Reasons in the reader's units; reason_si keeps the SI text as recorded.
        return self.context.get("unit_system", "si")

    # The method fields give their values as built; the schema names each shape.
    @extend_schema_field(PhoneTimesOutput())
    def get_phone_times(self, obj: Inspection) -> dict:
        return dict(obj.phone_times)

    @extend_schema_field(FlagOutput(many=True))
    def get_flags(self, obj: Inspection) -> list[dict]:
        return list(obj.flags)

    @extend_schema_field(ReadingOutput(many=True))
    def get_readings(self, obj) -> list[dict]:
        return [
            {
                "item": r.item.api_key,
                "component": r.component.label_code if r.component else None,
                "value_si": r.value_si,
                "value_text": r.value_text,
                "entered": r.entered,
                "note": r.note,
                "verdict": r.verdict,
                "reason": reason_for(evaluation=r, unit_system=self._system()),
                "reason_si": r.reason,
                "improbable": r.improbable,
            }
            for r in obj.readings.all()
        ]

    @extend_schema_field(InspectionEvaluationOutput(many=True))
    def get_evaluations(self, obj) -> list[dict]:
        return [
            {
                "check": e.check_name,
                "item": e.item_key,
                "component": e.component.label_code if e.component else None,
                "verdict": e.verdict,
                "reason": reason_for(evaluation=e, unit_system=self._system()),
                "reason_si": e.reason,
                "method": e.method,
                "derived": e.derived,
                "amendment": e.amendment_id,
            }
            for e in obj.evaluations.all()
        ]

    @extend_schema_field(InspectionAmendmentOutput(many=True))
    def get_amendments(self, obj) -> list[dict]:
        return [
            {
                "id": a.pk,
                "reason": a.reason,
                "created_at": a.created_at.isoformat(),
                "by": str(a.created_by),
                "changes": a.changes,
                "findings": [f.pk for f in a.findings.all()],
            }
            for a in obj.amendments.all()
        ]


class FlaggedFormOutput(serializers.Serializer):
    id = serializers.IntegerField()
    client_uuid = serializers.UUIDField()
    work_order = serializers.UUIDField(source="work_order.public_id")
    unit = serializers.CharField(source="ahu.tag")
    site = serializers.CharField(source="ahu.building.site.name")
    technician = serializers.CharField()
    received_at = serializers.DateTimeField()
    clock_skew_s = serializers.FloatField(
        allow_null=True, read_only=True, help_text="The phone's clock minus the server's, seconds."
    )
    flags = serializers.SerializerMethodField()

    @extend_schema_field(FlagOutput(many=True))
    def get_flags(self, obj: Inspection) -> list[dict]:
        return list(obj.flags)


class FreezeReadinessUnitOutput(serializers.Serializer):
    unit = UnitBriefOutput()
    site = SiteRefOutput()
    status = serializers.ChoiceField(choices=["ready", "done_late", "due", "not_ready", "season_unknown"])
    label = serializers.CharField()
    ready = serializers.BooleanField()
    reason = serializers.CharField(help_text="Why, in plain words (a failed step, an open fault, never tested…).")
    tested_on = serializers.DateField(
        allow_null=True, help_text="The unit's latest freeze-protection test, whatever it found; site-local date."
    )
    not_passed = serializers.ListField(
        child=serializers.CharField(), help_text="Steps not passed of the test the status reads (empty if none)."
    )
    season_start = serializers.DateField(allow_null=True)
    window_opens = serializers.DateField(allow_null=True)
