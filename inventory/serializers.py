"""Input and output shapes of the registry API. No domain logic here: services validate."""

import math
from typing import Any

from django.urls import reverse
from drf_spectacular.helpers import lazy_serializer
from drf_spectacular.utils import extend_schema_field
from rest_framework import serializers

from accounts.api_errors import RowErrorOutput
from accounts.inputs import INT64_MAX, FieldErrors, check_integer, check_text
from accounts.models import Organisation

from . import selectors
from .inputs import ahu_number_check
from .models import AHU, Building, Component, ImportJob, Site
from .services import component_warnings, label_absolute_url, unit_warnings


class NamesValueMixin:
    """Add the refused value to each field message, so a message names field, value and what is allowed."""

    def to_internal_value(self, data):
        try:
            return super().to_internal_value(data)
        except serializers.ValidationError as exc:
            detail = exc.detail
            if isinstance(detail, dict) and hasattr(data, "get"):
                for name, messages in detail.items():
                    if name in data and isinstance(messages, list):
                        value = data.get(name)
                        detail[name] = [
                            f"{m} (got {value!r})" if repr(value) not in str(m) else str(m) for m in messages
                        ]
            raise serializers.ValidationError(detail) from None


class VisiblePrimaryKey(serializers.PrimaryKeyRelatedField):
    """A reference to a registry row the requesting person may see; others read as 'does not exist'."""

    default_error_messages = {
        "does_not_exist": "{pk_value} is not the id of a record you may see.",
        "incorrect_type": "expected a whole-number id, got {data_type}.",
    }

    def __init__(self, *, selector, **kwargs):
        self.selector = selector
        kwargs.setdefault("queryset", None)
        super().__init__(**kwargs)

    def get_queryset(self):
        return self.selector(user=self.context["request"].user)

    def to_internal_value(self, data):
        # 1e309 (infinity once parsed), 1.5 or 10**30 is no row's id: refused before it reaches the database.
        errors = FieldErrors()
        check_integer(data, key="id", label="Id", minimum=1, maximum=INT64_MAX, errors=errors)
        if errors:
            raise serializers.ValidationError(errors["id"])
        return super().to_internal_value(data)


class OrganisationSlug(serializers.SlugRelatedField):
    """An organisation named by its slug; NUL, control characters or an overlong slug are refused before the
    database sees them (PostgreSQL cannot hold NUL in text)."""

    def to_internal_value(self, data):
        errors = FieldErrors()
        check_text(data, key="slug", label="Organisation", max_length=50, errors=errors, required=True)
        if errors:
            raise serializers.ValidationError(errors["slug"])
        return super().to_internal_value(data)


# ---------------------------------------------------------------------------
# Sites and buildings
# ---------------------------------------------------------------------------
SITE_FIELDS = [
    "code", "name", "address", "latitude", "longitude", "altitude_m", "time_zone",
    "normals_min_c", "normals_max_c", "preheat_threshold_c", "cooling_threshold_c",
]  # fmt: skip


class SiteOutput(serializers.ModelSerializer):
    organisation = serializers.SlugRelatedField(slug_field="slug", read_only=True)
    client = serializers.SlugRelatedField(slug_field="slug", read_only=True, allow_null=True)

    class Meta:
        model = Site
        fields = ["id", "organisation", "client", *SITE_FIELDS, "freeze_season_start", "cooling_season_start"]
        read_only_fields = fields


class SiteInput(NamesValueMixin, serializers.ModelSerializer):
    organisation = OrganisationSlug(
        slug_field="slug", queryset=Organisation.objects.all(), required=False,
        help_text="Slug of the maintaining organisation; may be left out by a person who manages only one.",
    )  # fmt: skip
    client = OrganisationSlug(slug_field="slug", queryset=Organisation.objects.all(), required=False, allow_null=True)
    normals_min_c = serializers.ListField(child=serializers.FloatField(), min_length=12, max_length=12, required=False)
    normals_max_c = serializers.ListField(child=serializers.FloatField(), min_length=12, max_length=12, required=False)

    class Meta:
        model = Site
        fields = ["organisation", "client", *SITE_FIELDS]
        validators: list = []  # uniqueness is checked by the model's full_clean in the service


class BuildingOutput(serializers.ModelSerializer):
    site_code = serializers.CharField(source="site.code", read_only=True)

    class Meta:
        model = Building
        fields = ["id", "site", "site_code", "code", "name", "floors"]
        read_only_fields = fields


class BuildingInput(NamesValueMixin, serializers.ModelSerializer):
    site = VisiblePrimaryKey(selector=selectors.sites_visible_to)

    class Meta:
        model = Building
        fields = ["site", "code", "name", "floors"]
        validators: list = []


# ---------------------------------------------------------------------------
# Units and components
# ---------------------------------------------------------------------------
AHU_FIELDS = [
    "tag", "location", "area_served", "space_kind", "floor_area_m2", "design_occupants",
    "design_supply_airflow_m3s", "design_min_oa_fraction", "full_outdoor_air", "ventilation_zones",
    "air_distribution", "occupant_diversity", "system_ventilation_efficiency", "heat_recovery",
    "supply_air_setpoint_c", "duct_static_setpoint_pa", "service_start", "status", "notes",
]  # fmt: skip


class AHUOutput(serializers.ModelSerializer):
    site = serializers.IntegerField(source="building.site_id", read_only=True)
    site_code = serializers.CharField(source="building.site.code", read_only=True)
    building_code = serializers.CharField(source="building.code", read_only=True)
    label_url = serializers.SerializerMethodField()

    class Meta:
        model = AHU
        fields = ["id", "site", "site_code", "building", "building_code", "label_code", "label_url", *AHU_FIELDS]
        read_only_fields = fields

    def get_label_url(self, obj) -> str:
        return label_absolute_url(code=obj.label_code)

    def to_representation(self, instance):
        # A number stored before the input policy (NaN, infinity) is no JSON number: it reads as empty, so one
        # unit does not take the organisation's list down; manage.py check_data names and repairs it.
        data = super().to_representation(instance)
        for name, value in data.items():
            if isinstance(value, float) and not math.isfinite(value):
                data[name] = None
        return data


class PolicyNumber(serializers.FloatField):
    """A unit's number under the input policy (inventory.inputs.AHU_NUMBERS): finite and within its physical
    range, the refusal naming the field, the value and the range."""

    def __init__(self, *, policy: str, **kwargs):
        self.policy = policy
        super().__init__(**kwargs)

    def to_internal_value(self, data):
        errors = FieldErrors()
        value = ahu_number_check(data, name=self.policy, errors=errors)
        if errors:
            raise serializers.ValidationError(errors[self.policy])
        return value


def _policy_number(name: str) -> PolicyNumber:
    model_field = AHU._meta.get_field(name)
    optional = model_field.null
    return PolicyNumber(policy=name, required=not optional, allow_null=optional, help_text=model_field.help_text)


class AHUInput(NamesValueMixin, serializers.ModelSerializer):
    building = VisiblePrimaryKey(selector=selectors.buildings_visible_to)
    floor_area_m2 = _policy_number("floor_area_m2")
    design_supply_airflow_m3s = _policy_number("design_supply_airflow_m3s")
    design_min_oa_fraction = _policy_number("design_min_oa_fraction")
    # A whole number of people, 0–100,000: the policy speaks, not the database column's range (2³¹ − 1 on
    # PostgreSQL, which DRF would otherwise take from the model field and word as its stock message).
    design_occupants = _policy_number("design_occupants")
    # occupant_diversity and system_ventilation_efficiency: the model's ventilation check says range and zones.
    supply_air_setpoint_c = _policy_number("supply_air_setpoint_c")
    duct_static_setpoint_pa = _policy_number("duct_static_setpoint_pa")

    class Meta:
        model = AHU
        fields = ["building", *AHU_FIELDS]
        validators: list = []


COMPONENT_FIELDS = ["kind", "name", "parent", "specs", "position", "installed_on"]


class ComponentOutput(serializers.ModelSerializer):
    kind_label = serializers.CharField(source="get_kind_display", read_only=True)
    label_url = serializers.SerializerMethodField()

    class Meta:
        model = Component
        fields = ["id", "ahu", "label_code", "label_url", "kind_label", *COMPONENT_FIELDS]
        read_only_fields = fields

    def get_label_url(self, obj) -> str:
        return label_absolute_url(code=obj.label_code)


class PartWarningOutput(serializers.Serializer):
    component = serializers.IntegerField(help_text="The part (component id) the warning is about.")
    component_name = serializers.CharField()
    field = serializers.CharField(help_text="Its spec field, keyed as a refusal of it is: `specs.<field>`.")
    message = serializers.CharField(help_text="What is unlikely and what is usual, in SI units.")


def _part_warnings(pairs: list) -> list[dict]:
    rows = [
        {"component": part.pk, "component_name": part.name, "field": f"specs.{w.field}", "message": w.message}
        for part, w in pairs
    ]
    return list(PartWarningOutput(rows, many=True).data)


WARNINGS_HELP = "Values saved but unlikely (odd plants exist): check them; nothing was refused."


class ComponentSavedOutput(ComponentOutput):
    """A component as saved, with what is unlikely in its specs (inventory.services.component_warnings)."""

    warnings = serializers.SerializerMethodField(help_text=WARNINGS_HELP)

    class Meta(ComponentOutput.Meta):
        fields = [*ComponentOutput.Meta.fields, "warnings"]
        read_only_fields = fields

    @extend_schema_field(PartWarningOutput(many=True))
    def get_warnings(self, obj) -> list[dict]:
        return _part_warnings([(obj, w) for w in component_warnings(component=obj)])


class AHUSavedOutput(AHUOutput):
    """A unit as saved, with what its design supply airflow makes unlikely in its parts (unit_warnings)."""

    warnings = serializers.SerializerMethodField(help_text=WARNINGS_HELP + " Each names the part it is about.")

    class Meta(AHUOutput.Meta):
        fields = [*AHUOutput.Meta.fields, "warnings"]
        read_only_fields = fields

    @extend_schema_field(PartWarningOutput(many=True))
    def get_warnings(self, obj) -> list[dict]:
        return _part_warnings(unit_warnings(ahu=obj))


class ComponentInput(NamesValueMixin, serializers.ModelSerializer):
    ahu = VisiblePrimaryKey(selector=selectors.ahus_visible_to)
    parent = VisiblePrimaryKey(selector=selectors.components_visible_to, required=False, allow_null=True)
    specs = serializers.DictField(
        required=False, help_text="Spec field: value, in SI units; see /api/inventory/component-kinds/."
    )

    class Meta:
        model = Component
        fields = ["ahu", *COMPONENT_FIELDS]


class ComponentNodeOutput(serializers.Serializer):
    component = ComponentOutput()
    children = serializers.SerializerMethodField(help_text="The parts inside it, each a node like this one.")

    @extend_schema_field(lazy_serializer("inventory.serializers.ComponentNodeOutput")(many=True))
    def get_children(self, obj) -> list[dict]:
        return ComponentNodeOutput(obj["children"], many=True, context=self.context).data


class AHUTreeOutput(serializers.Serializer):
    unit = AHUOutput()
    components = ComponentNodeOutput(many=True)


# ---------------------------------------------------------------------------
# Component kinds and their spec fields
# ---------------------------------------------------------------------------
class SpecFieldOutput(serializers.Serializer):
    name = serializers.CharField()
    label = serializers.CharField()
    type = serializers.CharField(help_text="number, integer, choice, text, size (W×H×D mm), date or bool")
    unit = serializers.CharField(allow_blank=True)
    min = serializers.FloatField(allow_null=True)
    max = serializers.FloatField(allow_null=True)
    choices = serializers.ListField(child=serializers.CharField())
    required = serializers.BooleanField()
    allowed = serializers.CharField()


class ComponentKindOutput(serializers.Serializer):
    kind = serializers.CharField()
    label = serializers.CharField()
    fields = SpecFieldOutput(many=True)


class ImportWarningOutput(serializers.Serializer):
    line = serializers.IntegerField()
    column = serializers.CharField()
    value = serializers.CharField(allow_blank=True)
    reason = serializers.CharField()


class ImportResultOutput(serializers.Serializer):
    kind = serializers.CharField()
    created = serializers.IntegerField()
    updated = serializers.IntegerField()
    dry_run = serializers.BooleanField()
    warnings = ImportWarningOutput(
        many=True, help_text="Values taken but unlikely (odd plants exist): check them; the rows were not refused."
    )


class ImportInput(serializers.Serializer):
    file = serializers.FileField(help_text="CSV, UTF-8, comma-separated, header row first.")
    organisation = serializers.SlugField(required=False)
    dry_run = serializers.BooleanField(required=False, default=False)
    background = serializers.BooleanField(
        required=False,
        allow_null=True,
        default=None,
        help_text="Import as a background job (answer 202 with the job to poll). "
        "Unset: files of 10,000 rows or more go to a job, smaller ones are imported at once.",
    )


class FileImportJobOutput(serializers.Serializer[Any]):
    """What every background file import shows (a registry CSV here, a trend CSV in automation): its progress,
    and every bad row of a file refused whole. Each kind of job adds its own fields and its status's choices."""

    id = serializers.UUIDField(source="public_id")
    status_label = serializers.CharField(source="get_status_display")
    file_name = serializers.CharField()
    rows_total = serializers.IntegerField()
    detail = serializers.CharField()
    # A declared field, not Serializer.errors: DRF's metaclass takes declared fields off the class.
    errors = RowErrorOutput(many=True, help_text="Every bad row; nothing was imported when there is one.")  # type: ignore[assignment]
    created_at = serializers.DateTimeField()
    finished_at = serializers.DateTimeField(allow_null=True)

    # The keys in the answer's order (a subclass's own fields would otherwise all come last); any not named follow.
    key_order: tuple[str, ...] = ()

    def get_fields(self) -> dict[str, serializers.Field[Any, Any, Any, Any]]:
        fields = super().get_fields()
        ordered = {name: fields.pop(name) for name in self.key_order}
        return {**ordered, **fields}


class ImportJobOutput(FileImportJobOutput):
    """A background registry import: its progress, what it created or updated, and every bad row."""

    kind = serializers.CharField()
    status = serializers.ChoiceField(choices=ImportJob.Status.choices)
    dry_run = serializers.BooleanField()
    rows_done = serializers.IntegerField()
    created = serializers.IntegerField()
    updated = serializers.IntegerField()
    url = serializers.SerializerMethodField(help_text="Where to poll the job.")

    key_order = (
        "id", "kind", "status", "status_label", "dry_run", "file_name", "rows_total", "rows_done", "created",
        "updated", "detail", "errors", "created_at", "finished_at", "url",
    )  # fmt: skip

    def get_url(self, job) -> str:
        return reverse("inventory_api:import-job", kwargs={"public_id": job.public_id})
