"""Input and output shapes of the scheduling API. No domain logic here."""

from drf_spectacular.utils import extend_schema_field
from rest_framework import serializers

from accounts import api_fields
from accounts.api_errors import ErrorOutput
from inventory.today import today_for

from . import shapes
from .due_basis import due_bases
from .models import MeterReading, OutdoorTemperature, TaskDefinition, WorkOrder, WorkOrderTask


class TaskDefinitionOutput(serializers.ModelSerializer):
    library = serializers.BooleanField(source="is_library", read_only=True)

    class Meta:
        model = TaskDefinition
        fields = [
            "code",
            "name",
            "description",
            "category",
            "component_kind",
            "spec_filter",
            "extra_targets",
            "trigger",
            "interval_value",
            "interval_unit",
            "anchor",
            "grace_days",
            "run_hours",
            "season",
            "lead_days",
            "condition_code",
            "checklist_code",
            "estimated_minutes",
            "skill",
            "safety_notes",
            "source",
            "enabled",
            "library",
        ]


class TaskOverrideInput(serializers.Serializer):
    interval_value = api_fields.IntegerField(min_value=1, required=False)
    interval_unit = serializers.ChoiceField(choices=TaskDefinition.IntervalUnit.choices, required=False)
    anchor = serializers.ChoiceField(choices=TaskDefinition.Anchor.choices, required=False)
    grace_days = api_fields.IntegerField(min_value=0, max_value=365, required=False)
    run_hours = api_fields.IntegerField(min_value=1, required=False)
    lead_days = api_fields.IntegerField(min_value=0, max_value=180, required=False)
    estimated_minutes = api_fields.IntegerField(min_value=1, max_value=24 * 60, required=False)
    enabled = serializers.BooleanField(required=False)


class UnitBriefOutput(serializers.Serializer):
    id = serializers.IntegerField()
    tag = serializers.CharField()
    label_code = serializers.CharField()


class SiteRefOutput(serializers.Serializer):
    id = serializers.IntegerField()
    code = serializers.CharField()
    name = serializers.CharField()


class SitePlaceOutput(SiteRefOutput):
    latitude = serializers.FloatField()
    longitude = serializers.FloatField()


class VisitSiteOutput(SiteRefOutput):
    address = serializers.CharField()
    latitude = serializers.FloatField()
    longitude = serializers.FloatField()


class PersonRefOutput(serializers.Serializer):
    id = serializers.IntegerField()
    username = serializers.CharField()
    name = serializers.CharField()


class TaskComponentOutput(serializers.Serializer):
    id = serializers.IntegerField()
    name = serializers.CharField()
    kind = serializers.CharField()
    label_code = serializers.CharField()


# The work order's shape is built by scheduling.shapes (the fast reads build the same dicts with it); these
# serializers declare the schema and hand their instances to the builder.
def _ShapeField(shape: serializers.Serializer) -> serializers.Field:
    """A read-only field documented as ``shape`` (its value comes from the builder, as a method field's would)."""
    return extend_schema_field(shape)(type("ShapeField", (serializers.ReadOnlyField,), {}))()


class WorkOrderTaskOutput(serializers.ModelSerializer):
    code = serializers.CharField(source="task_code")
    name = serializers.CharField(source="task.name")
    checklist_code = serializers.CharField(source="task.checklist_code")
    estimated_minutes = serializers.IntegerField(source="task.estimated_minutes")
    safety_notes = serializers.CharField(source="task.safety_notes")
    component = _ShapeField(TaskComponentOutput(allow_null=True))

    class Meta:
        model = WorkOrderTask
        fields = [
            "id",
            "code",
            "name",
            "checklist_code",
            "component",
            "due_date",
            "estimated_minutes",
            "safety_notes",
            "completed_at",
        ]

    def to_representation(self, instance) -> dict:
        return shapes.task_shape(instance)


class WorkOrderOutput(serializers.ModelSerializer):
    id = serializers.UUIDField(source="public_id")
    unit = UnitBriefOutput(read_only=True)
    site = SitePlaceOutput(read_only=True)
    assignee = _ShapeField(PersonRefOutput(allow_null=True))
    tasks = WorkOrderTaskOutput(many=True)
    allowed_states = serializers.ListField(child=serializers.CharField(), read_only=True)
    due_basis = serializers.CharField(
        read_only=True,
        help_text=(
            "The run-hour meter its run-hour tasks' due dates were projected from, in words: \"from the supply fan's "
            'run-hours in the building-automation trends (last reading 2 Dec)" or "from the unit\'s typed run-hour '
            "meter\"; empty when it holds no run-hour task, and in the technician's today (its visits are read in one "
            "query, without the meters)."
        ),
    )

    class Meta:
        model = WorkOrder
        fields = list(shapes.WORK_ORDER_FIELDS)

    def to_representation(self, instance) -> dict:
        # The list reads every work order's basis at once (context "due_bases"); one work order reads its own.
        bases = self.context.get("due_bases")
        if bases is None:
            bases = due_bases(work_order_ids=[instance.pk], today=today_for(instance.ahu.building.site))
        return shapes.work_order_shape(
            instance, tasks=[shapes.task_shape(t) for t in instance.tasks.all()], due_basis=bases.get(instance.pk, "")
        )


class VersionInput(serializers.Serializer):
    version = serializers.IntegerField(min_value=1, help_text="The version you last read (optimistic check).")


class RejectInput(VersionInput):
    reason = serializers.CharField(
        required=False,
        allow_blank=True,
        default="",
        help_text="Why the proposed work is not needed (required, at most 300 characters); kept in the audit trail.",
    )


class AssignInput(VersionInput):
    assignee = serializers.CharField(help_text="Username of a technician of the organisation.")
    scheduled_for = api_fields.DateField(
        required=False,
        allow_null=True,
        help_text="Optionally plan the visit for this day too (the site's local date, today or later).",
    )
    confirm_warnings = serializers.BooleanField(
        required=False,
        default=False,
        help_text=(
            "Assign even though the assignment warns: the technician's day (tasks plus travel) would pass their "
            "capacity, the technician lacks a skill the work's tasks need, or the day is after the work's due date "
            "(urgent work, or work that would show overdue). Without it such an assignment answers 409 with the "
            "warnings and nothing is saved."
        ),
    )
    confirm_over_capacity = serializers.BooleanField(
        required=False,
        default=False,
        help_text="The older name of confirm_warnings: true confirms every warning, as confirm_warnings does.",
    )


class ScheduleInput(VersionInput):
    scheduled_for = api_fields.DateField(
        allow_null=True,
        help_text="The day the visit is planned for (site's local date, today or later); null clears it.",
    )


class TransitionInput(VersionInput):
    to_state = serializers.ChoiceField(choices=WorkOrder.State.choices)
    reason = serializers.CharField(required=False, allow_blank=True, default="")


class ConflictOutput(serializers.Serializer):
    detail = serializers.CharField()
    current_version = serializers.IntegerField()


class DayLoadOutput(serializers.Serializer):
    date = serializers.DateField()
    hours = serializers.FloatField(help_text="Tasks plus travel.")
    task_hours = serializers.FloatField(help_text="The tasks' estimated hours.")
    travel_minutes = serializers.IntegerField(help_text="Driving between the day's sites along the suggested route.")
    travel_km = serializers.FloatField(help_text="Great-circle kilometres of that route.")
    sites = serializers.IntegerField()
    visits = serializers.IntegerField()
    capacity_hours = serializers.FloatField()
    over = serializers.BooleanField(help_text="hours > capacity_hours")


class SuggestedOutput(PersonRefOutput):
    load = DayLoadOutput(help_text="Their day with this work added: tasks plus travel against capacity.")


class AssignmentWarningOutput(ErrorOutput):
    """A refusal whose `detail` says each warning (the technician and the day's hours against their capacity, the
    skills they lack, the day against the due date), and whose `errors` say under `confirm_warnings` what to send
    to assign anyway; with each warning by code, the day's load and a suggestion."""

    warnings = serializers.ListField(
        child=serializers.DictField(child=serializers.CharField()),
        help_text=(
            "Each warning as {code, message}: code over_capacity, missing_skill or after_due_date; the message "
            "names the technician, the skill, the day and the due date."
        ),
    )
    load = DayLoadOutput(help_text="The technician's day with this work added.")
    suggestion = SuggestedOutput(allow_null=True, help_text="The least-loaded technician with the skills.")


class MeterReadingInput(serializers.Serializer):
    unit_label = serializers.CharField()
    component_label = serializers.CharField(required=False, allow_blank=True, default="")
    hours = api_fields.FloatField(min_value=0)
    taken_at = serializers.CharField(
        max_length=40,
        help_text="ISO 8601 date-time; without an offset it is read in the unit's site time zone (as the CSV is).",
    )
    is_reset = serializers.BooleanField(default=False)


class MeterReadingOutput(serializers.ModelSerializer):
    unit_label = serializers.CharField(source="ahu.label_code")

    class Meta:
        model = MeterReading
        fields = ["id", "unit_label", "component", "hours", "taken_at", "source", "is_reset"]


class OutdoorTemperatureOutput(serializers.ModelSerializer):
    class Meta:
        model = OutdoorTemperature
        fields = ["date", "min_c", "max_c", "mean_c", "source"]


class VisitOutput(serializers.Serializer):
    order = serializers.IntegerField()
    leg_km = serializers.FloatField()
    site = serializers.SerializerMethodField()
    work_orders = WorkOrderOutput(many=True)

    @extend_schema_field(VisitSiteOutput())
    def get_site(self, obj) -> dict:
        s = obj.site
        return {
            "id": s.pk,
            "code": s.code,
            "name": s.name,
            "address": s.address,
            "latitude": s.latitude,
            "longitude": s.longitude,
        }


class BuildingRefOutput(serializers.Serializer):
    id = serializers.IntegerField()
    name = serializers.CharField()


class UnitRefOutput(serializers.Serializer):
    id = serializers.IntegerField()
    tag = serializers.CharField()
    name = serializers.CharField(
        help_text='The tag with its building, "AHU-01 (Mill Block)": tags repeat across buildings.'
    )
    label_code = serializers.CharField()
    building = BuildingRefOutput()


class BoardItemOutput(serializers.Serializer):
    """A work order on the board, without its tasks (the work-order endpoint has them)."""

    id = serializers.UUIDField()
    kind = serializers.ChoiceField(choices=WorkOrder.Kind.choices)
    state = serializers.ChoiceField(choices=WorkOrder.State.choices)
    priority = serializers.ChoiceField(choices=WorkOrder.Priority.choices)
    approval = serializers.ChoiceField(choices=WorkOrder.Approval.choices)
    title = serializers.CharField()
    condition_code = serializers.CharField()
    unit = UnitRefOutput()
    site = SiteRefOutput()
    assignee = PersonRefOutput(allow_null=True)
    due_date = serializers.DateField()
    due_by = serializers.DateTimeField(allow_null=True, help_text="A due time (call-outs, frost checks), else null.")
    overdue_on = serializers.DateField(allow_null=True)
    scheduled_for = serializers.DateField(allow_null=True)
    version = serializers.IntegerField()
    allowed_states = serializers.ListField(child=serializers.CharField())
    suggested = SuggestedOutput(
        allow_null=True, help_text="Unassigned work: the least-loaded technician with the skills for its day."
    )


class BoardCountsOutput(serializers.Serializer):
    overdue = serializers.IntegerField(help_text="All overdue work, whatever the page.")
    due = serializers.IntegerField(help_text="All unassigned work due in the week.")
    assigned = serializers.IntegerField(help_text="All assigned work due in the week.")


class BoardDayOutput(serializers.Serializer):
    date = serializers.DateField()
    due = serializers.IntegerField(help_text="Unassigned work due that day.")
    assigned = serializers.IntegerField(help_text="Assigned work due that day.")


class TechnicianLoadOutput(serializers.Serializer):
    technician = PersonRefOutput()
    days = DayLoadOutput(many=True)


class ToVerifyOutput(serializers.Serializer):
    id = serializers.UUIDField()
    title = serializers.CharField()
    unit = UnitRefOutput()
    site = SiteRefOutput()
    assignee = PersonRefOutput(allow_null=True)
    completed_at = serializers.DateTimeField(allow_null=True)
    version = serializers.IntegerField()


class OverdueAwaitingOutput(serializers.Serializer):
    id = serializers.UUIDField()
    title = serializers.CharField()
    kind = serializers.CharField()
    priority = serializers.CharField()
    unit = UnitRefOutput()
    site = SiteRefOutput()
    due_date = serializers.DateField()
    overdue_on = serializers.DateField(allow_null=True)
    version = serializers.IntegerField(help_text="Send it to approve or reject the work.")
    due_words = serializers.CharField(
        help_text='The due date in words on the site\'s today: "due 20 Sep 2026, 75 days overdue (since 21 Sep 2026)".'
    )


class BoardOutput(serializers.Serializer):
    week_start = serializers.DateField(help_text="The Monday of the week shown.")
    today = serializers.DateField(help_text="The day overdue is judged on.")
    limit = serializers.IntegerField()
    offset = serializers.IntegerField()
    counts = BoardCountsOutput(help_text="Totals of each section for the whole week, not only this page.")
    days = BoardDayOutput(many=True, help_text="Totals per day of the week, Monday first.")
    overdue = BoardItemOutput(many=True, help_text="Rows offset to offset + limit of the overdue work, due first.")
    due = BoardItemOutput(many=True, help_text="Rows offset to offset + limit of the unassigned work of the week.")
    assigned = BoardItemOutput(many=True, help_text="Rows offset to offset + limit of the assigned work of the week.")
    load = TechnicianLoadOutput(many=True, help_text="Each technician's day: tasks plus travel against capacity.")
    to_verify = ToVerifyOutput(many=True, help_text="Completed work waiting for verification, longest waiting first.")
    overdue_awaiting = OverdueAwaitingOutput(
        many=True,
        help_text=(
            "Proposed corrective work overdue at its site and awaiting approval, due first: the sections leave it out "
            "until it is approved, while the property manager's dashboard and the compliance record count it overdue."
        ),
    )


class CalendarFeedOutput(serializers.Serializer):
    url = serializers.CharField()
