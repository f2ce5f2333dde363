"""Length units the DXF header can name, against NIST SP 811 and an independent converter.

References: NIST Special Publication 811 (2008 edition), Appendix B.8 (factors for units
listed alphabetically) for the inch, foot, yard, mile, mil, microinch, angstrom and the US
survey foot (1200/3937 m); pint's unit registry as the independent converter.
"""

from __future__ import annotations

from pathlib import Path

import ezdxf
import pytest

from dxftruss.findings import Code
from dxftruss.pipeline import check
from dxftruss.units import INSUNITS, LENGTH_UNITS, parse_length

pint = pytest.importorskip("pint")
UREG = pint.UnitRegistry()

#: our unit name -> pint's name for the same unit
PINT_NAMES = {
    "mm": "millimeter",
    "cm": "centimeter",
    "dm": "decimeter",
    "m": "meter",
    "dam": "decameter",
    "hm": "hectometer",
    "km": "kilometer",
    "um": "micron",
    "nm": "nanometer",
    "angstrom": "angstrom",
    "in": "inch",
    "ft": "foot",
    "yd": "yard",
    "mi": "mile",
    "mil": "thou",
    "uin": "microinch",
    "usft": "survey_foot",
    "usmi": "survey_mile",
    "usin": ("survey_foot", 1 / 12),
    "usyd": ("survey_foot", 3.0),
}


@pytest.mark.parametrize("name", sorted(LENGTH_UNITS))
def test_length_factor_agrees_with_pint(name: str) -> None:
    assert name in PINT_NAMES, "every length unit needs an independent check"
    spec = PINT_NAMES[name]
    unit, times = spec if isinstance(spec, tuple) else (spec, 1.0)
    expected = UREG.Quantity(1, unit).to("meter").magnitude * times
    assert LENGTH_UNITS[name] == pytest.approx(expected, rel=1e-12)


def test_nist_sp811_exact_values() -> None:
    # NIST SP 811 (2008) Appendix B.8: foot (U.S. survey) = 1200/3937 m exactly,
    # mil = 2.54e-5 m, microinch = 2.54e-8 m, mile (international) = 1609.344 m
    assert LENGTH_UNITS["usft"] == 1200 / 3937
    assert LENGTH_UNITS["mil"] == pytest.approx(2.54e-5, rel=1e-15)
    assert LENGTH_UNITS["uin"] == pytest.approx(2.54e-8, rel=1e-15)
    assert LENGTH_UNITS["mi"] == 1609.344
    # a US survey foot is 2 ppm longer than the international foot (SP 811 B.6 note)
    assert LENGTH_UNITS["usft"] / LENGTH_UNITS["ft"] - 1 == pytest.approx(2e-6, rel=1e-5)
    assert parse_length("1 usft", "mm") == pytest.approx(1200 / 3937 * 1000, rel=1e-15)


def _triangle(tmp_path: Path, doc: ezdxf.document.Drawing) -> Path:
    """A 3-4-5 triangle drawn into ``doc``, saved; the header's unit as ``doc`` has it."""
    msp = doc.modelspace()
    for a, b in (((0, 0), (4, 0)), ((4, 0), (4, 3)), ((4, 3), (0, 0))):
        msp.add_line(a, b)
    path = tmp_path / "t.dxf"
    doc.saveas(path)
    return path


@pytest.mark.parametrize(
    ("code", "unit"),
    [(13, "um"), (21, "usft"), (14, "dm"), (10, "yd"), (9, "mil"), (3, "mi"), (15, "dam"), (16, "hm")],
)
def test_header_unit_is_read_and_used(tmp_path: Path, code: int, unit: str) -> None:
    # a 3-4-5 triangle drawn in the header's unit: the unit is read, not assumed
    res = check(_triangle(tmp_path, ezdxf.new("R2018", setup=False, units=code)))
    assert INSUNITS[code] == unit
    assert (res.source.length_unit, res.source.unit_source) == (unit, "header")
    assert Code.ASSUMED_UNITS not in {f.code for f in res.findings}


@pytest.mark.parametrize("code", [18, 20, 99])
def test_header_unit_no_truss_is_drawn_in_is_named(tmp_path: Path, code: int) -> None:
    doc = ezdxf.new("R2018", setup=False)
    doc.header["$INSUNITS"] = code
    res = check(_triangle(tmp_path, doc))
    (f,) = [f for f in res.findings if f.code is Code.ASSUMED_UNITS]
    assert f.data["insunits"] == code and res.source.unit_source == "assumed"
    assert f"$INSUNITS is {code} (" in f.message
