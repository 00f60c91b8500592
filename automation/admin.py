from django import forms
from django.contrib import admin

from . import bacnet_devices, services
from .models import BacnetDevice, Point, PointPoll, TrendDay, TrendImportJob


class PointForm(forms.ModelForm):
    class Meta:
        model = Point
        fields = ["ahu", "component", "name", "brick_class", "unit", "bacnet_device_instance",
                  "bacnet_object_type", "bacnet_object_instance"]  # fmt: skip

    def clean(self):
        data = super().clean()
        ahu = data.get("ahu") or getattr(self.instance, "ahu", None)
        if ahu is not None:
            values = {name: data.get(name) for name in services.POINT_FIELDS}
            existing = self.instance if self.instance.pk else None
            services.point_check(ahu=ahu, values=values, point=existing)  # its ValidationError names the fields
        return data


@admin.register(Point)
class PointAdmin(admin.ModelAdmin):
    form = PointForm
    list_display = [
        "name",
        "ahu",
        "component",
        "brick_class",
        "unit",
        "bacnet_device_instance",
        "stale",
        "last_value_at",
    ]
    list_filter = ["brick_class", "stale", "ahu__building__site__organisation"]
    search_fields = ["name", "ahu__tag", "ahu__building__site__name"]
    raw_id_fields = ["ahu", "component"]
    readonly_fields = ["last_value", "last_value_at", "stale"]

    def save_model(self, request, obj, form, change):
        # Through the services, so the admin checks and audits like the API.
        values = {name: form.cleaned_data.get(name) for name in services.POINT_FIELDS if name in form.cleaned_data}
        if change:
            fresh = services.point_update(point=Point.objects.get(pk=obj.pk), by=request.user, **values)
        else:
            fresh = services.point_create(ahu=form.cleaned_data["ahu"], by=request.user, **values)
        obj.pk = fresh.pk

    def delete_model(self, request, obj):
        services.point_delete(point=obj, by=request.user)


@admin.register(TrendDay)
class TrendDayAdmin(admin.ModelAdmin):
    list_display = ["point", "day", "count"]
    raw_id_fields = ["point"]
    readonly_fields = ["point", "day", "count", "seconds", "values"]


@admin.register(TrendImportJob)
class TrendImportJobAdmin(admin.ModelAdmin):
    list_display = ["public_id", "site", "layout", "status", "values_stored", "created_at"]
    list_filter = ["status"]
    readonly_fields = [f.name for f in TrendImportJob._meta.fields]


class BacnetDeviceForm(forms.ModelForm):
    class Meta:
        model = BacnetDevice
        fields = ["site", "device_instance", "address", "poll_seconds"]

    def clean(self):
        data = super().clean()
        site = data.get("site") or getattr(self.instance, "site", None)
        if site is not None:
            values = {name: data.get(name) for name in bacnet_devices.DEVICE_FIELDS}
            existing = self.instance if self.instance.pk else None
            bacnet_devices.bacnet_device_check(site=site, values=values, device=existing)
        return data


@admin.register(BacnetDevice)
class BacnetDeviceAdmin(admin.ModelAdmin):
    form = BacnetDeviceForm
    list_display = ["device_instance", "site", "address", "poll_seconds", "answered_at", "error"]
    list_filter = ["site__organisation"]
    search_fields = ["site__name", "address"]
    raw_id_fields = ["site"]
    readonly_fields = ["read_multiple", "polled_at", "answered_at", "error"]

    def save_model(self, request, obj, form, change):
        # Through the services, so the admin checks and audits like any other write.
        values = {name: form.cleaned_data.get(name) for name in bacnet_devices.DEVICE_FIELDS}
        if change:
            device = BacnetDevice.objects.get(pk=obj.pk)
            fresh = bacnet_devices.bacnet_device_update(device=device, by=request.user, **values)
        else:
            fresh = bacnet_devices.bacnet_device_create(site=form.cleaned_data["site"], by=request.user, **values)
        obj.pk = fresh.pk

    def delete_model(self, request, obj):
        bacnet_devices.bacnet_device_delete(device=obj, by=request.user)


@admin.register(PointPoll)
class PointPollAdmin(admin.ModelAdmin):
    """Written by the poller only."""

    list_display = ["point", "polled_at", "reason"]
    search_fields = ["point__name", "reason"]
    readonly_fields = ["point", "polled_at", "reason"]

    def has_add_permission(self, request):
        return False
