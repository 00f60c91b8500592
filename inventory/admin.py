from django.contrib import admin

from .models import AHU, Building, Component, ImportJob, Site


class BuildingInline(admin.TabularInline):
    model = Building
    extra = 0


@admin.register(Site)
class SiteAdmin(admin.ModelAdmin):
    list_display = ["name", "code", "organisation", "client", "time_zone", "preheat_threshold_c", "freeze_season_start"]
    list_filter = ["organisation"]
    search_fields = ["name", "code", "address"]
    readonly_fields = ["freeze_season_start", "cooling_season_start", "season_source"]
    inlines = [BuildingInline]


@admin.register(Building)
class BuildingAdmin(admin.ModelAdmin):
    list_display = ["name", "code", "site"]
    search_fields = ["name", "code"]


class ComponentInline(admin.TabularInline):
    model = Component
    extra = 0
    fields = ["kind", "name", "parent", "position", "specs", "label_code"]
    readonly_fields = ["label_code"]


@admin.register(AHU)
class AHUAdmin(admin.ModelAdmin):
    list_display = ["tag", "building", "label_code", "design_supply_airflow_m3s", "full_outdoor_air", "status"]
    list_filter = ["status", "full_outdoor_air", "heat_recovery", "building__site"]
    search_fields = ["tag", "label_code", "area_served"]
    readonly_fields = ["label_code"]
    inlines = [ComponentInline]


@admin.register(Component)
class ComponentAdmin(admin.ModelAdmin):
    list_display = ["name", "kind", "ahu", "label_code"]
    list_filter = ["kind"]
    search_fields = ["name", "label_code", "ahu__tag"]
    readonly_fields = ["label_code"]


@admin.register(ImportJob)
class ImportJobAdmin(admin.ModelAdmin):
    """Background CSV imports, to look at: they are started and run through the API and Celery only."""

    list_display = ["public_id", "organisation", "kind", "status", "rows_done", "rows_total", "created_at"]
    list_filter = ["status", "kind", "organisation"]
    exclude = ["source"]  # the uploaded file can be large; it is emptied when the job finishes

    def has_add_permission(self, request) -> bool:
        return False

    def has_change_permission(self, request, obj=None) -> bool:
        return False
