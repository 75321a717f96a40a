"""Tests for layerplan.units: wall sizes, brush kits, unit conversion.

Reference for the imperial factors: the international yard and pound agreement (US Federal
Register, 1 July 1959: 1 yd = 0.9144 m exactly) as tabulated in NIST SP 811 (2008),
Appendix B.8: 1 in = 2.54 cm exactly, 1 ft = 0.3048 m exactly. Metric factors from the SI
prefixes (BIPM SI Brochure, 9th ed.): milli = 1e-3, centi = 1e-2.
"""

from fractions import Fraction

import pytest

from layerplan.units import UNITS_MM, from_mm, parse_brushes, parse_wall, to_mm

# NIST SP 811 Appendix B.8 / 1959 agreement, written as exact fractions of a metre
INCH_M = Fraction(254, 10000)   # 1 in = 0.0254 m exactly
FOOT_M = 12 * INCH_M            # 1 ft = 12 in = 0.3048 m exactly (NIST SP 811 B.8)
YARD_M = Fraction(9144, 10000)  # 1959 agreement: 1 yd = 0.9144 m exactly


def test_imperial_factors_match_1959_definition():
    # 1959 agreement: 1 yd = 0.9144 m and 1 yd = 3 ft = 36 in
    assert Fraction(UNITS_MM["in"]).limit_denominator(1000) == INCH_M * 1000
    assert Fraction(UNITS_MM["ft"]).limit_denominator(1000) == FOOT_M * 1000
    assert UNITS_MM["ft"] * 3 == pytest.approx(float(YARD_M * 1000), abs=1e-12)
    assert UNITS_MM["in"] * 36 == pytest.approx(float(YARD_M * 1000), abs=1e-12)


def test_metric_factors_match_si_prefixes():
    # SI Brochure: 1 m = 1000 mm, 1 cm = 10 mm
    assert UNITS_MM["m"] == 1000.0
    assert UNITS_MM["cm"] == 10.0
    assert UNITS_MM["mm"] == 1.0


@pytest.mark.parametrize("value, unit, exact_mm", [
    (1, "in", INCH_M * 1000),          # NIST SP 811 B.8: 25.4 mm
    (1, "ft", FOOT_M * 1000),          # NIST SP 811 B.8: 304.8 mm
    (12, "ft", 12 * FOOT_M * 1000),    # 3657.6 mm
    (96, "in", 96 * INCH_M * 1000),    # 2438.4 mm (8 ft)
    (2.5, "m", Fraction(2500)),        # SI
    (250, "cm", Fraction(2500)),       # SI
])
def test_to_mm_against_exact_definitions(value, unit, exact_mm):
    assert to_mm(value, unit) == pytest.approx(float(exact_mm), rel=1e-15)


def test_from_mm_inverts_to_mm():
    # 8 ft = 96 in = 2438.4 mm exactly (NIST SP 811 B.8)
    assert from_mm(2438.4, "ft") == pytest.approx(8.0, rel=1e-15)
    assert from_mm(2438.4, "in") == pytest.approx(96.0, rel=1e-15)
    assert from_mm(2500.0, "m") == 2.5


def test_to_mm_unknown_unit_lists_valid_ones():
    with pytest.raises(ValueError, match=r"unknown unit 'yd'; valid units: mm, cm, m, in, ft"):
        to_mm(1, "yd")
    with pytest.raises(ValueError, match=r"unknown unit 'parsec'"):
        from_mm(1, "parsec")


def test_to_mm_rejects_non_finite():
    with pytest.raises(ValueError, match=r"value must be a finite number, got nan"):
        to_mm(float("nan"), "m")
    with pytest.raises(ValueError, match=r"mm must be a number, got 'abc'"):
        from_mm("abc", "m")


@pytest.mark.parametrize("text, width_mm, height_mm, unit", [
    ("4x2.5m", 4000.0, 2500.0, "m"),
    ("12x8ft", float(12 * FOOT_M * 1000), float(8 * FOOT_M * 1000), "ft"),   # NIST SP 811 B.8
    ("400x250cm", 4000.0, 2500.0, "cm"),
    ("3000x2000mm", 3000.0, 2000.0, "mm"),
    ("96x48in", float(96 * INCH_M * 1000), float(48 * INCH_M * 1000), "in"),  # NIST SP 811 B.8
    (" 4 X 2.5 m ", 4000.0, 2500.0, "m"),
    ("4×2.5m", 4000.0, 2500.0, "m"),
    ("12ft x 8ft", float(12 * FOOT_M * 1000), float(8 * FOOT_M * 1000), "ft"),
    ("12 ft x 96 in", float(12 * FOOT_M * 1000), float(96 * INCH_M * 1000), "ft"),
    ("4m", 4000.0, None, "m"),
    ("13 feet", float(13 * FOOT_M * 1000), None, "ft"),
    (".5x0.25m", 500.0, 250.0, "m"),
])
def test_parse_wall_accepts(text, width_mm, height_mm, unit):
    w, h, u = parse_wall(text)
    # exact rational conversion: the float nearest the exact value, bit for bit
    assert w == width_mm
    assert h == height_mm
    assert u == unit


def test_parse_wall_converts_exactly_not_by_repeated_float_multiplication():
    # 12 ft = 3657.6 mm exactly (NIST SP 811 B.8); naive float 12 * 304.8 gives 3657.6000000000004
    assert parse_wall("12x8ft")[0] == 3657.6


@pytest.mark.parametrize("text, match", [
    ("", r"wall size is empty"),
    ("4", r"wall size '4' needs a unit, e.g. '4m' \(units: mm, cm, m, in, ft\)"),
    ("4x2.5", r"wall size '4x2.5' needs a unit, e.g. '4x2.5m'"),
    ("4mx2.5", r"give the unit after the height too"),
    ("2,5x2m", r"wall size '2,5x2m': use a point for decimals"),
    ("3,000x2,000mm", r"use a point for decimals and no thousands separators"),
    ("4x2yd", r"wall size '4x2yd': unknown unit 'yd'; valid units: mm, cm, m, in, ft"),
    ("big", r"wall size 'big' is not of the form WIDTHxHEIGHT"),
    ("4x2x1m", r"wall size '4x2x1m' is not of the form WIDTHxHEIGHT"),
    ("0x2m", r"wall width must be > 0, got 0 m in '0x2m'"),
    ("4x-2m", r"wall height must be > 0, got -2 m"),
    ("-4m", r"wall width must be > 0, got -4 m"),
])
def test_parse_wall_errors(text, match):
    with pytest.raises(ValueError, match=match):
        parse_wall(text)


def test_parse_wall_rejects_non_text():
    with pytest.raises(TypeError, match=r"wall size must be text"):
        parse_wall(4.0)


@pytest.mark.parametrize("text, expected", [
    ("100,50,25,12", (100.0, 50.0, 25.0, 12.0)),
    (" 100 , 50 ", (100.0, 50.0)),
    ("37.5", (37.5,)),
    # 4", 2", 1", 1/2" flats: NIST SP 811 B.8, 1 in = 25.4 mm
    ("4in,2in,1in,1/2in", tuple(float(n * INCH_M * 1000) for n in (4, 2, 1, Fraction(1, 2)))),
    ("10cm, 50mm, 1 in", (100.0, 50.0, float(INCH_M * 1000))),
    ("12,100", (12.0, 100.0)),  # order kept as given; Settings sorts widest first
])
def test_parse_brushes_accepts(text, expected):
    assert parse_brushes(text) == expected


@pytest.mark.parametrize("text, match", [
    ("", r"brushes are empty"),
    ("   ", r"brushes are empty"),
    ("100,,50", r"brushes '100,,50': entry 2 is empty"),
    ("100,", r"entry 2 is empty"),
    ("100,wide", r"brushes '100,wide': 'wide' is not a width"),
    ("4yd", r"brushes '4yd': unknown unit 'yd'; valid units: mm, cm, m, in, ft"),
    ("100,-50", r"brush width must be > 0 mm, got '-50'"),
    ("0in", r"brush width must be > 0 mm, got '0in'"),
    ("1/0in", r"'1/0in' is not a width"),
])
def test_parse_brushes_errors(text, match):
    with pytest.raises(ValueError, match=match):
        parse_brushes(text)
