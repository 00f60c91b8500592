"""A trend file's values are in the units its importer states: SI (°C, Pa, m³/s) or US (°F, in. w.c., cfm),
converted to SI by each point's class. Found in a tryout: a US supervisor's 50 °F outdoor air was stored as
50 °C, because every file was read as SI whatever its units.

Check values: (50 − 32) × 5/9 = 10 °C and (95 − 32) × 5/9 = 35 °C (the Fahrenheit scale's definition,
NIST SP 811 B.8); 1 in. w.c. = 249.089 Pa (the conventional inch of water, NIST SP 811 B.8, as
``engineering.units`` defines it); 1 cfm = 0.000 471 947 m³/s (NIST SP 811 B.8: 1 ft³/min = 4.719 474 E−04 m³/s).
"""

import datetime as dt

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse

from automation.models import Point, TrendDay, TrendImportJob
from automation.trends import trend_import, trend_import_job_run, trend_samples
from inventory.csv_io import ImportFailed

pytestmark = pytest.mark.usefixtures("clock")

UTC = dt.UTC
SINCE = dt.datetime(2026, 1, 1, tzinfo=UTC)
UNTIL = dt.datetime(2026, 6, 1, tzinfo=UTC)
# A US building-automation export: a mild morning, a hot afternoon, the final filter at 1 in. w.c.
US_FILE = (
    "timestamp,AHU1.OAT,AHU1.FILT-DP,AHU1.SF-SPD,AHU1.SF-STS\n"
    "2026-05-04 08:00,50,1.00,60,on\n"
    "2026-05-04 15:00,95,1.20,80,1\n"
)


@pytest.fixture
def us_supervisor(plant):
    person = plant.people.supervisor
    person.unit_system = "us"
    person.save(update_fields=["unit_system"])
    return person


def _upload(text: str, name: str = "bas-export.csv") -> SimpleUploadedFile:
    return SimpleUploadedFile(name, text.encode(), content_type="text/csv")


def _stored(plant, name: str) -> list[float]:
    return [v for _w, v in trend_samples(point=plant.points[name], since=SINCE, until=UNTIL)]


def _page(plant):
    return reverse("frontend:site_points", kwargs={"pk": plant.site.pk})


def _api(plant):
    return reverse("automation_api:site-trends", kwargs={"pk": plant.site.pk})


def test_a_us_supervisors_file_in_us_units_is_stored_in_si_and_the_same_file_as_si_is_refused(
    client, plant, us_supervisor
):
    """Scenario over HTTP, the point map page: the US supervisor's export read as US stores 10 °C and 35 °C,
    249.1 and 298.9 Pa; percent and on/off as typed. The same file stated as SI is refused whole: 95 °C is no
    outdoor air, and the error names 95 as typed with the SI range."""
    client.force_login(us_supervisor)
    page = client.post(_page(plant), {"layout": "wide", "units": "us", "file": _upload(US_FILE)})
    assert page.status_code == 302, page.content.decode()[:2000]
    assert _stored(plant, "AHU1.OAT") == pytest.approx([10.0, 35.0], abs=1e-9)
    assert _stored(plant, "AHU1.FILT-DP") == pytest.approx([249.089, 1.2 * 249.089], abs=0.001)
    assert _stored(plant, "AHU1.SF-SPD") == [60.0, 80.0]
    assert _stored(plant, "AHU1.SF-STS") == [1.0, 1.0]

    TrendDay.objects.all().delete()
    page = client.post(_page(plant), {"layout": "wide", "units": "si", "file": _upload(US_FILE)})
    assert page.status_code == 400
    errors = page.context["errors"]
    assert [(e.line, e.column, e.value) for e in errors] == [(3, "AHU1.OAT", "95")]
    assert errors[0].reason == (
        "is out of range for an outdoor air temperature sensor; allowed: a number from -60 to 60 °C"
    )
    assert not TrendDay.objects.exists()


def test_a_us_value_out_of_range_is_named_as_typed_with_the_range_in_us_units_then_si(plant):
    """141 °F (60.6 °C) is no outdoor air; 10.5 in. w.c. (2 615 Pa) is over a filter's 2 500 Pa. The range
    reads in the file's units, then SI in brackets; the bounds it shows are taken (140 °F converts to a hair over
    60 °C in floating point); nothing is stored."""
    text = "timestamp,AHU1.OAT,AHU1.FILT-DP\n2026-05-04 08:00,141,10.5\n2026-05-04 09:00,140,0.5\n"
    with pytest.raises(ImportFailed) as caught:
        trend_import(site=plant.site, text=text, layout="wide", units="us")
    assert [(e.column, e.value, e.reason) for e in caught.value.errors] == [
        (
            "AHU1.OAT",
            "141",
            "is out of range for an outdoor air temperature sensor; allowed: a number from -76 to 140 °F "
            "(-60 to 60 °C)",
        ),
        (
            "AHU1.FILT-DP",
            "10.5",
            "is out of range for a filter differential pressure sensor; allowed: a number from -0.2 to 10 in. w.c. "
            "(-50 to 2500 Pa)",
        ),
    ]
    assert not TrendDay.objects.exists()
    bounds = "timestamp,AHU1.OAT,AHU1.FILT-DP\n2026-05-04 08:00,140,10\n2026-05-04 09:00,-76,-0.2\n"
    assert trend_import(site=plant.site, text=bounds, layout="wide", units="us").values == 4


def test_an_airflow_in_cfm_is_stored_in_cubic_metres_a_second(plant):
    """The long layout too: 2 000 cfm read as US is 0.943 895 m³/s; a ppm reading is the same in both."""
    flow = Point.objects.create(
        ahu=plant.ahu, name="AHU1.SA-FLOW", brick_class="Supply_Air_Flow_Sensor", unit="M3-PER-SEC"
    )
    text = "timestamp,point,value\n2026-05-04 08:00,AHU1.SA-FLOW,2000\n2026-05-04 08:00,AHU1.CO2,650\n"
    trend_import(site=plant.site, text=text, layout="long", units="us")
    (value,) = [v for _w, v in trend_samples(point=flow, since=SINCE, until=UNTIL)]
    assert value == pytest.approx(2000 * 4.719474e-4, rel=1e-6)
    assert _stored(plant, "AHU1.CO2") == [650.0]


def test_the_api_takes_the_units_and_refuses_a_missing_or_bad_one_naming_the_field(api_client, plant, us_supervisor):
    api_client.force_authenticate(us_supervisor)
    answer = api_client.post(
        _api(plant), {"layout": "wide", "units": "us", "file": _upload(US_FILE)}, format="multipart"
    )
    assert answer.status_code == 200, answer.json()
    assert _stored(plant, "AHU1.OAT") == pytest.approx([10.0, 35.0], abs=1e-9)
    TrendDay.objects.all().delete()

    for sent, shown in (("imperial", "'imperial'"), ("", "''")):
        answer = api_client.post(
            _api(plant), {"layout": "wide", "units": sent, "file": _upload(US_FILE)}, format="multipart"
        )
        assert answer.status_code == 400
        (message,) = answer.json()["errors"]["units"]
        assert message.startswith(f"{shown} is not a unit system of trend values; allowed: si — SI (°C, Pa, m³/s …)")
        assert "us — US (°F, in. w.c., cfm …)" in message
    answer = api_client.post(_api(plant), {"layout": "wide", "file": _upload(US_FILE)}, format="multipart")
    assert answer.status_code == 400
    assert answer.json()["errors"]["units"] == ["required: state the units of the file's values; allowed: si or us."]
    assert not TrendDay.objects.exists()


def test_the_background_job_carries_the_units_and_shows_them(
    api_client, client, plant, us_supervisor, django_capture_on_commit_callbacks, monkeypatch
):
    """A job made through the API keeps the stated units, reads its file in them, and the job (API and the
    point map's list) says which units the file was read in."""
    monkeypatch.setattr("automation.trends._enqueue", lambda job_id: None)
    api_client.force_authenticate(us_supervisor)
    answer = api_client.post(
        _api(plant),
        {"layout": "wide", "units": "us", "background": "true", "file": _upload(US_FILE, "big-us.csv")},
        format="multipart",
    )
    assert answer.status_code == 202, answer.json()
    assert answer.json()["units"] == "us"
    job = TrendImportJob.objects.get()
    assert job.units == "us"
    trend_import_job_run(job_id=job.pk)
    assert _stored(plant, "AHU1.OAT") == pytest.approx([10.0, 35.0], abs=1e-9)
    client.force_login(us_supervisor)
    html = client.get(_page(plant)).content.decode()
    assert '<span data-job-units="us">US (°F, in. w.c., cfm …)</span>' in html
    with pytest.raises(ImportFailed) as caught:
        from automation.trends import trend_import_job_create

        trend_import_job_create(site=plant.site, text=US_FILE, layout="wide", units="metric", by=us_supervisor)
    assert (caught.value.errors[0].column, caught.value.errors[0].value) == ("units", "metric")
    assert TrendImportJob.objects.count() == 1


def test_the_form_states_the_units_defaulting_to_the_persons_and_names_a_bad_choice(client, plant, us_supervisor):
    client.force_login(us_supervisor)
    html = client.get(_page(plant)).content.decode()
    assert "<legend>Units of the values</legend>" in html
    assert '<input type="radio" name="units" value="us" checked> US (°F, in. w.c., cfm …)' in html
    assert '<input type="radio" name="units" value="si"> SI (°C, Pa, m³/s …)' in html
    assert "temperatures in °F, pressures in in. w.c., airflows in cfm" in html
    assert "temperatures in °C, pressures in Pa, airflows in m³/s" in html
    assert "percentages (%), CO₂ (ppm) and on/off status (1 or 0) read the same in both" in html

    si_person = plant.people.foreign  # another organisation's SI supervisor sees SI chosen on her own site
    client.force_login(si_person)
    foreign = client.get(reverse("frontend:site_points", kwargs={"pk": plant.foreign_site.pk})).content.decode()
    assert '<input type="radio" name="units" value="si" checked>' in foreign

    client.force_login(us_supervisor)
    page = client.post(_page(plant), {"layout": "wide", "units": "kelvin", "file": _upload(US_FILE)})
    assert page.status_code == 400
    assert page.context["field_errors"]["units"].startswith(
        "Units of the values: 'kelvin' is not a unit system of trend values; allowed: si — SI"
    )
    page = client.post(_page(plant), {"layout": "wide", "file": _upload(US_FILE)})
    assert page.status_code == 400
    assert page.context["field_errors"]["units"] == (
        "Units of the values: choose the units the file's values are in; allowed: SI (°C, Pa, m³/s …) or "
        "US (°F, in. w.c., cfm …)."
    )
    assert not TrendDay.objects.exists()
