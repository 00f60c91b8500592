"""The registry's unit page and part forms as a new supervisor reads them: one statement of an allowed date range,
the parts listed in airstream order, the design outdoor-air fraction in %."""

import datetime as dt
import html
import re

import pytest
import time_machine
from django.urls import reverse

pytestmark = pytest.mark.django_db
NOW = dt.datetime(2026, 3, 9, 9, 30, tzinfo=dt.UTC)  # any fixed moment would do


@pytest.fixture(autouse=True)
def _clock():
    with time_machine.travel(NOW, tick=False):
        yield


def _visible(response) -> str:
    """The page's words without its markup."""
    return re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", html.unescape(response.content.decode())))


def _edit_post(component, **changes):
    from frontend.specs_form import spec_initial

    post = {"name": component.name, "parent": str(component.parent_id or ""), "position": str(component.position)}
    post.update({f"spec_{k}": ("1" if v is True else "" if v in (None, False) else str(v))
                 for k, v in spec_initial(component=component, system="si").items()})  # fmt: skip
    post.update(changes)
    return post


def test_a_future_install_date_is_refused_with_one_statement_of_the_allowed_days(scenario, login):
    """The refusal names the field, the value and the allowed days, ending today on the site's clock; no second,
    coarser year span beside it (it said 'outside 1950–2026; allowed: 1950-01-01 to 2026-12-05')."""
    pan = scenario.unit_a.components.get(name="Drain pan")
    r = login(scenario.supervisor).post(
        reverse("frontend:registry_component_edit", args=[pan.pk]), _edit_post(pan, installed_on="2030-01-01")
    )
    assert r.status_code == 400
    page = _visible(r)
    assert "Installed on 2030-01-01 is out of range; allowed: 1950-01-01 to 2026-03-09" in page
    assert "1950–2026" not in page
    pan.refresh_from_db()
    assert pan.installed_on is None


def test_the_design_minimum_outdoor_air_fraction_reads_in_per_cent_on_the_page_and_the_form(scenario, login):
    """Stored as a fraction (0.35; the one reader, inventory.inputs.AHU_NUMBERS, checks 0–1), it reads 35 % on the
    unit page and its form, and 40 typed on the form is stored 0.4; the form posted back unchanged keeps 0.35."""
    from frontend.views.registry_units import unit_form_initial

    ahu = scenario.unit_a
    AHU = type(ahu)
    AHU.objects.filter(pk=ahu.pk).update(design_min_oa_fraction=0.35, full_outdoor_air=False)
    ahu.refresh_from_db()
    client = login(scenario.supervisor)
    page = _visible(client.get(reverse("frontend:registry_unit", args=[ahu.pk])))
    assert "Design minimum outdoor-air fraction 35 %" in page and "0.35" not in page
    form = _visible(client.get(reverse("frontend:registry_unit_edit", args=[ahu.pk])))
    assert "Design minimum outdoor-air fraction (%)" in form and "a number from 0 to 100 %" in form
    initial = unit_form_initial(ahu=ahu, system="si")
    assert initial["design_min_oa_fraction"] == "35"
    post = {k: v for k, v in initial.items() if v not in (None, False, "")}
    post["full_outdoor_air"] = ""
    r = client.post(reverse("frontend:registry_unit_edit", args=[ahu.pk]), post)
    assert r.status_code == 302, _visible(r)
    ahu.refresh_from_db()
    assert ahu.design_min_oa_fraction == 0.35  # unchanged, not 0.35000000000000003
    r = client.post(reverse("frontend:registry_unit_edit", args=[ahu.pk]), {**post, "design_min_oa_fraction": "40"})
    assert r.status_code == 302, _visible(r)
    ahu.refresh_from_db()
    assert ahu.design_min_oa_fraction == 0.4
    r = client.post(reverse("frontend:registry_unit_edit", args=[ahu.pk]), {**post, "design_min_oa_fraction": "135"})
    said = "Design minimum outdoor-air fraction: 135 % is out of range; allowed: a number from 0 to 100 %"
    assert said in _visible(r)
    ahu.refresh_from_db()
    assert ahu.design_min_oa_fraction == 0.4


def test_a_part_inside_another_reads_as_in_it_not_as_a_place_before_the_first(scenario, login):
    """A drain pan inside the cooling coil at 90 has its own place 0 among the coil's parts: the unit page said
    '90. Cooling coil' then '0. Drain pan', read as a part at the intake listed last. It now says where it is."""
    ahu = scenario.unit_a
    for place, comp in enumerate(ahu.components.filter(parent__isnull=True).order_by("id")):
        type(comp).objects.filter(pk=comp.pk).update(position=place * 10)
    coil = ahu.components.get(name="Cooling coil")
    ahu.components.filter(name="Drain pan").update(parent=coil, position=0)
    page = _visible(login(scenario.supervisor).get(reverse("frontend:registry_unit", args=[ahu.pk])))
    listed = page[page.index("Components in airstream order") : page.index("Records")]
    numbers = [int(n) for n in re.findall(r"(?:^| )(\d+)\. ", listed)]
    assert numbers == sorted(numbers) and len(numbers) == ahu.components.filter(parent__isnull=True).count()
    assert f"{coil.position}. Cooling coil" in listed and "in Cooling coil: Drain pan" in listed
