"""A work order's checklist and the templates as the phone reads them."""

from __future__ import annotations

from rest_framework import serializers

from ..models import ChecklistItem


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
