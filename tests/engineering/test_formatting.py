"""How a quantity reads (engineering.formatting): precision per kind, unit labels, SI and US, rounding.

Conversion factors are engineering.units' (pint): 1 in. w.c. = 249.0889 Pa (conventional inch of water),
1 cfm = 0.471947 L/s, °F = °C × 1.8 + 32, 1 gpm = 0.0630902 L/s (US gallon, 231 in³), 1 W = 3.41214 Btu/h
(IT Btu), 1 ft = 0.3048 m (NIST SP 811). The precision of each kind is common practice (a field instrument's
resolution).
"""

import pytest

from engineering import formatting as fmt
from engineering.errors import EngineeringInputError
from engineering.units import SYSTEMS, UnitSystem

# (quantity, stored SI value, as an SI reader reads it, as a US reader reads it)
EVERY_KIND = [
    ("pressure", 223.6, "224 Pa", "0.90 in. w.c."),  # 223.6 / 249.0889 = 0.898
    ("temperature", 20.0, "20.0 °C", "68.0 °F"),
    ("temperature_difference", 1.5, "1.5 K", "2.7 Δ°F"),  # a difference: × 1.8, no 32 added
    ("airflow", 3.0, "3000 L/s", "6357 cfm"),  # 3000 / 0.471947 = 6356.6
    ("water_flow", 0.002, "2.00 L/s", "31.7 gpm"),  # 2 / 0.0630902 = 31.70
    ("heat_rate", 45_000.0, "45.0 kW", "153546 Btu/h"),  # 45 000 × 3.41214 = 153 546
    ("co2", 800.0, "800 ppm", "800 ppm"),
    ("relative_humidity", 45.4, "45 %", "45 %"),
    ("percent", 37.5, "38 %", "38 %"),  # a tie: Python's format rounds 37.5 to even, 38
    ("current", 6.66, "6.7 A", "6.7 A"),
    ("time", 12.4, "12 s", "12 s"),
    ("rotational_speed", 20.0, "1200 rpm", "1200 rpm"),  # stored in rev/s
    ("frequency", 50.0, "50.0 Hz", "50.0 Hz"),
    ("run_hours", 16_500.0, "16500 h", "16500 h"),
    ("length", 350.0, "350.00 m", "1148.3 ft"),  # 350 / 0.3048 = 1148.29
]


def test_every_kind_of_the_table_is_tested_here():
    """Each quantity with its own precision has a case above (a new kind needs one)."""
    assert {q for q, *_ in EVERY_KIND} == set(fmt.DECIMALS)


@pytest.mark.parametrize(("quantity", "value_si", "si_text", "us_text"), EVERY_KIND)
def test_each_kind_reads_at_its_precision_in_both_systems(quantity, value_si, si_text, us_text):
    assert fmt.quantity_text(value_si, quantity=quantity, system=UnitSystem.SI) == si_text
    assert fmt.quantity_text(value_si, quantity=quantity, system=UnitSystem.US) == us_text


@pytest.mark.parametrize(("quantity", "value_si", "si_text", "us_text"), EVERY_KIND)
def test_the_number_is_the_text_without_its_unit(quantity, value_si, si_text, us_text):
    for system, text in (("si", si_text), ("us", us_text)):
        unit = fmt.unit_text(quantity=quantity, system=system)
        assert f"{fmt.number_text(value_si, quantity=quantity, system=system)} {unit}" == text


@pytest.mark.parametrize(
    ("x", "decimals", "text"),
    [
        (0.05, 1, "0.1"),
        (0.15, 1, "0.2"),  # half up on the number as written, not on its binary 0.1499999999999999944
        (0.25, 1, "0.3"),  # a tie: up, never to even
        (0.35, 1, "0.4"),
        (2.5, 0, "3"),
        (12.5, 0, "13"),  # Python's round(12.5) is 12
        (2.675, 2, "2.68"),
        (-12.5, 0, "−13"),  # away from zero, with a true minus sign
        (-0.05, 1, "−0.1"),
        (-0.04, 1, "0.0"),  # never "−0.0"
        (-0.4, 0, "0"),
        (9_999.4, 0, "9999"),
        (9.995, 2, "10.00"),
        (10_000.0, 0, "10000"),  # never grouped: "10,000" typed back would read 10.000
        (-12_345.678, 1, "−12345.7"),
        (154_000.0, 0, "154000"),
    ],
)
def test_numbers_round_half_up_with_a_true_minus_and_no_grouping(x, decimals, text):
    assert fmt.format_number(x, decimals=decimals) == text


@pytest.mark.parametrize(
    ("x", "decimals", "shown"),
    [
        (12.5, 0, 1),  # 12.5 rpm on an item of whole rpm reads "12.5 rpm"
        (12.0, 0, 0),
        (21.25, 1, 2),
        (21.2, 1, 1),  # never fewer than the item's
        (0.05500000000000001, 2, 3),  # typed 0.055 in. w.c., stored in Pa, shown back
        (566.3369327, 0, 0),  # a conversion's noise is no typing: usual precision
        (1200.0000000000002, 0, 0),
    ],
)
def test_a_typed_value_shows_the_decimals_it_has_up_to_three(x, decimals, shown):
    assert fmt.typed_decimals(x, decimals=decimals) == shown


def test_a_large_number_as_shown_reads_back_as_the_same_number_when_typed():
    """Tryout (HIGH): "last: 12,075 h" typed as shown stored 12.075 h, the comma read as a decimal comma. A number
    people read is never grouped, so what they copy into a field is the number they saw."""
    from accounts.inputs import parse_number

    for value_si, quantity in ((12_075.0, "run_hours"), (45_000.0, "heat_rate"), (100.0, "airflow")):
        for system in ("si", "us"):
            text = fmt.number_text(value_si, quantity=quantity, system=system)
            assert "," not in text, text
            back = fmt.stored_value(parse_number(text), quantity=quantity, system=system)
            assert back == pytest.approx(value_si, rel=1e-4), (quantity, system, text)


def test_a_value_at_the_rounding_edge_reads_the_same_in_the_unit():
    """0.05 °C reads 0.1 °C; −17.8 °C is −0.04 °F and reads 0.0 °F, never −0.0 °F."""
    assert fmt.quantity_text(0.05, quantity="temperature", system="si") == "0.1 °C"
    assert fmt.quantity_text(-17.8, quantity="temperature", system="us") == "0.0 °F"
    assert fmt.quantity_text(-7.0, quantity="temperature", system="si") == "−7.0 °C"


def test_a_whole_pascal_is_two_decimals_of_inches_of_water():
    """An item's own precision (0 decimals in Pa) sets SI only; US keeps the table's 2 (1 Pa = 0.004 in. w.c.)."""
    assert fmt.decimals_of(quantity="pressure", system="si", si_decimals=1) == 1
    assert fmt.decimals_of(quantity="pressure", system="us", si_decimals=0) == 2
    assert fmt.decimals_of(quantity="pressure", system="si") == 0


def test_explicit_decimals_apply_in_both_systems():
    assert fmt.quantity_text(101_325.0, quantity="absolute_pressure", system="si", decimals=1) == "101.3 kPa"
    assert fmt.quantity_text(101_325.0, quantity="absolute_pressure", system="us", decimals=2) == "29.92 in. Hg"


def test_a_kind_without_its_own_precision_reads_to_one_decimal():
    assert fmt.decimals_of(quantity="density", system="si") == 1
    assert fmt.decimals_of(quantity="density", system="us") == 1
    assert fmt.quantity_text(1.2, quantity="density", system="si") == "1.2 kg/m³"


def test_plain_quantities_are_never_converted():
    assert fmt.display_value(37.5, quantity="percent", system="us") == 37.5
    assert fmt.stored_value(6.7, quantity="current", system="us") == 6.7
    assert fmt.quantity_text(3.0, quantity="", system="us", decimals=0) == "3"  # a bare number has no unit


def test_a_typed_value_goes_back_to_what_is_stored():
    assert fmt.stored_value(1.0, quantity="pressure", system="us") == pytest.approx(249.0889, abs=1e-4)
    assert fmt.stored_value(68.0, quantity="temperature", system="us") == pytest.approx(20.0)


def test_storage_labels_are_the_units_the_readings_are_kept_in():
    assert [fmt.storage_text(quantity=q) for q in ("pressure", "airflow", "rotational_speed", "percent")] == [
        "Pa",
        "m³/s",
        "rev/s",
        "%",
    ]
    assert fmt.storage_text(quantity="no_such_quantity") == ""


def test_an_unknown_quantity_is_refused_with_its_name():
    with pytest.raises(EngineeringInputError, match="no_such_quantity"):
        fmt.quantity_text(1.0, quantity="no_such_quantity", system="si")


@pytest.mark.parametrize(
    ("x", "text"),
    [
        *[(249.08891, "249.1"), (100_000.0, "100000"), (-0.5, "−0.5"), (0.000123456, "0.0001235"), (2.0, "2")],
        *[(1_000_000.0, "1000000"), (1_234_567.0, "1235000")],  # never "1e+06"
        # Never an exponent (tryout: "2.5e−07"): tiny sizes in plain digits, past 10^15 and below 10^-12 in words.
        *[(2.5e-7, "0.00000025"), (-2.5e-7, "−0.00000025"), (1e-12, "0.000000000001"), (-0.0, "0"), (0.0, "0")],
        *[(1e-300, "about 0"), (1e308, "more than 1000000000000000"), (-1e20, "less than −1000000000000000")],
        *[(999_999_999_999_999.0, "more than 1000000000000000"), (123_456_789_012.0, "123500000000")],
    ],
)
def test_a_typed_number_is_echoed_at_four_significant_figures(x, text):
    assert fmt.significant_text(x) == text


def test_a_number_said_to_a_person_never_carries_an_exponent():
    for exp in range(-330, 310):
        for mantissa in (1.0, 2.5, -7.25, 9.9999):
            try:
                x = mantissa * 10.0**exp
            except OverflowError:
                continue
            text = fmt.significant_text(x)
            assert "e" not in text.replace("more than", "").replace("less than", ""), (x, text)
            assert len(text) <= 30, (x, text)


def test_the_unit_systems_are_one_list():
    assert SYSTEMS == ("si", "us") == tuple(UnitSystem)
    assert UnitSystem.US == "us" and f"{UnitSystem.SI}" == "si"
