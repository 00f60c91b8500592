from django.contrib import admin

from .models import (
    CalendarFeed,
    MeterReading,
    OutdoorTemperature,
    TaskDefinition,
    UnitTaskSetting,
    WorkOrder,
    WorkOrderTask,
)


@admin.register(TaskDefinition)
class TaskDefinitionAdmin(admin.ModelAdmin):
    list_display = [
        "code",
        "name",
        "organisation",
        "category",
        "trigger",
        "interval_value",
        "interval_unit",
        "run_hours",
        "season",
        "lead_days",
        "enabled",
    ]
    list_filter = ["organisation", "category", "trigger", "enabled"]
    search_fields = ["code", "name"]


@admin.register(UnitTaskSetting)
class UnitTaskSettingAdmin(admin.ModelAdmin):
    list_display = ["ahu", "task_code", "enabled", "reason"]
    raw_id_fields = ["ahu"]


@admin.register(MeterReading)
class MeterReadingAdmin(admin.ModelAdmin):
    list_display = ["ahu", "component", "hours", "taken_at", "source", "is_reset"]
    list_filter = ["source", "is_reset"]
    raw_id_fields = ["ahu", "component"]
    readonly_fields = ["recorded_by"]


@admin.register(OutdoorTemperature)
class OutdoorTemperatureAdmin(admin.ModelAdmin):
    list_display = ["site", "date", "min_c", "max_c", "mean_c", "source"]
    list_filter = ["source", "site"]


class WorkOrderTaskInline(admin.TabularInline):
    model = WorkOrderTask
    extra = 0
    fields = ["task_code", "component", "due_date", "occurrence_key", "completed_at"]
    readonly_fields = fields
    can_delete = False


@admin.register(WorkOrder)
class WorkOrderAdmin(admin.ModelAdmin):
    """Read-mostly: state changes go through the services (API and staff pages), so they are audited."""

    list_display = ["title", "ahu", "kind", "state", "priority", "approval", "assignee", "due_date", "version"]
    list_filter = ["kind", "state", "priority", "approval", "organisation"]
    search_fields = ["title", "ahu__tag", "public_id"]
    readonly_fields = [f.name for f in WorkOrder._meta.concrete_fields if f.name not in {"title", "scheduled_for"}]
    inlines = [WorkOrderTaskInline]


@admin.register(CalendarFeed)
class CalendarFeedAdmin(admin.ModelAdmin):
    list_display = ["user", "created_at", "revoked_at"]
    readonly_fields = ["token"]


@admin.register(WorkOrderTask)
class WorkOrderTaskAdmin(admin.ModelAdmin):
    """Task occurrences are written by the engine only; the admin shows them."""

    list_display = ["task_code", "ahu", "component", "due_date", "completed_at", "work_order"]
    list_filter = ["task_code"]
    search_fields = ["task_code", "ahu__tag", "occurrence_key"]

    def has_add_permission(self, request, obj=None):
        return False

    def has_change_permission(self, request, obj=None):
        return False
