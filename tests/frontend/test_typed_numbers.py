"""The checklist page posted without scripts reads a typed number as the phone does (issue 19): a decimal comma is
a decimal point ("12,5" is 12.5); text that is no number ("12,5a") is refused naming the field, the value and what
is allowed, and nothing is stored (frontend.checklist_form.typed_number, accounts.inputs.parse_number)."""

import pytest

from inspections.models import Inspection, Reading
from tests.factories.inspections import make_visit

pytestmark = pytest.mark.django_db


def _post(client, wo, typed: str):
    return client.post(
        f"/w/{wo.public_id}/",
        {"r:controls_check.supply_air:-": typed, "signature_name": "Ana Field", "started_at": ""},
    )


def test_a_letter_in_a_number_is_refused_by_name_and_a_decimal_comma_is_read(client):
    wo, tech = make_visit(tasks=["controls_check"])
    client.force_login(tech)

    html = _post(client, wo, "12,5a").content.decode()
    assert "Supply-air temperature: &#x27;12,5a&#x27; is not a number; allowed −60 to 120 °C" in html
    assert not Inspection.objects.filter(work_order=wo).exists()

    _post(client, wo, "12,5")
    reading = Reading.objects.get(inspection__work_order=wo, item__key="supply_air")
    assert reading.value_si == pytest.approx(12.5)
