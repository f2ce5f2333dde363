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
