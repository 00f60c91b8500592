"""Every model has a working admin; inspection records there can be read but not changed."""

import pytest
from django.contrib import admin
from django.urls import reverse

from accounts.models import User
from inspections.models import Inspection
from tests.tenancy.world import build

PLENUM_APPS = {"accounts", "inventory", "scheduling", "inspections", "reports"}


def test_every_plenum_model_is_in_the_admin():
    """Each model of the Plenum apps is registered (directly; inlines alone do not count)."""
    from django.apps import apps

    missing = [
        m._meta.label for m in apps.get_models() if m._meta.app_label in PLENUM_APPS and m not in admin.site._registry
    ]
    assert not missing, missing


@pytest.mark.django_db
def test_admin_lists_and_records_open_for_staff(client):
    """A superuser opens every changelist and one change page of each model with records."""
    build()
    root = User.objects.create_superuser("root-admin", "root@example.invalid", "pass-for-tests-123")
    client.force_login(root)
    for model in admin.site._registry:
        if model._meta.app_label not in PLENUM_APPS:
            continue
        name = f"admin:{model._meta.app_label}_{model._meta.model_name}"
        assert client.get(reverse(f"{name}_changelist")).status_code == 200, name
        obj = model.objects.first()
        if obj is not None:
            assert client.get(reverse(f"{name}_change", args=[obj.pk])).status_code == 200, name


@pytest.mark.django_db
def test_inspection_records_are_read_only_in_the_admin(client):
    """Posting a change to a stored inspection through the admin is refused and changes nothing."""
    build()
    root = User.objects.create_superuser("root-admin", "root@example.invalid", "pass-for-tests-123")
    client.force_login(root)
    inspection = Inspection.objects.first()
    url = reverse("admin:inspections_inspection_change", args=[inspection.pk])
    response = client.post(url, {"state": "draft"})
    assert response.status_code == 403
    inspection.refresh_from_db()
    assert inspection.state != "draft"
