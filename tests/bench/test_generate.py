"""The synthetic portfolio generator (bench/generate/) at a tiny size."""

import datetime as dt

import pytest
from django.core.management import call_command
from django.db import transaction

from bench.generate import portfolio_generate
from inspections.models import Finding, Inspection, Reading
from inventory.models import AHU, Component, Site
from inventory.selectors import sites_visible_to
from inventory.specs import validate_specs
from scheduling.models import MeterReading, OutdoorTemperature

pytestmark = pytest.mark.django_db
TODAY = dt.date(2025, 3, 3)


class Rollback(Exception):
    pass


def snapshot() -> list:
    return [
        list(Site.objects.order_by("code").values_list("code", "name", "latitude", "normals_min_c")),
        list(AHU.objects.order_by("label_code").values_list("label_code", "tag", "design_supply_airflow_m3s")),
        sorted(Component.objects.values_list("label_code", "kind", "name")),
        sorted(MeterReading.objects.values_list("ahu__label_code", "hours")),
        sorted(map(repr, Reading.objects.values_list("inspection__ahu__label_code", "value_si", "value_text"))),
    ]


def test_a_tiny_portfolio_has_every_kind_of_row():
    """Sites, units with component trees, meters, temperatures, inspections with readings and findings."""
    p = portfolio_generate(sites=3, ahus=9, years=1, today=TODAY)
    assert len(p.main.site_ids) == 3 and len(p.main.ahu_ids) == 9
    assert len(p.other.ahu_ids) == 1
    assert Component.objects.filter(ahu_id__in=p.main.ahu_ids).count() >= 9 * 9
    assert MeterReading.objects.filter(ahu_id__in=p.main.ahu_ids).count() == 9 * 13
    assert OutdoorTemperature.objects.filter(site_id__in=p.main.site_ids).count() == 3 * 366
    assert Inspection.objects.filter(ahu_id__in=p.main.ahu_ids).count() == 9 * 4
    assert Reading.objects.filter(inspection__ahu_id__in=p.main.ahu_ids).exists()
    assert Finding.objects.exists()
    assert set(p.main.tokens) >= {p.main.supervisor, *p.main.technicians}


def test_every_generated_component_passes_the_registry_spec_check():
    """Specs are valid for their kind, and each drain pan hangs under a cooling coil of the same unit."""
    portfolio_generate(sites=2, ahus=6, years=1, today=TODAY)
    for comp in Component.objects.select_related("parent"):
        validate_specs(kind=comp.kind, specs=comp.specs)
        if comp.kind == "drain_pan":
            assert comp.parent.kind == "coil" and comp.parent.ahu_id == comp.ahu_id


def test_the_same_seed_gives_the_same_portfolio():
    """Names, label codes and readings repeat exactly for the same seed and day."""
    with pytest.raises(Rollback), transaction.atomic():
        portfolio_generate(sites=2, ahus=4, years=1, seed=7, today=TODAY)
        first = snapshot()
        raise Rollback
    portfolio_generate(sites=2, ahus=4, years=1, seed=7, today=TODAY)
    assert snapshot() == first


def test_the_second_organisation_stays_out_of_sight():
    """The main organisation's supervisor sees its own sites and none of the other organisation's."""
    from accounts.models import User

    p = portfolio_generate(sites=4, ahus=4, years=1, today=TODAY)
    supervisor = User.objects.get(username=p.main.supervisor)
    visible = set(sites_visible_to(user=supervisor).values_list("pk", flat=True))
    assert visible == set(p.main.site_ids)


def test_sizes_below_one_are_refused():
    """Zero units is refused with a message naming the values."""
    with pytest.raises(ValueError, match="ahus=0"):
        portfolio_generate(sites=1, ahus=0)


def test_the_management_command_reports_what_it_wrote(capsys):
    """``manage.py bench_generate`` prints the row counts."""
    call_command("bench_generate", "--sites", "1", "--ahus", "2", "--years", "1")
    out = capsys.readouterr().out
    assert '"ahus": 3' in out and '"inspections"' in out
