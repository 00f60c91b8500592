"""Finding texts name their part once: the title says it ("Filter loaded — Final filters"), the text does not
start with it again; the outdoor-air fraction's ± reads in percentage points, as the checklist says it."""

import datetime as dt
import re

import pytest
from django.utils import timezone

from inspections.models import Finding
from inspections.services import inspection_sync
from scheduling.models import WorkOrder
from tests.factories.inspections import r, sync_form
from tests.factories.scheduling import add_task

pytestmark = [pytest.mark.django_db, pytest.mark.usefixtures("clock")]  # dates made today are the clock's


def _visit(scenario, readings):
    form = sync_form(scenario.work_a, readings, finished_at=timezone.now() - dt.timedelta(hours=1))
    [result] = inspection_sync(user=scenario.technician, forms=[form])
    assert result["status"] in {"stored", "flagged"}, result
    return result


def _text(html: str) -> str:
    return re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", html))


def test_a_loaded_filter_finding_names_its_bank_once_on_the_supervisors_pages(scenario, login):
    """400 Pa across the final filters (clean 90, final 250 Pa in the factory's registry) fails: the corrective
    page reads "Filter loaded — Final filters: filter at … %", never "Final filters: Final filters"."""
    final = scenario.unit_a.components.get(name="Final filters")
    result = _visit(scenario, [r("visit.run_hours", 1200), r("filter_check.dp", 400.0, final)])
    [shape] = result["findings"]
    assert shape["title"] == "Filter loaded — Final filters"
    assert shape["text"].startswith("filter at ") and "Final filters" not in shape["text"]
    client = login(scenario.supervisor)
    for url in ("/corrective/", "/findings/"):
        page = _text(client.get(url).content.decode())
        assert "Final filters: Final filters" not in page, url
        assert "Final filters: filter at" not in page or url == "/corrective/", url
    corrective = _text(client.get("/corrective/").content.decode())
    assert "Filter loaded — Final filters: filter at " in corrective


def test_work_for_two_banks_names_each_bank_before_its_text(scenario):
    """Both banks loaded on one visit: one filter work order for both, its reason naming each bank once."""
    pre = scenario.unit_a.components.get(name="Pre-filters")
    final = scenario.unit_a.components.get(name="Final filters")
    add_task(scenario.work_a, "filter_check", pre)
    _visit(scenario, [r("filter_check.dp", 400.0, final), r("filter_check.dp", 300.0, pre)])
    texts = {f.component.name: f.reason for f in Finding.objects.filter(ahu=scenario.unit_a, state="open")}
    assert set(texts) == {"Pre-filters", "Final filters"}
    assert all(t.startswith("filter at ") for t in texts.values()), texts
    [wo] = WorkOrder.objects.filter(ahu=scenario.unit_a, kind=WorkOrder.Kind.CORRECTIVE)
    for name in ("Pre-filters", "Final filters"):
        assert wo.reason.count(f"{name}:") == 1, wo.reason
        assert f"{name}: {name}" not in wo.reason


def test_the_outdoor_air_finding_states_its_uncertainty_in_points_as_the_checklist_does(scenario):
    """Outdoor 0 °C, return 22 °C, mixed 20.9 °C: a fraction of 5 % (1.1/22, the mixing balance of ASHRAE
    Fundamentals ch.1) with ±0.5 K sensors (common practice) fails a 20 % design minimum; the finding, the
    evaluation and a refusal all say the ± in percentage points ("± 3 points"), never as a bare 0.03."""
    add_task(scenario.work_a, "ventilation_check")
    result = _visit(
        scenario,
        [
            r("ventilation_check.outdoor_air", 0.0),
            r("ventilation_check.return_air", 22.0),
            r("ventilation_check.mixed_air", 20.9),
        ],
    )
    [oa] = [e for e in result["evaluation"] if e["check"] == "oa_fraction_temperature"]
    assert re.search(r"outdoor air 5 % ± \d+ points", oa["reason"]), oa["reason"]
    [finding] = Finding.objects.filter(ahu=scenario.unit_a, problem="outdoor_air")
    assert re.search(r"by temperatures: 5 % ± \d+ points of the supply air", finding.reason), finding.reason
    assert not re.search(r"±\s?0\.\d", finding.reason + oa["reason"])


def test_a_mixed_reading_outside_outdoor_and_return_is_refused_with_its_allowance_in_points():
    """Mixed 25 °C outside outdoor 0 °C and return 22 °C: refused, the sensor allowance said in points."""
    from engineering.errors import IndeterminateError
    from engineering.outdoor_air import oa_fraction_from_temperatures

    with pytest.raises(IndeterminateError) as caught:
        oa_fraction_from_temperatures(t_outdoor_c=0.0, t_return_c=22.0, t_mixed_c=25.0)
    assert re.search(r"even allowing ± \d+ points for sensor accuracy", str(caught.value)), str(caught.value)


def test_a_line_whose_label_names_the_part_does_not_repeat_it():
    """The phone's and the page's result lines read "Pressure drop — Final filters: filter at …", once."""
    from frontend.selectors import result_for_display
    from inspections.reasons import text_without_subject

    assert text_without_subject("Final filters: filter at 112 %", "Final filters") == "filter at 112 %"
    assert text_without_subject("Final filters: ", "Final filters") == "Final filters: "  # nothing left: kept
    assert text_without_subject("Pre-filters: filter at 40 %", "Final filters") == "Pre-filters: filter at 40 %"
    shown = result_for_display(
        result={
            "status": "stored",
            "evaluation": [
                {
                    "item": "filter_check.dp",
                    "component": "F2",
                    "verdict": "fail",
                    "reason": "Final filters: filter at 112 %",
                }
            ],
        },
        system="si",
        labels={("filter_check.dp", "F2"): "Pressure drop — Final filters"},
    )
    [line] = shown["evaluation"]
    assert f"{line['label']}: {line['reason']}" == "Pressure drop — Final filters: filter at 112 %"
