"""Input/output serializers of the inspections API: shapes for the schema, no domain logic."""

from drf_spectacular.utils import extend_schema_field
from rest_framework import serializers

from engineering.units import SYSTEMS
from scheduling.serializers import SiteRefOutput, UnitBriefOutput

from .models import VERDICT_CHOICES, ChecklistItem, Finding, Inspection
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


class ChecklistAssigneeOutput(serializers.Serializer):
    id = serializers.IntegerField()
    name = serializers.CharField()


class ChecklistSiteOutput(serializers.Serializer):
    code = serializers.CharField()
    name = serializers.CharField()


class ChecklistUnitOutput(serializers.Serializer):
    tag = serializers.CharField()
    label_code = serializers.CharField()
    location = serializers.CharField()
    area_served = serializers.CharField()
    building = serializers.CharField(help_text="The building's name.")
    site = ChecklistSiteOutput()


class ChecklistTaskOutput(serializers.Serializer):
    code = serializers.CharField()
    title = serializers.CharField()


class ChecklistWorkOrderOutput(serializers.Serializer):
    public_id = serializers.UUIDField()
    version = serializers.IntegerField()
    title = serializers.CharField()
    kind = serializers.CharField()
    state = serializers.CharField()
    priority = serializers.CharField()
    due_date = serializers.DateField()
    assignee = ChecklistAssigneeOutput(allow_null=True)
    unit = ChecklistUnitOutput()
    tasks = ChecklistTaskOutput(many=True)


class ChecklistComponentOutput(serializers.Serializer):
    label_code = serializers.CharField()
    name = serializers.CharField()
    kind = serializers.CharField()


# A field named like one of Field's own attributes (label, required) is still a declared field: DRF's metaclass
# takes declared fields off the class, so mypy's complaint about the override does not apply.
class ChoiceOutput(serializers.Serializer):
    value = serializers.CharField()
    label = serializers.CharField()  # type: ignore[assignment]
    ok = serializers.BooleanField(help_text="false: choosing it counts as not ok.")


class BandOutput(serializers.Serializer):
    min = serializers.FloatField(allow_null=True, help_text="null: unbounded.")
    max = serializers.FloatField(allow_null=True, help_text="null: unbounded.")


class ScaleLimitsOutput(serializers.Serializer):
    physical = BandOutput(help_text="Outside it the value is impossible: the form is refused.")
    plausible = BandOutput(help_text="Outside it the form is flagged for review.")
    ok = BandOutput(help_text="Inside it: ok.")
    watch = BandOutput(help_text="Outside ok but inside it: watch; else fail.")


class LimitsOutput(serializers.Serializer):
    si = ScaleLimitsOutput(help_text="In the storage units (unit_si).")
    display = ScaleLimitsOutput(help_text="In the reader's units (unit).")


class ChecklistItemOutput(serializers.Serializer):
    key = serializers.CharField(help_text="<template code>.<item>, unique in the checklist.")
    kind = serializers.ChoiceField(choices=ChecklistItem.Kind.choices)
    label = serializers.CharField()  # type: ignore[assignment]
    help = serializers.CharField()
    component = ChecklistComponentOutput(allow_null=True, help_text="The part it concerns; null for the unit.")
    quantity = serializers.CharField(allow_null=True)
    unit = serializers.CharField(allow_null=True, help_text="Number items: the reader's unit.")
    unit_si = serializers.CharField(allow_null=True, help_text="Number items: the storage unit.")
    decimals = serializers.IntegerField()
    choices = ChoiceOutput(many=True)
    required = serializers.BooleanField()  # type: ignore[assignment]
    photo_required_when_not_ok = serializers.BooleanField()
    note_required_when_not_ok = serializers.BooleanField()
    limits = LimitsOutput(allow_null=True, help_text="Number items only.")
    limits_source = serializers.CharField()
    judged_on_server = serializers.BooleanField(
        help_text="The verdict needs other readings or the unit's data: judged by the evaluation context."
    )


class ChecklistTemplateOutput(serializers.Serializer):
    code = serializers.CharField()
    version = serializers.IntegerField()
    title = serializers.CharField()
    cautions = serializers.ListField(child=serializers.CharField())
    items = ChecklistItemOutput(many=True)


class ChecklistOutput(serializers.Serializer):
    """The checklist document the phone caches; inspections/SYNC.md describes it."""

    work_order = ChecklistWorkOrderOutput()
    unit_system = serializers.CharField()
    evaluation = serializers.DictField(
        help_text="What the phone needs to judge the readings offline as the server will (inspections/SYNC.md)."
    )
    cautions = serializers.ListField(child=serializers.CharField())
    templates = ChecklistTemplateOutput(many=True)


class TemplateItemOutput(serializers.Serializer):
    key = serializers.CharField()
    kind = serializers.ChoiceField(choices=ChecklistItem.Kind.choices)
    label = serializers.CharField()  # type: ignore[assignment]
    quantity = serializers.CharField()
    component_kind = serializers.CharField()
    required = serializers.BooleanField()  # type: ignore[assignment]


class TemplateOutput(serializers.Serializer):
    """A checklist template in force (its latest version) with its items."""

    code = serializers.CharField()
    version = serializers.IntegerField()
    title = serializers.CharField()
    cautions = serializers.ListField(child=serializers.CharField())
    items = TemplateItemOutput(many=True)


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
