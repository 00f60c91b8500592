"""Input/output serializers of the inspections API: shapes for the schema, no domain logic."""

from rest_framework import serializers

from engineering.units import SYSTEMS

from .models import Finding
from .selectors import reason_for


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


class SyncResultOutput(serializers.Serializer):
    client_uuid = serializers.CharField(allow_null=True)
    status = serializers.ChoiceField(choices=["stored", "flagged", "duplicate", "refused"])
    first_status = serializers.CharField(required=False)
    inspection_id = serializers.IntegerField(allow_null=True)
    work_order_state = serializers.CharField(allow_null=True)
    flags = serializers.ListField(child=serializers.DictField())
    errors = serializers.DictField()
    evaluation = serializers.ListField(child=serializers.DictField())
    findings = serializers.ListField(child=serializers.DictField())
    clock_skew_s = serializers.FloatField(
        allow_null=True, help_text="The phone's clock minus the server's at receipt, in seconds; null when unknown."
    )


class SyncOutput(serializers.Serializer):
    results = SyncResultOutput(many=True)


class ChecklistOutput(serializers.Serializer):
    work_order = serializers.DictField()
    unit_system = serializers.CharField()
    cautions = serializers.ListField(child=serializers.CharField())
    templates = serializers.ListField(child=serializers.DictField())


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


class AmendmentOutput(serializers.Serializer):
    id = serializers.IntegerField()
    public_id = serializers.UUIDField()
    inspection_id = serializers.IntegerField()
    reason = serializers.CharField()
    created_at = serializers.DateTimeField()
    changes = serializers.ListField(child=serializers.DictField())
    findings = serializers.ListField(child=serializers.DictField(), help_text="Findings newly failed by it.")


class NoteInput(serializers.Serializer):
    note = serializers.CharField()


class InspectionOutput(serializers.Serializer):
    id = serializers.IntegerField()
    client_uuid = serializers.UUIDField()
    work_order = serializers.UUIDField(source="work_order.public_id")
    unit = serializers.CharField(source="ahu.tag")
    technician = serializers.CharField()
    state = serializers.CharField()
    template_versions = serializers.DictField()
    started_at = serializers.DateTimeField()
    finished_at = serializers.DateTimeField()
    signature_name = serializers.CharField()
    signed_at = serializers.DateTimeField()
    received_at = serializers.DateTimeField()
    clock_skew_s = serializers.FloatField(
        allow_null=True, read_only=True, help_text="The phone's clock minus the server's, seconds."
    )
    phone_times = serializers.DictField(help_text="The times as the phone's clock gave them.")
    complete = serializers.BooleanField()
    flags = serializers.ListField(child=serializers.DictField())
    flag_resolved_at = serializers.DateTimeField()
    flag_resolution_note = serializers.CharField()
    verified_at = serializers.DateTimeField()
    readings = serializers.SerializerMethodField()
    evaluations = serializers.SerializerMethodField()
    amendments = serializers.SerializerMethodField()

    def _system(self) -> str:
        # Reasons in the reader's units; reason_si keeps the SI text as recorded.
        return self.context.get("unit_system", "si")

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
    flags = serializers.ListField(child=serializers.DictField())


class FreezeReadinessUnitOutput(serializers.Serializer):
    unit = serializers.DictField(help_text="{id, tag, label_code}")
    site = serializers.DictField(help_text="{id, code, name}")
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
    times_seen = serializers.IntegerField(help_text="Visits that saw it.")
    corrective_work_order = serializers.UUIDField(allow_null=True)
