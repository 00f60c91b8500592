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


# ---------------------------------------------------------------------------
# A misordered band is stopped at its source: the library, a template row, a rule
# ---------------------------------------------------------------------------

ALLOWED = "allowed: watch_min ≤ ok_min ≤ ok_max ≤ watch_max, each at most the next (any may be blank)"


def test_every_band_of_the_shipped_library_is_in_order():
    """The library as shipped passes the check its installation makes (a real check: the cases below fail it)."""
    from inspections import checklists
    from inspections.checklist_items import band_order_problem

    problems = {
        f"{t['code']}.{it['key']}": band_order_problem(it) for t in checklists.all_templates() for it in t["items"]
    }
    assert not {k: p for k, p in problems.items() if p}
    assert band_order_problem({"ok_max": 80.0, "watch_max": 70.0})  # and the check does refuse


@pytest.mark.django_db
def test_installing_a_template_with_a_misordered_band_is_refused_naming_the_item_and_nothing_is_installed(
    monkeypatch,
):
    """A library version whose humidifier RH band fails above 70 % under an ok band up to 80 % (invented, as a
    mistaken edit would make it): installing is refused before anything is written, naming the item, its limits and
    what is allowed; the library as shipped then installs."""
    from django.core.exceptions import ValidationError

    from inspections import checklists
    from inspections.models import ChecklistTemplate
    from inspections.services import checklist_library_install

    shipped = checklists.all_templates()
    edited = []
    for t in shipped:
        if t["code"] == "humidifier":
            items = [{**it, "watch_max": 70.0} if it["key"] == "rh_downstream" else it for it in t["items"]]
            t = {**t, "items": items}
        edited.append(t)
    monkeypatch.setattr(checklists, "all_templates", lambda: edited)
    with pytest.raises(ValidationError) as exc:
        checklist_library_install()
    assert exc.value.message_dict == {
        "humidifier.rh_downstream": [f"limits ok_max 80, watch_max 70 are not in order; {ALLOWED}"]
    }
    assert not ChecklistTemplate.objects.exists()
    monkeypatch.setattr(checklists, "all_templates", lambda: shipped)
    assert len(checklist_library_install()) == len(shipped)


@pytest.mark.django_db
@pytest.mark.parametrize(
    ("limits", "said"),
    [
        ({"ok_min": 5.5, "ok_max": 2.5}, "ok_min 5.5, ok_max 2.5"),  # the ends reversed
        ({"watch_min": 3.0, "ok_min": 2.5, "ok_max": 5.5}, "watch_min 3, ok_min 2.5, ok_max 5.5"),  # a floor above
        ({"ok_min": 2.0, "watch_max": 1.0}, "ok_min 2, watch_max 1"),  # a one-sided fail-above under the band
    ],
)
def test_a_template_item_with_a_misordered_band_is_refused_by_its_clean(limits, said):
    """The model's own check (admin, a data fix): the item, the limits as given and what is allowed; an ordered band
    (equal limits allowed) passes."""
    from django.core.exceptions import ValidationError

    from inspections.models import ChecklistItem, ChecklistTemplate

    t = ChecklistTemplate.objects.create(code="band_test", version=1, title="Band test")
    item = ChecklistItem(template=t, key="reading", kind="number", label="A reading", quantity="temperature", **limits)
    with pytest.raises(ValidationError) as exc:
        item.full_clean()
    assert exc.value.message_dict["ok_min"] == [f"band_test.reading: limits {said} are not in order; {ALLOWED}"]
    ordered = ChecklistItem(
        template=t, key="ok", kind="number", label="B", watch_min=2.0, ok_min=2.0, ok_max=5.5, watch_max=None
    )
    ordered.full_clean()


def _spec_grid(kind: str):
    """Every part of ``kind`` whose numeric specs are each at the registry's minimum, middle or maximum and that
    the registry accepts (inventory.specs.validate_specs: its cross-field rules, e.g. a final filter pressure drop
    above the clean one); the other fields are not read by the rules."""
    import itertools

    from inventory.specs import SpecErrors, spec_fields, validate_specs

    fields = [f for f in spec_fields(kind) if f.kind in {"number", "integer"}]
    grids = [
        sorted({f.minimum, f.maximum, round((f.minimum + f.maximum) / 2, 0 if f.kind == "integer" else 3)})
        for f in fields
    ]
    for combo in itertools.product(*grids):
        specs = dict(zip((f.name for f in fields), combo, strict=True))
        try:
            validate_specs(kind=kind, specs=specs)
        except SpecErrors as exc:
            if set(exc.errors) & set(specs):  # refused for these numbers (a missing text field is not the rule's)
                continue
        yield specs


def test_every_limit_rule_computes_an_ordered_band_from_any_part_the_registry_accepts():
    """The bands a rule sets from a part's specs (inspections.limits.dynamic_limits, merged with the item's own by
    item_limits) are in order for every part the registry accepts, at the ends and middle of each spec's range: a
    rule cannot hand a phone a misordered band."""
    from types import SimpleNamespace as NS

    from inspections import checklists
    from inspections.checklist_items import band_order_problem
    from inspections.selectors.checklist import item_limits

    rules = [(t["code"], it) for t in checklists.all_templates() for it in t["items"] if it["limits_from"]]
    assert {it["limits_from"] for _, it in rules} >= {"filter_span", "filter_clean", "motor_fla", "damper_stroke"}
    problems, judged = [], 0
    for code, it in rules:
        for specs in _spec_grid(it["component_kind"]):
            lim = item_limits(item=NS(**it), ahu=NS(), component=NS(specs=specs))
            judged += any(lim.get(k) is not None for k in ("ok_min", "ok_max"))
            if problem := band_order_problem(lim):
                problems.append(f"{code}.{it['key']} {specs}: {problem}")
    assert judged > 100
    assert not problems, problems[:10]
