"""A range said in the person's units never contradicts the check it describes, on the phone and the server alike.

A pressure sensor reads −10 000 to 10 000 Pa at most (its item's physical range). In in. w.c. that is ±40.146;
said at the quantity's two decimals to the nearest, "allowed −40.15 to 40.15 in. w.c.", so a typed 40.15 was refused
with words that allowed it, and a plausible bound of 2 500 Pa (10.037 in. w.c.) read "−10.04 to 10.04" beside a
10.04 flagged as outside it. A bound is now said at the quantity's display decimals rounded inward (a maximum
down, a minimum up: ``inspections.limits.bound_text``, the phone's ``limits.js`` ``bound``): every value the words
call allowed is accepted, every value refused or flagged lies outside them. 1 in. w.c. = 249.08891 Pa (NIST SP 811
B.8). A round SI bound whose conversion is already at the display precision reads as before (5 000 Pa = 20.07 in.
w.c.: 20.0732 rounded down).
"""

import pytest

from inspections.limits import bound_text
from tests.factories.inspections import make_visit, r, sync_form
from tests.factories.inventory import ComponentFactory

from .test_out_of_range_words import phone_words
from .test_sync import post

pytestmark = pytest.mark.django_db


def test_a_bound_is_rounded_inward():
    assert bound_text(40.1463, decimals=2, side="max") == "40.14"
    assert bound_text(-40.1463, decimals=2, side="min") == "−40.14"
    assert bound_text(20.0732, decimals=2, side="max") == "20.07"
    assert bound_text(120.0, decimals=1, side="max") == "120"
    assert bound_text(-60.00000000001, decimals=1, side="min") == "−60"  # a conversion's noise is no bound
    assert bound_text(353146.67, decimals=0, side="max") == "353146"
    assert bound_text(0.8333, decimals=0, side="min") == "1"


@pytest.mark.parametrize(
    ("typed", "said"),
    [
        ("40.15", "40.15 in. w.c. is impossible; allowed −40.14 to 40.14 in. w.c."),
        ("-40.15", "−40.15 in. w.c. is impossible; allowed −40.14 to 40.14 in. w.c."),
    ],
)
def test_an_impossible_pressure_is_outside_the_words_on_phone_and_server(api_client, client, tmp_path, typed, said):
    wo, tech = make_visit(tasks=["sensor_calibration"])
    sensor = ComponentFactory(
        ahu=wo.ahu, kind="sensor", name="Duct pressure sensor", position=30,
        specs={"measures": "pressure", "location": "supply duct", "accuracy": 5},
    )  # fmt: skip
    tech.unit_system = "us"
    tech.save(update_fields=["unit_system"])
    form = sync_form(wo, [r("sensor_calibration.pressure_sensor", float(typed), sensor)], unit_system="us")
    [res] = post(api_client, tech, [form])
    assert res["status"] == "refused"
    [server] = res["errors"]["readings[0].value"]

    client.force_login(tech)
    page = client.get(f"/w/{wo.public_id}/").content.decode()
    phone = phone_words(tmp_path, page, f"r-sensor_calibration-pressure_sensor-{sensor.label_code}", typed, "us")
    assert phone.endswith(said) and server.endswith(said), (phone, server)

    # 40.14 in. w.c., the edge the words allow, is accepted (flagged as unusual: beyond 2 500 Pa).
    form = sync_form(wo, [r("sensor_calibration.pressure_sensor", 40.14, sensor)], unit_system="us")
    [res] = post(api_client, tech, [form])
    assert res["status"] != "refused", res
