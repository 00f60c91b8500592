"""Admin for inspection records: read-only.

Inspections, readings, evaluations, findings, photos and amendments are the
record an auditor relies on; they change only through the services (sync,
amendment, verification, flag resolution), which audit every change. The admin
lets staff look them up. Checklist templates are versioned data shipped in
``inspections/checklists.py``; a new version is added there, never edited here.
"""

from django.contrib import admin

from .models import Amendment, ChecklistItem, ChecklistTemplate, Evaluation, Finding, Inspection, Photo, Reading


class ReadOnlyAdmin(admin.ModelAdmin):
    def has_add_permission(self, request, obj=None):
        return False

    def has_change_permission(self, request, obj=None):
        return False

    def has_delete_permission(self, request, obj=None):
        return False


class ReadOnlyInline(admin.TabularInline):
    extra = 0
    can_delete = False
    show_change_link = True

    def has_add_permission(self, request, obj=None):
        return False

    def has_change_permission(self, request, obj=None):
        return False


class ChecklistItemInline(ReadOnlyInline):
    model = ChecklistItem
    fields = ["position", "key", "kind", "label", "quantity", "component_kind", "required"]


@admin.register(ChecklistTemplate)
class ChecklistTemplateAdmin(ReadOnlyAdmin):
    list_display = ["code", "version", "title", "created_at"]
    search_fields = ["code", "title"]
    inlines = [ChecklistItemInline]


class ReadingInline(ReadOnlyInline):
    model = Reading
    fields = ["item", "component", "value_si", "value_text", "verdict", "reason", "note", "improbable"]


class EvaluationInline(ReadOnlyInline):
    model = Evaluation
    fields = ["check_name", "component", "verdict", "reason", "method", "amendment"]


class AmendmentInline(ReadOnlyInline):
    model = Amendment
    fields = ["created_at", "created_by", "reason", "changes"]


@admin.register(Inspection)
class InspectionAdmin(ReadOnlyAdmin):
    list_display = ["client_uuid", "ahu", "work_order", "technician", "state", "finished_at"]
    list_filter = ["state", "organisation"]
    search_fields = ["client_uuid", "ahu__tag", "work_order__public_id"]
    inlines = [ReadingInline, EvaluationInline, AmendmentInline]


@admin.register(Finding)
class FindingAdmin(ReadOnlyAdmin):
    list_display = ["title", "ahu", "component", "source", "severity", "state", "opened_at", "corrective_work_order"]
    list_filter = ["source", "severity", "state", "organisation"]
    search_fields = ["title", "ahu__tag"]


@admin.register(Photo)
class PhotoAdmin(ReadOnlyAdmin):
    list_display = ["client_uuid", "work_order", "item_key", "content_type", "width", "height"]
    search_fields = ["client_uuid", "work_order__public_id"]


@admin.register(Reading)
class ReadingAdmin(ReadOnlyAdmin):
    list_display = ["inspection", "item", "component", "value_si", "verdict"]
    list_filter = ["verdict"]


@admin.register(Evaluation)
class EvaluationAdmin(ReadOnlyAdmin):
    list_display = ["inspection", "check_name", "component", "verdict", "method"]
    list_filter = ["verdict", "check_name"]


@admin.register(Amendment)
class AmendmentAdmin(ReadOnlyAdmin):
    list_display = ["public_id", "inspection", "created_by", "created_at", "reason"]


@admin.register(ChecklistItem)
class ChecklistItemAdmin(ReadOnlyAdmin):
    list_display = ["template", "key", "kind", "label", "quantity", "component_kind"]
    list_filter = ["kind", "template__code"]
    search_fields = ["key", "label"]
