"""Units and angle parsing.

Outside sources: the 1959 international yard and pound agreement (1 ft =
0.3048 m, 1 mi = 5280 ft), the International Hydrographic Conference of 1929
(1 nmi = 1852 m), Federal Register 85 FR 62698 (US survey foot = 1200/3937 m),
NIST SP 811 (1 lbf = 4.4482216152605 N).
"""

import math

import pytest

from labcheck.base.units import read_value, UnitError, from_si, parse_dms_deg, parse_number, parse_quantity, parse_value, to_si


@pytest.mark.parametrize(
    "unit, metres",
    [
        ("ft", 0.3048),  # 1959 international yard and pound agreement
        ("mi", 5280 * 0.3048),  # statute mile = 5280 ft = 1609.344 m (same agreement)
        ("nmi", 1852.0),  # International Hydrographic Conference, 1929
        ("us_ft", 1200 / 3937),  # Federal Register 85 FR 62698
        ("km", 1000.0),  # SI prefix
        ("m", 1.0),
    ],
)
def test_length_factors_are_the_legal_definitions(unit, metres):
    assert to_si(1.0, unit, "length") == metres


def test_mile_is_1609_344_m_exactly():
    # 1959 agreement: 1 mi = 1609.344 m exactly.
    assert to_si(1.0, "mi", "length") == 1609.344


def test_pound_force_is_the_nist_value():
    # NIST SP 811, appendix B: 1 lbf = 4.4482216152605 N.
    assert to_si(1.0, "lbf", "force") == 4.4482216152605


def test_temperature_scales():
    # Definitions of the Fahrenheit and Kelvin scales: 68 °F = 20 °C, 273.15 K = 0 °C.
    assert to_si(68.0, "F", "temperature") == pytest.approx(20.0, abs=1e-12)
    assert to_si(273.15, "K", "temperature") == pytest.approx(0.0, abs=1e-12)
    assert from_si(20.0, "F", "temperature") == pytest.approx(68.0, abs=1e-12)


@pytest.mark.parametrize(
    "text, degrees",
    [
        ("0°11'20\"", 11 / 60 + 20 / 3600),
        ("0 11 20", 11 / 60 + 20 / 3600),
        ("-0 11 20.5", -(11 / 60 + 20.5 / 3600)),
        ("11'20\"", 11 / 60 + 20 / 3600),
        ("90 05 31", 90 + 5 / 60 + 31 / 3600),
        ("12:34:56", 12 + 34 / 60 + 56 / 3600),
        ("12 34.5", 12 + 34.5 / 60),
        ("-0°11′20″", -(11 / 60 + 20 / 3600)),  # typographic prime marks
        ("12d34m56s", 12 + 34 / 60 + 56 / 3600),
    ],
)
def test_dms_forms(text, degrees):
    # Definition of sexagesimal degrees: 1° = 60′, 1′ = 60″ (common practice).
    assert parse_dms_deg(text) == pytest.approx(degrees, abs=1e-12)


def test_hemisphere_letters():
    assert parse_dms_deg("44°38'12.5\"N", hemisphere=True) == pytest.approx(44 + 38 / 60 + 12.5 / 3600)
    assert parse_dms_deg("63°34'W", hemisphere=True) == pytest.approx(-(63 + 34 / 60))
    with pytest.raises(UnitError, match="not both"):
        parse_dms_deg("-44 38 12S", hemisphere=True)


@pytest.mark.parametrize(
    "text, message",
    [
        ("0 60 00", "minutes must be below 60"),
        ("0 11 60", "seconds must be below 60"),
        ("0°75'", "minutes must be below 60"),
        ("12.5 30", "only the last part"),
        ("abc", "expected an angle"),
    ],
)
def test_impossible_dms_is_a_clear_error(text, message):
    with pytest.raises(UnitError, match=message):
        parse_dms_deg(text)


def test_angle_units_to_radians():
    assert parse_value("5.5", "arcmin", "angle") == pytest.approx(math.radians(5.5 / 60), rel=1e-15)
    assert parse_value("330", "arcsec", "angle") == pytest.approx(math.radians(330 / 3600), rel=1e-15)
    assert parse_value("0 05 30", "dms", "angle") == pytest.approx(math.radians(5.5 / 60), rel=1e-15)
    assert parse_value("0°05'30\"", "deg", "angle") == pytest.approx(math.radians(5.5 / 60), rel=1e-15)
    assert parse_value("100", "gon", "angle") == pytest.approx(math.pi / 2, rel=1e-15)  # 400 gon = full circle


def test_unambiguous_dms_under_a_non_degree_unit_is_read_as_dms_with_a_note():
    # The template pre-fills `arcmin`; a student writing three numbers meant D M S (issue 8).
    si, unit, note = read_value("0 05 30", "arcmin", "angle", "arcmin")
    assert si == pytest.approx(math.radians(5.5 / 60), rel=1e-15) and unit == "dms"
    assert "read as D M S" in note and "arcmin" in note
    with pytest.raises(UnitError, match="could be D M S or two numbers"):
        parse_value("5 30", "arcmin", "angle")


def test_unknown_unit_names_the_choices():
    with pytest.raises(UnitError, match=r"unknown length unit 'furlong': expected one of"):
        parse_value("3", "furlong", "length")


@pytest.mark.parametrize("text", ["", "twelve", "1.2.3", "nan", "inf", "1e400"])
def test_non_numbers_are_refused(text):
    with pytest.raises(UnitError):
        parse_value(text, "m", "length")


def test_decimal_comma_and_unit_spellings():
    assert parse_number("12,5") == 12.5
    assert parse_value("3", "feet", "length") == pytest.approx(0.9144)
    assert parse_quantity("10 arcsec") == (10.0, "arcsec")
    assert parse_quantity("0.5 %") == (0.5, "%")
