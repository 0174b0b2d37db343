"""Tests of siting.site.units: the trade gauss, parsing to SI, display formatting."""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from siting.site.units import (
    DIMENSIONS,
    format_field,
    format_length,
    parse_quantity,
    si_factor,
    ureg,
)

# Exact defining factors.  Foot and inch: International Yard and Pound
# Agreement (1959), 1 yd = 0.9144 m, as tabulated in NIST SP 811 (2008),
# Appendix B.8 (from memory).  Gauss: 1 G corresponds to 1e-4 T, NIST SP 811
# Appendix B.8 and BIPM SI Brochure 8th ed. Table 9 (from memory).
FOOT = 0.3048
INCH = 0.0254
GAUSS = 1e-4


@pytest.mark.parametrize(
    ("text", "dimension", "expected"),
    [
        ("2.5 m", "length", 2.5),
        ("1 ft", "length", FOOT),
        ("1 in", "length", INCH),
        ("12 in", "length", FOOT),  # 12 in = 1 ft exactly (definition above)
        ("8 ft", "length", 2.4384),  # 8 x 0.3048 = 2.4384 exactly in decimal
        ("250 mm", "length", 0.25),
        ("30 cm", "length", 0.3),
        ("1e3 mm", "length", 1.0),
        ("400 A", "current", 400.0),
        ("1.2 kA", "current", 1200.0),
        ("-50 A", "current", -50.0),
        ("1.5 T", "field", 1.5),
        ("1.5T", "field", 1.5),
        ("0.5 mT", "field", 5e-4),
        ("5 G", "field", 5e-4),
        ("5 gauss", "field", 5e-4),
        ("1 kG", "field", 0.1),
        ("20 uT", "field", 2e-5),
        ("20 µT", "field", 2e-5),  # micro sign U+00B5
        ("20 μT", "field", 2e-5),  # Greek mu U+03BC
        ("-45 uT", "field", -4.5e-5),
        ("25 A m^2", "moment", 25.0),
        ("25 A*m**2", "moment", 25.0),
        ("7850 kg/m^3", "density", 7850.0),
    ],
)
def test_parse_quantity_to_si(text, dimension, expected):
    # Exact equality: the conversion is decimal, rounded to a float once, so
    # each result is the float nearest to the exact SI value.
    assert parse_quantity(text, dimension) == expected


def test_trade_gauss_is_exactly_1e4_tesla():
    # 1 G = 1e-4 T (NIST SP 811 App. B.8, from memory); pint's stock gauss is
    # CGS-Gaussian and would not convert at all.
    assert parse_quantity("5 G", "field") == 5e-4
    assert si_factor("G", "field") == GAUSS
    assert ureg.Quantity(1, "G").to("T").magnitude == pytest.approx(GAUSS, rel=1e-15)
    assert ureg.Quantity(1, "gauss").to("mT").magnitude == pytest.approx(0.1, rel=1e-15)
    # The maxwell (G cm^2) becomes 1e-8 Wb (NIST SP 811 App. B.8, from memory).
    assert ureg.Quantity(1, "maxwell").to("Wb").magnitude == pytest.approx(1e-8, rel=1e-15)


@pytest.mark.parametrize(
    ("text", "si"),
    [("17.3 ft", "m"), ("3.25 in", "m"), ("0.75 kA", "A"), ("12.5 G", "T"), ("3 mT", "T")],
)
def test_parse_quantity_agrees_with_pint_float_arithmetic(text, si):
    # pint's own (float) conversion as the outside reference library.
    dimension = {"m": "length", "A": "current", "T": "field"}[si]
    assert parse_quantity(text, dimension) == pytest.approx(
        ureg.Quantity(text).to(si).magnitude, rel=1e-14
    )


def test_bare_numbers_need_a_default_unit():
    assert parse_quantity(8, "length", default_unit="ft") == 2.4384
    assert parse_quantity(2.5, "length", default_unit="m") == 2.5
    assert parse_quantity("3", "length", default_unit="ft") == pytest.approx(3 * FOOT, rel=1e-15)
    assert parse_quantity(400, "moment", default_unit="A*m**2") == 400.0
    with pytest.raises(ValueError, match="a unit is required"):
        parse_quantity(3, "field")
    with pytest.raises(ValueError, match="a unit is required"):
        parse_quantity("3", "length")


def test_wrong_dimension_message():
    with pytest.raises(ValueError) as info:
        parse_quantity("3 m", "field")
    assert str(info.value) == (
        "expected a magnetic flux density such as '0.5 mT' or '5 G', got '3 m'"
    )
    with pytest.raises(ValueError) as info:
        parse_quantity("1.5 m", "field", example="'1.5 T'")
    assert str(info.value) == "expected a magnetic flux density such as '1.5 T', got '1.5 m'"


@pytest.mark.parametrize(
    ("value", "fragment"),
    [
        ("3 furlongz", "unknown unit 'furlongz'"),
        ("nan m", "not a finite number"),
        ("-inf m", "not a finite number"),
        (math.nan, "not a finite number"),
        (math.inf, "not a finite number"),
        ("1e999 m", "out of range"),
        ("1e99999999999 m", "out of range"),
        ("m", "got 'm'"),
        ("", "got ''"),
        ("2.5 m m m m extra 7", "got"),
        ("9**9**9 m", "got '9**9**9 m'"),
        ("x" * 500, "got"),
        (True, "got true"),
        ([1, 2], "got [1, 2]"),
        (None, "got None"),
    ],
)
def test_parse_quantity_rejects(value, fragment):
    with pytest.raises(ValueError) as info:
        parse_quantity(value, "length", default_unit="m")
    assert "expected a length such as '2.5 m' or '8 ft'" in str(info.value)
    assert fragment in str(info.value)


def test_unknown_dimension_is_an_error():
    with pytest.raises(ValueError, match="unknown dimension"):
        parse_quantity("3 m", "speed")
    assert set(DIMENSIONS) == {"length", "field", "current", "moment", "density"}


def test_si_factor_rejects_other_dimension():
    with pytest.raises(ValueError, match="not a unit of a length"):
        si_factor("mT", "length")


@pytest.mark.parametrize(
    ("value", "unit", "text"),
    [
        (5e-4, "mT", "0.50 mT"),
        (5e-4, "G", "5.0 G"),
        (1e-4, "mT", "0.10 mT"),
        (2e-2, "mT", "20 mT"),
        (1.5, "mT", "1500 mT"),  # integer digits are kept
        (2e-5, "uT", "20 uT"),
        (-4.5e-5, "uT", "-45 uT"),
        (9.96e-3, "mT", "10 mT"),  # rounding up to the next decade
        (0.0, "mT", "0.0 mT"),
        (1e-12, "mT", "1.0e-09 mT"),
    ],
)
def test_format_field(value, unit, text):
    assert format_field(value, unit) == text


@pytest.mark.parametrize(
    ("value", "unit", "text"),
    [
        (12.3, "m", "12.3 m"),
        (12.3, "ft", "40.4 ft"),  # 12.3 / 0.3048 = 40.354...
        (0.5, "m", "0.500 m"),
        (1234.4, "m", "1234 m"),
        (0.3048, "ft", "1.00 ft"),
        (0.0, "m", "0.00 m"),
    ],
)
def test_format_length(value, unit, text):
    assert format_length(value, unit) == text


@settings(max_examples=100, deadline=None, database=None)
@given(
    value=st.floats(min_value=1e-3, max_value=1e4),
    sign=st.sampled_from([1.0, -1.0]),
    unit=st.sampled_from(["m", "ft", "mm", "in"]),
)
def test_format_length_round_trips_to_display_precision(value, sign, unit):
    # Three significant figures: the parsed display is within half a unit of
    # the third figure, i.e. 0.5 % of the value.
    x = sign * value
    back = parse_quantity(format_length(x, unit), "length")
    assert back == pytest.approx(x, rel=5e-3 + 1e-12)


@settings(max_examples=100, deadline=None, database=None)
@given(
    value=st.floats(min_value=1e-7, max_value=10.0),
    unit=st.sampled_from(["T", "mT", "uT", "G", "kG"]),
)
def test_format_field_round_trips_to_display_precision(value, unit):
    back = parse_quantity(format_field(value, unit), "field")
    assert back == pytest.approx(value, rel=5e-2 + 1e-12)


@settings(max_examples=100, deadline=None, database=None)
@given(st.text(max_size=40))
def test_parse_quantity_raises_only_value_error(text):
    try:
        result = parse_quantity(text, "field")
    except ValueError:
        return
    assert math.isfinite(result)
