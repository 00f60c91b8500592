"""The record's numbers in the reader's units at the quantity's usual precision, never grouped, as the reasons
show them (engineering.formatting.format_number); coil-balance figures as magnitudes, as the reason states them."""

from types import SimpleNamespace

import pytest

from inspections import display
from inspections.models import ChecklistItem
from reports.documents.visit_words import reading_value


def _reading(value_si: float, quantity: str, decimals: int) -> SimpleNamespace:
    item = ChecklistItem(kind=ChecklistItem.Kind.NUMBER, quantity=quantity, decimals=decimals)
    return SimpleNamespace(item=item, value_text="", value_si=value_si)


@pytest.mark.parametrize(
    ("value_si", "quantity", "decimals", "system", "shown"),
    [
        (16_500, "run_hours", 0, "si", "16500 h"),
        (1200 / 2118.88, "airflow", 2, "us", "1200 cfm"),  # 1 m³/s = 2118.88 cfm (pint)
        (1200 / 2118.88, "airflow", 2, "si", "566 L/s"),
        (-5.0, "temperature", 1, "si", "−5.0 °C"),
        (12.5 / 60, "rotational_speed", 0, "si", "12.5 rpm"),  # as typed, never "12 rpm" (stored rev/s)
        (12.5, "pressure", 0, "si", "12.5 Pa"),
        (12.5, "percent", 0, "si", "12.5 %"),
        (12.0, "pressure", 0, "si", "12 Pa"),  # no trailing zeros beyond the usual precision
        (21.25, "temperature", 1, "si", "21.25 °C"),
        (12.5, "pressure", 0, "us", "0.05 in. w.c."),  # 0.0502 in. w.c.: the conversion adds no typed decimals
    ],
)
def test_the_record_shows_a_reading_at_its_usual_precision(value_si, quantity, decimals, system, shown):
    """Not "16,500 h", "1200.00 cfm", "-5.0 °C" (hyphen) or "12 rpm" for a typed 12.5: never grouped, at least the
    usual precision and as many decimals as typed (up to 3), true minus sign."""
    assert reading_value(_reading(value_si, quantity, decimals), system) == shown


def test_coil_balance_figures_are_magnitudes_as_in_the_reason():
    """A cooling coil stores its heat negative and the difference signed; the record shows them as the reason
    does ("… 0.8 % apart (water side higher)"): 11,222 W = 38,291 Btu/h (1 Btu_IT/h = 0.29307107 W)."""
    rows = dict(display.derived_rows({"water_side_w": -11_222, "difference_pct": -0.8}, "us"))
    assert rows["water-side heat"] == "38291 Btu/h"
    assert rows["air and water side apart"] == "0.8 %"
    assert "−" not in "".join(rows.values())
