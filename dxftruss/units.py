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
import sys
from dataclasses import dataclass

from .errors import ConfigError

#: metres per length unit. Exact by definition (NIST SP 811, 2008, Appendix B.8): the
#: inch 0.0254 m, the foot 0.3048 m, the yard 0.9144 m, the mile 1609.344 m, the mil
#: 2.54e-5 m, the microinch 2.54e-8 m, the angstrom 1e-10 m; the US survey foot
#: 1200/3937 m (and the survey inch, yard and mile from it)
LENGTH_UNITS: dict[str, float] = {
    "mm": 1e-3,
    "cm": 1e-2,
    "dm": 1e-1,
    "m": 1.0,
    "dam": 1e1,
    "hm": 1e2,
    "km": 1e3,
    "um": 1e-6,
    "nm": 1e-9,
    "angstrom": 1e-10,
    "in": 0.0254,
    "ft": 0.3048,
    "yd": 0.9144,
    "mi": 1609.344,
    "mil": 2.54e-5,
    "uin": 2.54e-8,
    "usin": 100.0 / 3937.0,
    "usft": 1200.0 / 3937.0,
    "usyd": 3600.0 / 3937.0,
    "usmi": 6336000.0 / 3937.0,
}

#: what each length unit name means, for messages
LENGTH_UNIT_NAMES: dict[str, str] = {
    "mm": "millimetres",
    "cm": "centimetres",
    "dm": "decimetres",
    "m": "metres",
    "dam": "decametres",
    "hm": "hectometres",
    "km": "kilometres",
    "um": "micrometres (microns)",
    "nm": "nanometres",
    "angstrom": "angstroms",
    "in": "inches",
    "ft": "feet",
    "yd": "yards",
    "mi": "miles",
    "mil": "mils (thousandths of an inch)",
    "uin": "microinches",
    "usin": "US survey inches",
    "usft": "US survey feet",
    "usyd": "US survey yards",
    "usmi": "US survey miles",
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

#: metres to the fourth per second-moment-of-area unit
INERTIA_UNITS: dict[str, float] = {
    "mm4": 1e-12,
    "cm4": 1e-8,
    "m4": 1.0,
    "in4": 0.0254**4,
}

#: kilograms per cubic metre per density unit
DENSITY_UNITS: dict[str, float] = {
    "kg/m3": 1.0,
    "t/m3": 1e3,
    "g/cm3": 1e3,
    "lb/ft3": 0.45359237 / 0.3048**3,
}

#: standard gravity, m/s2 (the conventional value of the SI: weight = mass x g)
STANDARD_GRAVITY = 9.80665

#: newtons per metre per load-per-length unit: a force unit over mm, cm, m, in or ft
#: ("2.5 kN/m", "150 lbf/ft"), and the US words plf (lbf/ft) and klf (kip/ft)
PER_LENGTH_UNITS: dict[str, float] = {
    **{f"{f}/{ln}": FORCE_UNITS[f] / LENGTH_UNITS[ln] for f in FORCE_UNITS for ln in ("mm", "cm", "m", "in", "ft")},
    "plf": FORCE_UNITS["lbf"] / LENGTH_UNITS["ft"],
    "klf": FORCE_UNITS["kip"] / LENGTH_UNITS["ft"],
}

#: pascals per load-per-area unit: a force unit over mm2, cm2, m2, in2 or ft2
#: ("0.6 kN/m2"), and Pa, kPa, psf (lbf/ft2), ksf (kip/ft2)
PER_AREA_UNITS: dict[str, float] = {
    **{f"{f}/{a}": FORCE_UNITS[f] / AREA_UNITS[a] for f in FORCE_UNITS for a in AREA_UNITS},
    "Pa": 1.0,
    "kPa": 1e3,
    "psf": FORCE_UNITS["lbf"] / AREA_UNITS["ft2"],
    "ksf": FORCE_UNITS["kip"] / AREA_UNITS["ft2"],
}

#: DXF ``$INSUNITS`` code -> our length unit name. 0 is "unitless"; 17-20 (gigametres,
#: astronomical units, light years, parsecs) are not lengths a truss is drawn in: they
#: are reported by name (:data:`INSUNITS_UNUSABLE`) and a unit is assumed and said.
INSUNITS: dict[int, str] = {
    1: "in",
    2: "ft",
    3: "mi",
    4: "mm",
    5: "cm",
    6: "m",
    7: "km",
    8: "uin",
    9: "mil",
    10: "yd",
    11: "angstrom",
    12: "nm",
    13: "um",
    14: "dm",
    15: "dam",
    16: "hm",
    21: "usft",
    22: "usin",
    23: "usyd",
    24: "usmi",
}

#: ``$INSUNITS`` codes that name a unit no truss drawing uses (said, not used)
INSUNITS_UNUSABLE: dict[int, str] = {
    17: "gigametres",
    18: "astronomical units",
    19: "light years",
    20: "parsecs",
}


def insunits_description(code: int | None) -> str:
    """What a ``$INSUNITS`` code says, for messages: ``"13 (micrometres (microns))"``."""
    if code is None:
        return "absent"
    if code in INSUNITS:
        return f"{code} ({LENGTH_UNIT_NAMES[INSUNITS[code]]})"
    if code in INSUNITS_UNUSABLE:
        return f"{code} ({INSUNITS_UNUSABLE[code]})"
    if code == 0:
        return "0 (unitless)"
    return f"{code} (not a unit code DXF defines)"


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


def parse_force(text: str | float, force_unit: str, what: str = "force") -> float:
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


def parse_si(text: str | float, table: dict[str, float], what: str) -> float:
    """An area or modulus converted to SI (m2 or Pa); the unit is required."""
    if isinstance(text, (bool, int, float)):
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


# ----------------------------------------------------------------------------------------
# numbers in messages


@dataclass(frozen=True)
class LengthFormat:
    """How a length is written in a message: ``"2.00 mm"``.

    unit  the drawing unit's name (lengths are in drawing units)
    step  the resolution, drawing units: the power of ten at or below the snap tolerance
          (two points closer than the snap are one point to the tool, so digits below
          it say nothing), never finer than the floating-point noise of the largest
          coordinate (64 units in the last place) - see :func:`length_format`
    """

    unit: str
    step: float

    @property
    def decimals(self) -> int:
        return max(0, -math.floor(math.log10(self.step) + 1e-9))

    def value(self, x: float) -> float:
        """``x`` rounded to the step."""
        return round(round(x / self.step) * self.step, self.decimals)

    def up(self, x: float) -> float:
        """The smallest multiple of the step strictly above ``x`` (a tolerance that reaches ``x``)."""
        n = math.floor(x / self.step + 1e-9) + 1
        return round(n * self.step, self.decimals)

    def number(self, x: float) -> str:
        """``x`` at the step, without the unit: ``"2.00"``."""
        if x != 0 and abs(x) < self.step / 2:
            return f"{'-' if x < 0 else ''}less than {self.step:.{self.decimals}f}"
        return f"{self.value(x):.{self.decimals}f}"

    def __call__(self, x: float) -> str:
        """``x`` at the step with the unit: ``"2.00 mm"`` (``"less than 0.01 mm"`` below half a step)."""
        return f"{self.number(x)} {self.unit}"

    def point(self, x: float, y: float) -> str:
        """A point: ``"(1200.00, 350.00) mm"`` (each coordinate rounded to the step, so
        a coordinate within noise of zero is 0.00)."""
        d = self.decimals
        return f"({self.value(x) + 0.0:.{d}f}, {self.value(y) + 0.0:.{d}f}) {self.unit}"


def length_format(unit: str, *, snap: float, magnitude: float) -> LengthFormat:
    """The :class:`LengthFormat` of a drawing in ``unit`` checked with snap tolerance
    ``snap`` whose largest coordinate is ``magnitude`` (both in drawing units).

    step = 10 ** floor(log10(max(snap, noise))), noise = 64 eps magnitude; 1e-6 of the
    unit when both are zero (an empty drawing, ``--snap 0`` on the origin).
    """
    noise = 64 * sys.float_info.epsilon * abs(float(magnitude))
    base = max(float(snap), noise)
    if not math.isfinite(base) or base <= 0:
        base = 1e-6
    return LengthFormat(unit, 10.0 ** math.floor(math.log10(base) + 1e-9))


#: significant figures of a force in a message (labels and loads files give fewer)
FORCE_DIGITS = 6


def force_text(value: float, unit: str, *, digits: int = FORCE_DIGITS) -> str:
    """A force with its unit: ``"12.0 kN"``, ``"0.333333 kN"``, ``"125000.0 N"``.

    ``digits`` significant figures, trailing zeros dropped but one decimal kept; no
    exponent from 1e-6 to 1e15 of the unit.
    """
    return f"{plain_number(value, digits=digits)} {unit}"


def plain_number(value: float, *, digits: int = FORCE_DIGITS) -> str:
    """``value`` to ``digits`` significant figures in plain decimal notation (see force_text)."""
    v = float(value)
    if not math.isfinite(v):
        return str(v)
    if v == 0:
        return "0.0"
    mag = math.floor(math.log10(abs(v)))
    if mag < -6 or mag > 15:
        return f"{v:.{digits - 1}e}"
    decimals = max(1, digits - 1 - mag)
    text = f"{round(v, digits - 1 - mag):.{decimals}f}"
    whole, _, frac = text.partition(".")
    frac = frac.rstrip("0") or "0"
    return f"{whole}.{frac}"
