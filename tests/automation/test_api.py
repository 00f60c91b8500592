"""The automation API: points, trend upload, Brick export and import; another organisation's records are 404."""

import datetime as dt

import pytest
import time_machine
from django.core.files.uploadedfile import SimpleUploadedFile
from django.test import Client

from automation.models import Point, TrendDay
from inventory.models import Site

NOW = dt.datetime(2026, 2, 1, 12, 0, tzinfo=dt.UTC)


def _client(user) -> Client:
    client = Client()
    client.force_login(user)
    return client


@pytest.fixture
def supervisor(plant):
    return _client(plant.people.supervisor)


def test_list_shows_only_visible_points(plant, supervisor):
    """A supervisor lists their organisation's points; the other organisation's are not there, even asked for."""
    body = supervisor.get("/api/automation/points/").json()
    assert body["count"] == len(plant.points)
    assert {p["site"] for p in body["results"]} == {plant.site.pk}
    asked = supervisor.get("/api/automation/points/", {"site": plant.foreign_site.pk}).json()
    assert asked["count"] == 0
    one = supervisor.get(f"/api/automation/points/{plant.foreign_points['AHU1.SAT'].pk}/")
    assert one.status_code == 404
    assert set(one.json()) == {"detail", "errors"}


def test_a_property_manager_without_the_site_sees_no_points(plant):
    """A property manager sees only the sites granted to them: none here, so no points and 404 for one."""
    client = _client(plant.people.manager)
    assert client.get("/api/automation/points/").json()["count"] == 0
    assert client.get(f"/api/automation/points/{plant.points['AHU1.SAT'].pk}/").status_code == 404
    assert client.get(f"/api/automation/sites/{plant.site.pk}/brick/").status_code == 404


def test_create_change_and_remove_a_point(plant, supervisor):
    """A supervisor maps a point, changes its address, and removes it; a refusal names field, value, allowed."""
    fan = plant.ahu.components.get(name="Supply fan")
    res = supervisor.post(
        "/api/automation/points/",
        {"ahu": plant.ahu.pk, "component": fan.pk, "name": "AHU1.SF-SPD-FB", "brick_class": "Fan_Speed_Command"},
        content_type="application/json",
    )
    assert res.status_code == 201, res.content
    point = res.json()
    assert (point["unit"], point["component_name"], point["unit_tag"]) == ("PERCENT", "Supply fan", "AHU-01")
    res = supervisor.patch(
        f"/api/automation/points/{point['id']}/",
        {"bacnet_device_instance": 1001, "bacnet_object_type": "analog-output"},
        content_type="application/json",
    )
    assert res.status_code == 400
    assert "all three parts" in res.json()["errors"]["bacnet_object_instance"][0]
    res = supervisor.post(
        "/api/automation/points/",
        {"ahu": plant.ahu.pk, "name": "AHU1.X", "brick_class": "Supply_Air_Temp"},
        content_type="application/json",
    )
    assert res.status_code == 400
    assert "'Supply_Air_Temp'" in res.json()["errors"]["brick_class"][0]
    assert supervisor.delete(f"/api/automation/points/{point['id']}/").status_code == 204
    assert not Point.objects.filter(pk=point["id"]).exists()


def test_writes_need_a_supervisor_and_stay_in_their_organisation(plant):
    """A technician may not map points (403); a supervisor may not map one on another organisation's unit (404)."""
    technician = _client(plant.people.technician)
    body = {"ahu": plant.ahu.pk, "name": "T1", "brick_class": "Supply_Air_Temperature_Sensor"}
    res = technician.post("/api/automation/points/", body, content_type="application/json")
    assert res.status_code in (403, 404)
    supervisor = _client(plant.people.supervisor)
    res = supervisor.post(
        "/api/automation/points/", {**body, "ahu": plant.foreign_ahu.pk}, content_type="application/json"
    )
    assert res.status_code == 404
    res = supervisor.delete(f"/api/automation/points/{plant.foreign_points['AHU1.SAT'].pk}/")
    assert res.status_code == 404
    assert Point.objects.filter(pk=plant.foreign_points["AHU1.SAT"].pk).exists()


def test_trend_upload_and_its_refusal(plant, supervisor):
    """A wide CSV is stored; a long one with a bad value is refused with every row, nothing stored; another
    organisation's site is 404."""
    good = b"timestamp,AHU1.SAT,AHU1.RAT\n2026-01-05 08:00,16.8,21.0\n2026-01-05 08:15,17.0,21.1\n"
    bad = b"timestamp,point,value\n2026-01-05 08:00,AHU1.SAT,warm\n2026-01-05 08:00,AHU1.NONE,1\n"
    with time_machine.travel(NOW, tick=False):
        res = supervisor.post(
            f"/api/automation/sites/{plant.site.pk}/trends/",
            {"layout": "wide", "units": "si", "file": SimpleUploadedFile("t.csv", good, content_type="text/csv")},
        )
        assert res.status_code == 200, res.content
        assert res.json()["values"] == 4
        res = supervisor.post(
            f"/api/automation/sites/{plant.site.pk}/trends/",
            {"layout": "long", "units": "si", "file": SimpleUploadedFile("t.csv", bad, content_type="text/csv")},
        )
        assert res.status_code == 400
        assert [(e["line"], e["column"]) for e in res.json()["errors"]] == [(2, "value"), (3, "point")]
        res = supervisor.post(
            f"/api/automation/sites/{plant.foreign_site.pk}/trends/",
            {"layout": "wide", "units": "si", "file": SimpleUploadedFile("t.csv", good, content_type="text/csv")},
        )
        assert res.status_code == 404
        res = supervisor.post(
            f"/api/automation/sites/{plant.site.pk}/trends/",
            {"layout": "wide", "units": "si", "background": "true", "file": SimpleUploadedFile("t.csv", good)},
        )
        assert res.status_code == 202
        job = supervisor.get(f"/api/automation/trend-jobs/{res.json()['id']}/").json()
        assert job["status"] in ("queued", "done")
    assert TrendDay.objects.filter(point__ahu=plant.ahu).count() == 2
    assert not TrendDay.objects.filter(point__ahu=plant.foreign_ahu).exists()
    foreign = _client(plant.people.foreign)
    assert foreign.get(f"/api/automation/trend-jobs/{res.json()['id']}/").status_code == 404


def test_brick_export_and_import_over_the_api(plant, supervisor):
    """The Turtle export of a site imports into the other organisation as a new site with the same points."""
    res = supervisor.get(f"/api/automation/sites/{plant.site.pk}/brick/")
    assert res.status_code == 200 and res["Content-Type"].startswith("text/turtle")
    turtle = res.content
    foreign = _client(plant.people.foreign)
    assert foreign.get(f"/api/automation/sites/{plant.site.pk}/brick/").status_code == 404
    res = foreign.post("/api/automation/brick/", {"file": SimpleUploadedFile("s.ttl", turtle)})
    assert res.status_code == 201, res.content
    assert res.json()["points"] == len(plant.points)
    copy = Site.objects.get(pk=res.json()["site"])
    assert copy.organisation == plant.org_b
    res = foreign.post("/api/automation/brick/", {"file": SimpleUploadedFile("s.ttl", turtle)})
    assert res.status_code == 400
    assert res.json()["errors"][0]["field"] == "code"
    res = supervisor.post(
        "/api/automation/brick/", {"organisation": plant.org_b.slug, "file": SimpleUploadedFile("s.ttl", turtle)}
    )
    assert res.status_code == 403
