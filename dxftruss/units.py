"""Units of length, force, area and modulus, and the strict parser for "12.5 kN".

Load labels drawn on the sheet are read by :mod:`dxftruss.labels`, not here.

Glossary:
    drawing unit  the length unit the DXF coordinates are in (header ``$INSUNITS``,
                  ``--units`` or the loads file's ``[units] length``).
    force unit    the unit all forces are reported in (loads file ``[units] force``,
                  default kN).

Values are converted with exact tables (1 in = 0.0254 m exactly), never with a
general expression parser: ``"9**9**9 N"`` or ``"12,5 kN"`` are refused, not
evaluated or misread.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from .errors import ConfigError

#: metres per length unit (exact by definition of the inch and the foot)
LENGTH_UNITS: dict[str, float] = {
    "mm": 1e-3,
    "cm": 1e-2,
    "dm": 1e-1,
    "m": 1.0,
    "km": 1e3,
    "in": 0.0254,
    "ft": 0.3048,
    "yd": 0.9144,
}

#: newtons per force unit (lbf from the international pound and g_n = 9.80665 m/s2)
FORCE_UNITS: dict[str, float] = {
    "N": 1.0,
    "daN": 10.0,
    "kN": 1e3,
    "MN": 1e6,
    "lbf": 4.4482216152605,
    "kip": 4448.2216152605,
    "kips": 4448.2216152605,
    "kgf": 9.80665,
    "tf": 9806.65,
}

#: square metres per area unit
AREA_UNITS: dict[str, float] = {
    "mm2": 1e-6,
    "cm2": 1e-4,
    "m2": 1.0,
    "in2": 0.0254**2,
    "ft2": 0.3048**2,
}

#: pascals per modulus (stress) unit
MODULUS_UNITS: dict[str, float] = {
    "Pa": 1.0,
    "kPa": 1e3,
    "MPa": 1e6,
    "GPa": 1e9,
    "N/mm2": 1e6,
    "kN/mm2": 1e9,
    "kN/m2": 1e3,
    "psi": 4.4482216152605 / 0.0254**2,
    "ksi": 4448.2216152605 / 0.0254**2,
}

#: DXF ``$INSUNITS`` code -> our length unit name (codes without an entry are unknown)
INSUNITS: dict[int, str] = {1: "in", 2: "ft", 4: "mm", 5: "cm", 6: "m", 7: "km", 10: "yd", 14: "dm"}

_NUMBER = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"
_QUANTITY = re.compile(rf"^\s*({_NUMBER})\s*([A-Za-z][A-Za-z0-9/]*)?\s*$")
_FRACTION = re.compile(r"^\s*(\d+)\s*/\s*(\d+)\s*([A-Za-z]+)?\s*$")
_SUPERSCRIPTS = str.maketrans({"\u00b2": "2"})


@dataclass(frozen=True)
class Quantity:
    """A number with an optional unit name, as written (``unit`` None when bare)."""

    value: float
    unit: str | None


def parse_quantity(text: str, known: dict[str, float], what: str) -> Quantity:
    """Parse ``"12.5 kN"``, ``"0.5mm"``, ``"1/16in"`` or a bare ``"3"`` strictly.

    Raises ConfigError naming ``what`` and the known units when the text is not a
    finite number followed by one of ``known``.
    """
    s = str(text).translate(_SUPERSCRIPTS)
    names = ", ".join(known)
    m = _QUANTITY.match(s)
    if m:
        value = float(m.group(1))
        unit = m.group(2)
    else:
        f = _FRACTION.match(s)
        if not f or int(f.group(2)) == 0:
            raise ConfigError(f"{what}: cannot read {text!r} as a number with a unit (known units: {names})")
        value = int(f.group(1)) / int(f.group(2))
        unit = f.group(3)
    if not math.isfinite(value):
        raise ConfigError(f"{what}: {text!r} is not a finite number")
    if unit is not None and unit not in known:
        raise ConfigError(f"{what}: unknown unit {unit!r} in {text!r} (known units: {names})")
    return Quantity(value, unit)


def parse_length(text: str, drawing_unit: str, what: str = "length") -> float:
    """A length in drawing units; a bare number is already in drawing units."""
    q = parse_quantity(text, LENGTH_UNITS, what)
    value = q.value if q.unit is None else q.value * LENGTH_UNITS[q.unit] / LENGTH_UNITS[drawing_unit]
    return _finite(value, text, what)


def parse_force(text: str | float | int, force_unit: str, what: str = "force") -> float:
    """A force in ``force_unit``; a bare number is already in ``force_unit``."""
    if isinstance(text, bool):
        raise ConfigError(f"{what}: expected a number or a string such as '12.5 kN', got {text!r}")
    if isinstance(text, (int, float)):
        if not math.isfinite(float(text)):
            raise ConfigError(f"{what}: {text!r} is not a finite number")
        return float(text)
    q = parse_quantity(text, FORCE_UNITS, what)
    value = q.value if q.unit is None else q.value * FORCE_UNITS[q.unit] / FORCE_UNITS[force_unit]
    return _finite(value, text, what)


def parse_si(text: str | float | int, table: dict[str, float], what: str) -> float:
    """An area or modulus converted to SI (m2 or Pa); the unit is required."""
    if isinstance(text, bool) or isinstance(text, (int, float)):
        raise ConfigError(f"{what}: give a unit, e.g. '4800 mm2' or '210 GPa' (known units: {', '.join(table)})")
    q = parse_quantity(text, table, what)
    if q.unit is None:
        raise ConfigError(f"{what}: {text!r} has no unit (known units: {', '.join(table)})")
    return _finite(q.value * table[q.unit], text, what)


def _finite(value: float, text: object, what: str) -> float:
    """``value`` if it is finite after conversion ("1e308 MN" in kN is not)."""
    if not math.isfinite(value):
        raise ConfigError(f"{what}: {text!r} is too large to represent")
    return value


def check_unit_name(name: object, table: dict[str, float], what: str) -> str:
    """Return ``name`` if it is one of ``table``'s keys, else raise ConfigError."""
    if not isinstance(name, str) or name not in table:
        raise ConfigError(f"{what}: unknown unit {name!r} (known units: {', '.join(table)})")
    return name
