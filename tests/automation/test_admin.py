"""The admin of points and trends: lists and records open; a point added there is checked like the API's."""

import pytest
from django.contrib import admin
from django.urls import reverse

from accounts.models import User
from automation.models import Point, TrendDay, TrendImportJob


@pytest.fixture
def root(client, plant):
    user = User.objects.create_superuser("root-admin", "root@example.invalid", "pass-for-tests-123")
    client.force_login(user)
    return client


def test_models_are_registered_and_open(root, plant):
    """Points, trend days and trend import jobs have changelists and change pages that open."""
    from automation.trends import trend_import

    trend_import(site=plant.site, text="timestamp,AHU1.SAT\n2025-06-02 08:00,16.5\n", layout="wide")
    TrendImportJob.objects.create(organisation=plant.org_a, site=plant.site, layout="wide")
    for model in (Point, TrendDay, TrendImportJob):
        assert model in admin.site._registry
        name = f"admin:automation_{model._meta.model_name}"
        assert root.get(reverse(f"{name}_changelist")).status_code == 200, name
        assert root.get(reverse(f"{name}_change", args=[model.objects.first().pk])).status_code == 200, name


def test_a_bad_point_is_refused_in_the_admin(root, plant):
    """A fan status without a fan, added in the admin, shows the service's refusal and is not saved."""
    res = root.post(
        reverse("admin:automation_point_add"),
        {"ahu": plant.ahu.pk, "name": "ADMIN.STS", "brick_class": "Fan_Status", "unit": "UNITLESS"},
    )
    assert res.status_code == 200
    assert "a component of kind fan" in res.content.decode()
    assert not Point.objects.filter(name="ADMIN.STS").exists()
    res = root.post(
        reverse("admin:automation_point_add"),
        {"ahu": plant.ahu.pk, "name": "ADMIN.SAT", "brick_class": "Supply_Air_Temperature_Sensor", "unit": "DEG_C"},
    )
    assert res.status_code == 302
    assert Point.objects.filter(name="ADMIN.SAT", ahu=plant.ahu).exists()
