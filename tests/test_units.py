"""Unit parsing: exact tables and strict refusal of anything ambiguous."""

import pytest

from dxftruss.errors import ConfigError
from dxftruss.units import (
    AREA_UNITS,
    MODULUS_UNITS,
    parse_force,
    parse_length,
    parse_si,
)


def test_lengths_convert_to_drawing_units():
    # 1 in = 25.4 mm exactly (international inch, 1959 agreement; value from memory)
    assert parse_length("1in", "mm") == pytest.approx(25.4, rel=1e-15)
    assert parse_length("1/16in", "mm") == pytest.approx(25.4 / 16, rel=1e-15)
    assert parse_length("0.5mm", "m") == pytest.approx(5e-4, rel=1e-15)
    assert parse_length("3", "ft") == 3.0  # bare numbers are drawing units
    assert parse_length("2 ft", "in") == pytest.approx(24.0, rel=1e-15)


def test_forces_convert_to_the_report_unit():
    # 1 lbf = 4.4482216152605 N (exact by definition of the pound and g_n; value from memory)
    assert parse_force("1 kip", "N") == pytest.approx(4448.2216152605)
    assert parse_force("12500 N", "kN") == pytest.approx(12.5)
    assert parse_force(-4, "kN") == -4.0
    assert parse_force("-4 kN", "kN") == -4.0


@pytest.mark.parametrize("bad", ["12,5 kN", "9**9**9 N", "kN", "12.5 kn", "3'", "1e999 N", "nan N", "", "1 2 N"])
def test_ambiguous_or_hostile_strings_are_refused(bad):
    with pytest.raises(ConfigError) as err:
        parse_force(bad, "kN", "where")
    assert "where" in str(err.value)


def test_unknown_unit_lists_known_units():
    with pytest.raises(ConfigError, match=r"known units: .*kN"):
        parse_force("3 tonnes", "kN")


def test_area_and_modulus_need_units():
    assert parse_si("4800 mm2", AREA_UNITS, "area") == pytest.approx(4.8e-3)
    assert parse_si("4800 mm\u00b2", AREA_UNITS, "area") == pytest.approx(4.8e-3)
    assert parse_si("210 GPa", MODULUS_UNITS, "E") == pytest.approx(2.1e11)
    assert parse_si("29000 ksi", MODULUS_UNITS, "E") == pytest.approx(29000 * 4448.2216152605 / 0.0254**2)
    with pytest.raises(ConfigError, match="unit"):
        parse_si(4800, AREA_UNITS, "area")
    with pytest.raises(ConfigError, match="no unit"):
        parse_si("4800", AREA_UNITS, "area")


# ----------------------------------------------------------------------------------------
# lengths and forces in messages (units.LengthFormat, force_text)


def test_length_resolution_follows_the_snap_tolerance():
    from dxftruss.units import length_format

    # snap 0.04 mm: digits below 0.01 mm say nothing the tool can tell apart
    f = length_format("mm", snap=0.04, magnitude=24_000.0)
    assert f.step == pytest.approx(0.01)
    assert f(2.0) == "2.00 mm"
    assert f(2.004) == "2.00 mm"
    assert f(2.006) == "2.01 mm"
    assert f.point(1200.0, -350.25) == "(1200.00, -350.25) mm"
    # a snap that is exactly a power of ten is its own step; 0.5 m gives 0.1 m
    assert length_format("m", snap=1.0, magnitude=10.0).step == 1.0
    assert length_format("m", snap=0.5, magnitude=10.0)(12.34) == "12.3 m"
    # a length below half a step is not shown as zero
    assert f(0.001) == "less than 0.01 mm"


def test_length_resolution_never_finer_than_the_coordinates_noise():
    from dxftruss.units import length_format

    # site coordinates near 5e6 m with --snap 0: 64 ulp of 5e6 is 5.96e-8 m -> step 1e-8 m
    f = length_format("m", snap=0.0, magnitude=5e6)
    assert f.step == pytest.approx(1e-8)
    assert length_format("m", snap=1e-12, magnitude=5e6).step == pytest.approx(1e-8)
    # nothing to go on: a micro-unit step
    assert length_format("ft", snap=0.0, magnitude=0.0).step == pytest.approx(1e-6)


def test_length_up_reaches_strictly_above():
    from dxftruss.units import length_format

    f = length_format("mm", snap=0.04, magnitude=100.0)
    assert f.up(2.0) == pytest.approx(2.01)  # a tolerance equal to the gap may not reach it
    assert f.up(2.0033) == pytest.approx(2.01)
    assert f.up(2.0099) == pytest.approx(2.01)
    assert f.up(2.0) > 2.0


@pytest.mark.parametrize(
    "value, text",
    [
        (12.0, "12.0 kN"),
        (12.345, "12.345 kN"),
        (1 / 3, "0.333333 kN"),
        (-7.25, "-7.25 kN"),
        (125000.0, "125000.0 kN"),
        (0.0, "0.0 kN"),
        (1234567.8, "1234570.0 kN"),
    ],
)
def test_force_text(value, text):
    from dxftruss.units import force_text

    assert force_text(value, "kN") == text
