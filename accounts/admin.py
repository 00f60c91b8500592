from django.contrib import admin
from django.contrib.auth.admin import UserAdmin as BaseUserAdmin

from .models import AuditEvent, Membership, Organisation, SiteGrant, User


class MembershipInline(admin.TabularInline):
    model = Membership
    extra = 0


class SiteGrantInline(admin.TabularInline):
    model = SiteGrant
    extra = 0
    autocomplete_fields = ["site"]


@admin.register(User)
class UserAdmin(BaseUserAdmin):
    fieldsets = (
        *BaseUserAdmin.fieldsets,
        ("Plenum", {"fields": ("unit_system", "phone", "daily_capacity_hours", "skills")}),
    )
    inlines = [MembershipInline, SiteGrantInline]


@admin.register(Organisation)
class OrganisationAdmin(admin.ModelAdmin):
    list_display = ["name", "kind", "slug"]
    search_fields = ["name", "slug"]
    prepopulated_fields = {"slug": ["name"]}


@admin.register(Membership)
class MembershipAdmin(admin.ModelAdmin):
    list_display = ["user", "organisation", "role"]
    list_filter = ["role", "organisation"]


@admin.register(AuditEvent)
class AuditEventAdmin(admin.ModelAdmin):
    list_display = ["at", "actor", "action", "object_type", "object_id"]
    list_filter = ["action", "object_type"]
    readonly_fields = [f.name for f in AuditEvent._meta.fields]

    def has_change_permission(self, request, obj=None):
        return False

    def has_delete_permission(self, request, obj=None):
        return False


@admin.register(SiteGrant)
class SiteGrantAdmin(admin.ModelAdmin):
    list_display = ["user", "site", "granted_at"]
    list_filter = ["site"]
    autocomplete_fields = ["user", "site"]
    search_fields = ["user__username", "site__name"]
