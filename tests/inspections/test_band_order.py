"""A reading's band with its limits out of order (engineering.controls.BAND_ORDER: watch_low ≤ ok_low ≤ ok_high ≤
watch_high) is a configuration error: a form with such a reading is stored, the reading recorded with a result saying
the limits are inconsistent, never ok (inspections.evaluation.readings.inconsistent_band).

The humidifier's downstream RH band (ok at most 80 %, watch at most 90 %: common practice, as the checklist names it)
is put out of order here as a mistaken library edit would; the misordered values are invented for the test."""

import pytest

from config.caches import clear_module_caches
from inspections.models import ChecklistItem, Evaluation, Reading
from inspections.services.library import templates_current
from tests.factories.inspections import make_visit, r, sync_form

SYNC = "/api/inspections/sync/"
RH = "humidifier.rh_downstream"


@pytest.mark.django_db
@pytest.mark.parametrize(
    ("limits", "rh", "verdict", "words"),
    [
        # fail above 70 %, below the ok band's top (80 %)
        (
            {"watch_max": 70.0},
            75.0,
            "watch",
            "is not proven: the limits for this check are inconsistent: ok up to 80.0 %, fail above 70.0 %",
        ),
        ({"watch_max": 70.0}, 40.0, "watch", "is not proven"),  # was ok on the phone; never ok now
        (
            {"watch_max": 70.0},
            95.0,
            "fail",
            "is above every limit set for it; the limits for this check are inconsistent",
        ),
        # the ok band's ends reversed (85 % to 80 %): below every limit fails (whichever was meant as the bottom)
        (
            {"ok_min": 85.0},
            50.0,
            "fail",
            "is below every limit set for it; the limits for this check are inconsistent: "
            "fail below 85.0 %, ok from 85.0 % to 80.0 %, fail above 90.0 %",
        ),
        ({"ok_min": 85.0}, 82.0, "watch", "is not proven"),
    ],
)
def test_a_form_with_a_reading_against_a_misordered_band_is_stored_and_the_reading_judged_never_ok(
    api_client, limits, rh, verdict, words
):
    """The server used to refuse the whole form (band_check raised on the misordered limits), so it stayed on the
    phone, resent for ever, while the phone judged it: now it is stored, the reading recorded and judged never ok."""
    templates_current()
    assert ChecklistItem.objects.filter(template__code="humidifier", key="rh_downstream").update(**limits)
    clear_module_caches()
    wo, tech = make_visit(tasks=["humidifier"])
    hum = wo.ahu.components.create(kind="humidifier", name="Steam humidifier", specs={})
    api_client.force_authenticate(tech)
    form = sync_form(wo, [r("visit.run_hours", 1200), r(RH, rh, hum)])
    res = api_client.post(SYNC, {"forms": [form]}, format="json")
    assert res.status_code == 200, res.content
    [out] = res.json()["results"]
    assert out["status"] in {"stored", "flagged"}, out
    reading = Reading.objects.get(inspection_id=out["inspection_id"], item__key="rh_downstream", component=hum)
    assert reading.value_si == pytest.approx(rh)
    ev = Evaluation.objects.get(inspection_id=out["inspection_id"], item_key=RH, component=hum)
    assert ev.verdict == verdict
    assert ev.check_name == "limits" and ev.derived["limits_inconsistent"] is True
    assert f"relative humidity downstream {rh:.1f} % {words}" in ev.reason, ev.reason
    assert ev.reason.endswith("each must be at most the next. Correct the checklist's limits"), ev.reason
