from django.contrib import admin
from django.contrib.auth.admin import UserAdmin as BaseUserAdmin

from .models import Membership, Organisation, SiteGrant, User


class MembershipInline(admin.TabularInline):
    model = Membership
    extra = 0


class SiteGrantInline(admin.TabularInline):
    model = SiteGrant
    extra = 0
    autocomplete_fields = ["site"]


@admin.register(User)
class UserAdmin(BaseUserAdmin):
    fieldsets = BaseUserAdmin.fieldsets + (
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
