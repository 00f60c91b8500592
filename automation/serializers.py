"""Input and output shapes of the automation API. No domain logic here: services check the values."""

from rest_framework import serializers

from inventory.serializers import FileImportJobOutput, NamesValueMixin

from .models import BacnetObjectType, Point, TrendImportJob
from .trend_cells import LAYOUTS, UNIT_SYSTEMS, UNITS_UNCHANGED, units_choice_label, units_problem
from .vocabulary import POINT_CLASSES, PointUnit

_ID = {"min_value": 1, "max_value": 2**63 - 1}


class PointOutput(serializers.ModelSerializer):
    site = serializers.IntegerField(source="ahu.building.site_id")
    unit_tag = serializers.CharField(source="ahu.tag")
    component_name = serializers.CharField(source="component.name", allow_null=True, default=None)
    brick_class_label = serializers.CharField(source="get_brick_class_display")

    class Meta:
        model = Point
        fields = [
            "id",
            "site",
            "ahu",
            "unit_tag",
            "component",
            "component_name",
            "name",
            "brick_class",
            "brick_class_label",
            "unit",
            "bacnet_device_instance",
            "bacnet_object_type",
            "bacnet_object_instance",
            "last_value",
            "last_value_at",
            "stale",
        ]


class PointInput(NamesValueMixin, serializers.Serializer):
    """A point's fields as sent; the service checks them against the unit, its parts and the vocabulary."""

    ahu = serializers.IntegerField(help_text="The unit's id.", **_ID)
    component = serializers.IntegerField(required=False, allow_null=True, help_text="A part of the unit.", **_ID)
    name = serializers.CharField(max_length=200, help_text="The point's name in the automation system.")
    # Text, not choices: the service's refusal names the value and every class (or unit) allowed.
    brick_class = serializers.CharField(max_length=60, help_text="The Brick Schema class: " + ", ".join(POINT_CLASSES))
    unit = serializers.CharField(
        max_length=20,
        required=False,
        allow_blank=True,
        help_text="Empty: the class's SI unit; else one of " + ", ".join(PointUnit.values),
    )
    bacnet_device_instance = serializers.IntegerField(required=False, allow_null=True, min_value=0, max_value=2**31)
    bacnet_object_type = serializers.CharField(
        max_length=30, required=False, allow_blank=True, help_text=", ".join(BacnetObjectType.values)
    )
    bacnet_object_instance = serializers.IntegerField(required=False, allow_null=True, min_value=0, max_value=2**31)


class PointChangeInput(PointInput):
    """The fields to change (the unit stays)."""

    ahu = None

    def __init__(self, *args, **kwargs):
        super().__init__(*args, partial=True, **kwargs)


class TrendUploadInput(serializers.Serializer):
    file = serializers.FileField(help_text="CSV, UTF-8, header row first.")
    layout = serializers.ChoiceField(
        choices=LAYOUTS, help_text="wide: a column per point; long: columns timestamp, point, value."
    )
    units = serializers.ChoiceField(
        choices=[(s, units_choice_label(s)) for s in UNIT_SYSTEMS],
        help_text=(
            "Units of the values in the file, stated by the importer: "
            + "; ".join(f"{s}, {units_choice_label(s)}" for s in UNIT_SYSTEMS)
            + f". Converted to SI by each point's class; {UNITS_UNCHANGED}."
        ),
        error_messages={
            "required": "required: state the units of the file's values; allowed: " + " or ".join(UNIT_SYSTEMS) + ".",
            "null": "required: state the units of the file's values; allowed: " + " or ".join(UNIT_SYSTEMS) + ".",
            "invalid_choice": "{input!r} " + units_problem(None) + ".",
        },
    )
    background = serializers.BooleanField(
        required=False,
        allow_null=True,
        default=None,
        help_text="Import as a background job (202 with the job to poll). Unset: files of 20,000 rows or more.",
    )


class TrendResultOutput(serializers.Serializer):
    rows = serializers.IntegerField()
    values = serializers.IntegerField()
    points = serializers.IntegerField()
    first = serializers.DateTimeField(allow_null=True)
    last = serializers.DateTimeField(allow_null=True)


class TrendImportJobOutput(FileImportJobOutput):
    """A background trend import: its progress, the values stored, and every bad row or cell."""

    site = serializers.IntegerField(source="site_id")
    layout = serializers.CharField()
    units = serializers.CharField(help_text="The units the file's values were read in: si or us.")
    status = serializers.ChoiceField(choices=TrendImportJob.Status.choices)
    values_stored = serializers.IntegerField()

    key_order = (
        "id", "site", "layout", "units", "status", "status_label", "file_name", "rows_total", "values_stored", "detail",
        "errors", "created_at", "finished_at",
    )  # fmt: skip


class BrickImportInput(serializers.Serializer):
    file = serializers.FileField(help_text="A Brick model in Turtle, as the export writes it.")
    organisation = serializers.SlugField(required=False, help_text="Needed when you manage several.")


class BrickProblemOutput(serializers.Serializer):
    subject = serializers.CharField()
    field = serializers.CharField()
    value = serializers.CharField()
    reason = serializers.CharField()


class BrickProblemsOutput(serializers.Serializer):
    detail = serializers.CharField()
    errors = BrickProblemOutput(many=True)


class BrickImportOutput(serializers.Serializer):
    site = serializers.IntegerField(source="pk")
    code = serializers.CharField()
    name = serializers.CharField()
    points = serializers.IntegerField()
