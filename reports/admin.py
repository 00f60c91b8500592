from django.contrib import admin

from .models import Report


@admin.register(Report)
class ReportAdmin(admin.ModelAdmin):
    list_display = ["public_id", "kind", "organisation", "status", "requested_by", "created_at", "page_count"]
    list_filter = ["kind", "status"]
    readonly_fields = [f.name for f in Report._meta.fields]
