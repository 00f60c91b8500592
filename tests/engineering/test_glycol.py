"""A water-glycol solution's freezing point by kind and mass concentration.

Published values: Lange's Handbook of Chemistry (15th ed.) table 5.13, propylene glycol by volume 30 % −12.8 °C,
40 % −20.6 °C (by mass within 1 K); Melinder, "Properties of Secondary Working Fluids for Indirect Systems" (IIR,
2010) via CoolProp for both glycols by mass. ASHRAE Handbook—Fundamentals ch. 31 gives the same (from memory).
"""

import pytest

from engineering.errors import EngineeringInputError
from engineering.glycol import glycol_freeze_point_c


@pytest.mark.parametrize(
    ("kind", "pct", "expected"),
    [
        ("propylene", 30, -12.8),
        ("propylene", 40, -20.6),
        ("ethylene", 30, -14.6),
        ("ethylene", 40, -23.8),
        ("propylene", 0, 0.0),
        ("propylene", 35, -16.7),  # between rows, linear in concentration
    ],
)
def test_freezing_points_match_the_published_tables(kind, pct, expected):
    assert glycol_freeze_point_c(kind=kind, mass_pct=pct) == pytest.approx(expected, abs=0.05)


def test_an_unknown_kind_or_a_concentration_beyond_the_table_is_refused_naming_what_is_allowed():
    with pytest.raises(EngineeringInputError, match="one of ethylene, propylene"):
        glycol_freeze_point_c(kind="methanol", mass_pct=30)
    with pytest.raises(EngineeringInputError, match="mass_pct"):
        glycol_freeze_point_c(kind="ethylene", mass_pct=70)
