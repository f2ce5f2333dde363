"""The one grammar for load labels drawn on the sheet ("P1 = 12 kN", "12K", "1,250 lbs").

Glossary:
    label          the TEXT/MTEXT nearest to a drawn load line on its layer.
    name           letters with digits glued on (``P1``, ``T17``, ``LC-2``): never a value.
    value          the one number of a label (names aside); a label with two numbers,
                   an unknown unit or an undecided comma is unclear, never guessed.
    comma style    how the drawing uses a comma between digits: ``"decimal"``
                   (``12,5`` = 12.5) or ``"group"`` (``12,000`` = 12000). Only a comma
                   followed by exactly three digits (``1,250``) needs it; the other labels
                   of the drawing decide it (:func:`comma_style`).
    kind           ``"force"`` (a joint force), ``"per-length"`` (N/m), ``"per-area"``
                   (Pa) or ``"unclear"``. Only a force can be a drawn joint load.
    assumption     something the reading had to take as given and must say: a mass read
                   as its weight under standard gravity, a bare number taken in the
                   default force unit, a sign that the arrow overrides.

Conversions are exact definitions (NIST SP 811 (2008), Appendix B.8/B.9): the
international pound 0.45359237 kg times standard gravity 9.80665 m/s2 gives
1 lbf = 4.4482216152605 N; 1 kip = 1000 lbf; 1 ft = 0.3048 m; 1 in = 0.0254 m.
The reading is a table lookup, never an expression evaluator.

Usage::

    style = comma_style(all_label_texts)
    r = read_label("P1 = 12 kN", comma=style, default_force_unit="kN")
    r.kind, r.value, r.unit    # ("force", 12000.0, "kN"); value in SI (N, N/m, Pa)
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable
from dataclasses import dataclass
from typing import Literal

#: standard acceleration of gravity, m/s2 (exact; 3rd CGPM 1901, NIST SP 811 B.8)
STANDARD_GRAVITY = 9.80665
#: newtons per pound-force: 0.45359237 kg x 9.80665 m/s2 (exact; NIST SP 811 B.8)
LBF = 4.4482216152605
#: newtons per kip (1000 lbf; NIST SP 811 B.8)
KIP = 1000 * LBF
FOOT = 0.3048
INCH = 0.0254

CommaStyle = Literal["decimal", "group"]
Kind = Literal["force", "per-length", "per-area", "unclear"]

#: force unit as written (lower case) -> (canonical name, newtons)
_FORCE: dict[str, tuple[str, float]] = {
    "n": ("N", 1.0),
    "dan": ("daN", 10.0),
    "kn": ("kN", 1e3),
    "mn": ("MN", 1e6),
    "lbf": ("lbf", LBF),
    "lb": ("lbf", LBF),
    "lbs": ("lbf", LBF),
    "kip": ("kip", KIP),
    "kips": ("kip", KIP),
    "k": ("kip", KIP),  # the US habit: "12K", "12 k" are kips
    "kgf": ("kgf", STANDARD_GRAVITY),
    "tf": ("tf", 1000 * STANDARD_GRAVITY),
}
#: mass unit as written (lower case; "t" only in lower case) -> (canonical, kilograms)
_MASS: dict[str, tuple[str, float]] = {
    "kg": ("kg", 1.0),
    "t": ("t", 1000.0),
    "tonne": ("t", 1000.0),
    "tonnes": ("t", 1000.0),
}
#: units that mean two different things: refused with the reason
_AMBIGUOUS: dict[str, str] = {
    "T": "'T' may be a tonne (1000 kg) or a short ton (2000 lb); write t, tonne, kN or kip",
    "ton": "'ton' may be a short ton (2000 lb), a long ton (2240 lb) or a tonne (1000 kg); write t, tonne, kN or kip",
    "tons": "'tons' may be short tons (2000 lb), long tons (2240 lb) or tonnes (1000 kg); write t, tonne, kN or kip",
    "mN": "'mN' is a millinewton in SI; write N, kN or MN",
}
#: length unit (lower case) -> metres, for the denominators of per-length and per-area units
_LENGTH: dict[str, float] = {"mm": 1e-3, "cm": 1e-2, "m": 1.0, "in": INCH, "ft": FOOT}
#: single-word distributed units (lower case) -> (canonical, kind, SI value of one unit)
_DISTRIBUTED_WORDS: dict[str, tuple[str, Kind, float]] = {
    "plf": ("plf", "per-length", LBF / FOOT),
    "klf": ("klf", "per-length", KIP / FOOT),
    "pli": ("pli", "per-length", LBF / INCH),
    "psf": ("psf", "per-area", LBF / FOOT**2),
    "ksf": ("ksf", "per-area", KIP / FOOT**2),
    "psi": ("psi", "per-area", LBF / INCH**2),
    "ksi": ("ksi", "per-area", KIP / INCH**2),
    "pa": ("Pa", "per-area", 1.0),
    "kpa": ("kPa", "per-area", 1e3),
    "mpa": ("MPa", "per-area", 1e6),
}

_SPACES = str.maketrans(
    {
        "\u00a0": " ",
        "\u2007": " ",
        "\u2009": " ",
        "\u202f": " ",
        "\t": " ",
        "\n": " ",
        "\r": " ",
        "\u2212": "-",
        "\u2013": "-",
        "\u00b2": "2",
        "\u00b3": "3",
        "\u2044": "/",
    }
)

# a number: mixed fraction, fraction, comma groups, space groups, plain decimal (either
# marker), each with an optional exponent where it makes sense; the order matters
_NUM = re.compile(
    r"""
    (?P<mixed>(?P<mw>\d+)(?:\ +|-)(?P<mn>\d+)/(?P<md>\d+)(?![\d.,/]))
  | (?P<frac>(?P<fn>\d+)/(?P<fd>\d+)(?![\d.,/]))
  | (?P<cgroup>\d{1,3}(?:,\d{3})+(?:\.\d+)?(?![\d,]))
  | (?P<sgroup>\d{1,3}(?:\ \d{3}){2,}(?:[.,]\d+)?(?![\d,.])|\d{2,3}\ \d{3}(?:[.,]\d+)?(?![\d,.]))
  | (?P<plain>(?:\d+(?:[.,]\d+)?|\.\d+|\d+\.(?!\d))(?:[eE][+-]?\d+)?)
    """,
    re.VERBOSE,
)
# a word: a letter, then letters and digits, with inner joints (-_.') followed by more
_WORD = re.compile(r"[^\W\d_][^\W_]*(?:[-_.'][^\W_]+)*")
# a unit after a number: a word, optionally "/" and a word (kN/m, lb/ft, kN/m2)
# (a product such as kN.m, kN-m or kN*m is taken whole, so that it is refused as unknown)
_UNIT = re.compile(r"\ *(?P<u>[^\W\d_][^\W_]*(?:[.\u00b7*-][^\W\d_][^\W_]*)*(?:\ ?/\ ?[^\W\d_][^\W_]*(?:\^?[23])?)?)")
#: characters allowed between the parts of a label; anything else makes it unclear
_NEUTRAL = set(" =:()[];,.-")


@dataclass(frozen=True)
class LabelReading:
    """What a label says.

    kind         "force", "per-length", "per-area" or "unclear"
    value        magnitude in SI: N for a force, N/m per length, Pa per area; None when unclear
    unit         the unit it was read in (canonical: "kN", "kip", "t" ...); None when unclear
    written      the number as written, sign included ("-1/2", "12,000")
    negative     the label carried a minus sign (the value is the magnitude)
    assumptions  sentences saying what was assumed (mass through gravity, default unit)
    problem      why the label cannot be read and what to write instead (kind "unclear")
    bare         a force read from a number written without a unit (default unit taken)
    """

    text: str
    kind: Kind
    value: float | None = None
    unit: str | None = None
    written: str | None = None
    negative: bool = False
    assumptions: tuple[str, ...] = ()
    problem: str | None = None
    bare: bool = False

    def force(self, unit_newtons: float) -> float:
        """The magnitude of a force in a unit of ``unit_newtons`` N; ValueError otherwise."""
        if self.kind != "force" or self.value is None:
            raise ValueError(f"label {self.text!r} is not a force ({self.kind})")
        return self.value / unit_newtons


@dataclass(frozen=True)
class _Number:
    start: int
    end: int
    raw: str  # as written, sign included
    digits: str  # the number without its sign
    negative: bool
    form: str  # "mixed", "frac", "cgroup", "sgroup", "plain"
    unit: str | None  # the unit written right after the number, as written


def _normalise(text: str) -> str:
    return str(text).translate(_SPACES)


def _scan(s: str) -> tuple[list[_Number], list[str], list[str]]:
    """Numbers (each with the unit written right after it), the other words, and the
    stray characters of a normalised label, left to right."""
    numbers: list[_Number] = []
    words: list[str] = []
    stray: list[str] = []
    i = 0
    while i < len(s):
        c = s[i]
        w = _WORD.match(s, i) if not c.isdigit() else None
        if w:  # names (P1, LC-2) and loose words
            words.append(w.group())
            i = w.end()
            continue
        j, negative = i, False
        if c in "+-" and (s[i - 1] if i else " ") in " =:([":
            k = i + 1
            while k < len(s) and s[k] == " ":
                k += 1  # "- 12 kN": a minus sign set apart is still a sign (and is flagged)
            # set apart, it is a sign only at the start or after = : ( [ ("DL - 12 kN" is a dash)
            spaced = k > i + 1 and s[:i].rstrip()[-1:] not in ("", "=", ":", "(", "[")
            if k < len(s) and (s[k].isdigit() or s[k] == ".") and not spaced:
                j, negative = k, c == "-"
        m = _NUM.match(s, j) if j < len(s) and (s[j].isdigit() or s[j] == ".") else None
        if m:
            u = _UNIT.match(s, m.end())
            unit = u.group("u") if u else None
            end = u.end() if u else m.end()
            numbers.append(_Number(i, m.end(), s[i : m.end()], m.group(), negative, m.lastgroup or "plain", unit))
            i = end
            continue
        if c not in _NEUTRAL:
            stray.append(c)
        i += 1
    return numbers, words, stray


def _comma_kind(raw: str, form: str) -> str | None:
    """ "decimal", "group", "ambiguous" or None (no comma) for one number as written."""
    if "," not in raw:
        return None
    if form == "cgroup":
        digits = raw
        if digits.count(",") == 1 and "." not in digits and "e" not in digits.lower():
            return "ambiguous"  # 1,250
        return "group"  # 1,250,000 or 1,250.5
    return "decimal"  # 12,5  12,50  1 250,5


def comma_style(texts: Iterable[str]) -> CommaStyle | None:
    """How the drawing's labels use a comma between digits, or None when undecided.

    A decimal comma somewhere (``12,5``) says "decimal"; a digit group that cannot be a
    decimal comma (``1,250,000``, ``1,250.5``) says "group". Neither, or both, is None:
    then a label such as ``1,250`` is unclear.
    """
    seen: set[str] = set()
    for text in texts:
        numbers, _, _ = _scan(_normalise(text))
        for n in numbers:
            k = _comma_kind(n.digits, n.form)
            if k in ("decimal", "group"):
                seen.add(k)
    if len(seen) == 1:
        return "decimal" if "decimal" in seen else "group"
    return None


def _number_value(n: _Number, comma: CommaStyle | None) -> tuple[float | None, str | None]:
    """The magnitude of a number token, or (None, reason)."""
    raw = n.digits
    kind = _comma_kind(n.digits, n.form)
    if kind == "ambiguous":
        if comma is None:
            whole = raw.replace(",", "")
            dec = raw.replace(",", ".")
            return None, (
                f"the comma in {raw} may be a digit group ({whole}) or a decimal comma ({dec}) and no other "
                f"label in the drawing decides it; write {whole} or {dec}"
            )
        raw = raw.replace(",", "") if comma == "group" else raw.replace(",", ".")
    elif kind == "decimal":
        if comma == "group":
            return None, (
                f"{raw} has a decimal comma but other labels of the drawing use the comma for digit groups; "
                "write the decimal with a point"
            )
        raw = raw.replace(" ", "").replace(",", ".")
    elif kind == "group":
        if comma == "decimal":
            return None, (
                f"{raw} groups digits with commas but other labels of the drawing use a decimal comma; "
                "write the number without digit groups"
            )
        raw = raw.replace(",", "")
    if n.form in ("mixed", "frac"):
        try:
            return _fraction_value(raw, n.form)
        except (OverflowError, ValueError):  # beyond the largest float, or too many digits for an int
            return None, f"{raw} is too large to represent"
    try:
        value = float(raw.replace(" ", ""))
    except ValueError:  # pragma: no cover - the scanner only passes numbers
        return None, f"{raw} is not a number"
    if not math.isfinite(value):
        return None, f"{raw} is too large to represent"
    return value, None


def _fraction_value(raw: str, form: str) -> tuple[float | None, str | None]:
    """The value of "3 1/2" (mixed) or "7/2" (frac), or (None, reason)."""
    if form == "mixed":
        m = _NUM.fullmatch(raw)
        assert m is not None
        whole, num, den = int(m.group("mw")), int(m.group("mn")), int(m.group("md"))
        if den == 0:
            return None, f"{raw} divides by zero"
        return whole + num / den, None
    num_s, den_s = raw.split("/")
    if int(den_s) == 0:
        return None, f"{raw} divides by zero"
    return int(num_s) / int(den_s), None


def _classify_unit(unit: str) -> tuple[str, Kind | Literal["mass", "ambiguous", "unknown"], float, str]:
    """(canonical, kind, SI factor, note) of a unit as written."""
    compact = unit.replace(" ", "").replace("^", "")
    low = compact.lower()
    if compact in _AMBIGUOUS or low in ("ton", "tons"):  # "T" and "mN" by case, "ton(s)" in any case
        return compact, "ambiguous", math.nan, _AMBIGUOUS.get(compact) or _AMBIGUOUS[low]
    if low in _FORCE:
        name, f = _FORCE[low]
        return name, "force", f, ""
    if low in _MASS and (low != "t" or compact == "t"):
        name, kg = _MASS[low]
        return name, "mass", kg * STANDARD_GRAVITY, ""
    if low in _DISTRIBUTED_WORDS:
        name, kind, f = _DISTRIBUTED_WORDS[low]
        return name, kind, f, ""
    if "/" in low:
        top, bottom = low.split("/", 1)
        top_c = compact.split("/", 1)[0]
        area = bottom.endswith("2")
        base = bottom[:-1] if area else bottom
        if top_c in _AMBIGUOUS or top in ("ton", "tons"):
            return compact, "ambiguous", math.nan, _AMBIGUOUS.get(top_c) or _AMBIGUOUS[top]
        if base in _LENGTH and not bottom.endswith("3"):
            per = _LENGTH[base] ** (2 if area else 1)
            per_kind: Kind = "per-area" if area else "per-length"
            if top in _FORCE:
                name, f = _FORCE[top]
                return f"{name}/{base}{'2' if area else ''}", per_kind, f / per, ""
            if top in _MASS and (top != "t" or top_c == "t"):
                name, kg = _MASS[top]
                return f"{name}/{base}{'2' if area else ''}", per_kind, kg * STANDARD_GRAVITY / per, "mass"
    return compact, "unknown", math.nan, ""


def _unit_words() -> set[str]:
    return set(_FORCE) | set(_MASS) | {"ton", "tons"} | set(_DISTRIBUTED_WORDS)


_KNOWN_FORCE_NAMES = "N, daN, kN, MN, lbf, lb, lbs, kip, kips, k, kgf, tf (or kg, t, tonne)"


def _unclear(text: str, problem: str) -> LabelReading:
    return LabelReading(text=text, kind="unclear", problem=problem)


def read_label(
    text: str,
    *,
    comma: CommaStyle | None = None,
    default_force_unit: str = "kN",
    default_force_newtons: float | None = None,
) -> LabelReading:
    """Read one label; never raises for any text.

    comma               the drawing's comma style (:func:`comma_style`); None: undecided
    default_force_unit  the unit a bare number is taken in (the loads file's force
                        unit, else kN); its size in newtons comes from
                        ``default_force_newtons`` or the table of this module
    """
    s = _normalise(text)
    numbers, words, stray = _scan(s)
    if not numbers:
        return _unclear(text, "it holds no number; write the force with its unit, e.g. 12 kN")
    if stray:
        chars = "".join(dict.fromkeys(stray))
        return _unclear(text, f"it holds {chars!r}, which is not part of a load label; write the force as e.g. 12 kN")
    if len(numbers) > 1:
        shown_numbers = ", ".join(n.raw for n in numbers)
        return _unclear(
            text,
            f"it holds {len(numbers)} numbers ({shown_numbers}) and only one may be the value; "
            "write one force per load line, e.g. 12 kN (names such as P1 are fine)",
        )
    (n,) = numbers
    value, why = _number_value(n, comma)
    if value is None:
        return _unclear(text, why or "its number cannot be read")
    unit = n.unit
    assumptions: list[str] = []
    if unit is None:
        # a force unit that is in the label but not next to the number is not guessed at
        stray_units = [w for w in words if w.lower() in _unit_words() or w in _AMBIGUOUS]
        if stray_units:
            return _unclear(
                text,
                f"the unit {stray_units[0]!r} is not next to the number; write the number and its unit "
                "together, e.g. 12 kN",
            )
        if default_force_newtons is None:
            key = default_force_unit.lower()
            if key not in _FORCE:
                raise ValueError(f"unknown default force unit {default_force_unit!r}")
            default_force_newtons = _FORCE[key][1]
        assumptions.append(f"{n.digits} has no unit: taken as {default_force_unit}")
        return LabelReading(
            text=text,
            kind="force",
            value=value * default_force_newtons,
            unit=default_force_unit,
            written=n.raw,
            negative=n.negative,
            assumptions=tuple(assumptions),
            bare=True,
        )
    name, kind, factor, note = _classify_unit(unit)
    if kind == "ambiguous":
        return _unclear(text, note)
    if kind == "unknown":
        return _unclear(
            text,
            f"{unit!r} after the number is not a unit we know; write one of {_KNOWN_FORCE_NAMES}, e.g. 12 kN",
        )
    si = value * factor
    if not math.isfinite(si):
        return _unclear(text, f"{n.raw} {unit} is too large to represent")
    if kind == "mass" or note == "mass":
        assumptions.append(
            f"{n.digits} {name.split('/')[0]} is a mass: taken as its weight under standard gravity "
            f"{STANDARD_GRAVITY} m/s2"
        )
    out_kind: Kind = "force" if kind in ("force", "mass") else kind  # type: ignore[assignment]
    return LabelReading(
        text=text,
        kind=out_kind,
        value=si,
        unit=name,
        written=n.raw,
        negative=n.negative,
        assumptions=tuple(assumptions),
    )


__all__ = ["KIP", "LBF", "STANDARD_GRAVITY", "LabelReading", "comma_style", "read_label"]
