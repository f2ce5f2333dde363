"""The TOML loads file (``--loads``): units, supports, loads, combinations, sections.

Glossary:
    entry   one ``[[support]]``, ``[[load]]``, ``[[combination]]`` or ``[[section]]``
            table, named in messages by its kind and 1-based number ("[[load]] #3").

Every mistake is a ConfigError with one line naming the file and the entry: unknown
keys, wrong types, non-finite numbers, unknown units, unknown cases in a combination.
Coordinates are drawing coordinates; whether a point has a joint nearby is checked
when the model is built (it needs the joints).
"""

from __future__ import annotations

import datetime
import math
import os
import re
import stat
import tomllib
from dataclasses import dataclass
from typing import Any

from .errors import ConfigError
from .model import Fix, Section
from .units import (
    AREA_UNITS,
    DENSITY_UNITS,
    FORCE_UNITS,
    INERTIA_UNITS,
    LENGTH_UNITS,
    MODULUS_UNITS,
    PER_AREA_UNITS,
    PER_LENGTH_UNITS,
    check_unit_name,
    parse_force,
    parse_si,
)

DEFAULT_CASE = "main"


@dataclass(frozen=True)
class SupportEntry:
    """``fix`` "roller" in the file is ``Fix.N`` with its unit ``normal`` (None otherwise).

    ``axes`` the world axes the file names ("xyz", "z", "xz" ... ordered; "" for a
    roller); ``fix`` is their trace in the XY plane ("xyz" -> xy, "xz" -> x; "z" has
    none: planar models refuse it). ``z`` is the third coordinate of a 3-D ``at``
    (None for [x, y])."""

    number: int
    at: tuple[float, float]
    fix: Fix
    normal: tuple[float, float] | None = None
    axes: str = ""
    z: float | None = None


@dataclass(frozen=True)
class LoadEntry:
    """fx, fy in the file's force unit."""

    number: int
    at: tuple[float, float]
    fx: float
    fy: float
    case: str
    #: the force along world z (space trusses) and the third coordinate of a 3-D ``at``
    fz: float = 0.0
    z: float | None = None


@dataclass(frozen=True)
class LineLoadEntry:
    """A ``[[line_load]]`` or ``[[area_load]]`` (turned into a line load: w = q x spacing).

    ``w`` in N/m (SI); ``direction`` "down", "normal" or a unit vector (dx, dy);
    ``defaults`` names the keys left out and taken by default ("measured", "direction").
    """

    number: int
    kind: str  # "line_load" or "area_load"
    start: tuple[float, float]
    end: tuple[float, float]
    w: float
    written: str  # w (or "q x spacing") as written, for messages
    case: str
    measured: str  # "along" or "horizontal"
    direction: str | tuple[float, float]
    defaults: tuple[str, ...] = ()

    @property
    def name(self) -> str:
        return f"[[{self.kind}]] #{self.number}"


@dataclass(frozen=True)
class CombinationEntry:
    number: int
    name: str
    factors: tuple[tuple[str, float], ...]


@dataclass(frozen=True)
class MovingLoadEntry:
    """A ``[[moving_load]]``: a point load, or a group of axle loads at fixed spacings,
    travelling along the chord from ``start`` to ``end`` (drawing coordinates).

    ``loads`` are the axle loads in the force unit, acting downward, front axle first;
    ``spacings`` the distances between consecutive axles in metres (one fewer)."""

    number: int
    name: str
    start: tuple[float, float]
    end: tuple[float, float]
    loads: tuple[float, ...]
    spacings: tuple[float, ...]


@dataclass(frozen=True)
class LoadsSpec:
    path: str
    force_unit: str
    length_unit: str | None
    supports: tuple[SupportEntry, ...]
    loads: tuple[LoadEntry, ...]
    combinations: tuple[CombinationEntry, ...]
    sections: tuple[Section, ...]
    force_unit_given: bool = False
    #: what to do where the drawing and this file both give loads to one case
    #: (``[drawn] loads``): None refuse, "add" use both, "ignore" use the file's only
    drawn_loads: str | None = None
    #: the same for different supports drawn and given at one joint (``[drawn] supports``)
    drawn_supports: str | None = None
    #: ``[[line_load]]`` and ``[[area_load]]`` entries, in file order
    line_loads: tuple[LineLoadEntry, ...] = ()
    #: ``[checks] ratio``: members whose utilisation exceeds it are flagged (default 1.0)
    check_ratio: float = 1.0
    #: ``[checks] slenderness``: compression members with L/r above it are flagged
    #: (default 200, common practice for compression members: docs/methods.md, Engineering results)
    slenderness_limit: float = 200.0
    #: ``[self_weight] case``: the name of the self-weight case
    self_weight_case: str = "self-weight"
    #: ``[[moving_load]]`` entries, in file order
    moving_loads: tuple[MovingLoadEntry, ...] = ()
    #: the ``[report]`` table: title-block fields (titleblock.py), in file order
    report: tuple[tuple[str, str], ...] = ()


_TOP_KEYS = {
    "units",
    "drawn",
    "support",
    "load",
    "line_load",
    "area_load",
    "combination",
    "section",
    "report",
    "checks",
    "self_weight",
    "moving_load",
}
_KEYS = {
    "units": {"force", "length"},
    "drawn": {"loads", "supports"},
    "report": {"project", "drawing_no", "revision", "checked_by", "date"},
    "support": {"at", "fix", "normal"},
    "load": {"at", "fx", "fy", "fz", "case"},
    "line_load": {"from", "to", "w", "case", "measured", "direction"},
    "area_load": {"from", "to", "q", "spacing", "case", "measured", "direction"},
    "combination": {"name", "factors"},
    "section": {"layer", "members", "name", "area", "E", "I", "r", "strength", "density", "shape", "b", "d", "D", "t"},
    "checks": {"ratio", "slenderness"},
    "self_weight": {"case"},
    "moving_load": {"name", "from", "to", "loads", "spacing"},
}

#: ``shape`` of a [[section]] -> the dimensions it needs
SHAPES = {"rectangle": ("b", "d"), "round-hollow": ("D", "t"), "square-hollow": ("D", "t")}


def _unknown(where: str, table: dict[str, Any], kind: str) -> None:
    extra = sorted(set(table) - _KEYS[kind])
    if extra:
        raise ConfigError(f"{where}: unknown key {extra[0]!r} (known keys: {', '.join(sorted(_KEYS[kind]))})")


def _at(where: str, table: dict[str, Any], key: str = "at") -> tuple[float, float]:
    """The entry's 'at' point (or another point ``key``): present, a pair of finite numbers."""
    if key not in table:
        raise ConfigError(f"{where}: '{key}' is missing")
    value = table[key]
    if (
        not isinstance(value, list)
        or len(value) != 2
        or not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in value)
    ):
        raise ConfigError(f"{where}: '{key}' must be a pair of numbers such as [3000.0, 0.0], got {value!r}")
    x, y = float(value[0]), float(value[1])
    if not (math.isfinite(x) and math.isfinite(y)):
        raise ConfigError(f"{where}: '{key}' must be finite, got {value!r}")
    return x, y


def _at3(where: str, table: dict[str, Any]) -> tuple[tuple[float, float], float | None]:
    """A support's or load's 'at': [x, y] (z None) or [x, y, z] (space trusses)."""
    value = table.get("at")
    if isinstance(value, list) and len(value) == 3:
        if not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in value):
            raise ConfigError(f"{where}: 'at' must be [x, y] or [x, y, z] numbers, got {value!r}")
        x, y, z = (float(v) for v in value)
        if not all(math.isfinite(v) for v in (x, y, z)):
            raise ConfigError(f"{where}: 'at' must be finite, got {value!r}")
        return (x, y), z
    return _at(where, table), None


#: the world axes a support may fix, as written (any order, any case) -> XY trace
_AXES_TRACE = {"xy": Fix.XY, "xyz": Fix.XY, "x": Fix.X, "xz": Fix.X, "y": Fix.Y, "yz": Fix.Y, "z": Fix.XY}


def _case(where: str, table: dict[str, Any]) -> str:
    case = table.get("case", DEFAULT_CASE)
    if not isinstance(case, str) or not case.strip():
        raise ConfigError(f"{where}: 'case' must be a non-empty string, got {case!r}")
    return case.strip()


def _line_load(where: str, number: int, kind: str, t: dict[str, Any]) -> LineLoadEntry:
    """One ``[[line_load]]`` or ``[[area_load]]`` table, validated."""
    _unknown(where, t, kind)
    start, end = _at(where, t, "from"), _at(where, t, "to")
    if start == end:
        raise ConfigError(f"{where}: 'from' and 'to' are the same point {list(start)}")
    if kind == "line_load":
        if "w" not in t:
            raise ConfigError(f"{where}: 'w' is missing (a load per length such as \"2.5 kN/m\")")
        w = _per_unit(where, "w", t["w"], PER_LENGTH_UNITS, '"2.5 kN/m"')
        written = str(t["w"])
    else:
        for key in ("q", "spacing"):
            if key not in t:
                raise ConfigError(f"{where}: '{key}' is missing")
        q = _per_unit(where, "q", t["q"], PER_AREA_UNITS, '"0.6 kN/m2"')
        spacing = _per_unit(where, "spacing", t["spacing"], LENGTH_UNITS, '"600 mm"')
        if spacing <= 0:
            raise ConfigError(f"{where}: 'spacing' must be positive, got {t['spacing']!r}")
        w = q * spacing
        written = f"{t['q']} x {t['spacing']}"
    if not math.isfinite(w):
        raise ConfigError(f"{where}: the load per length is too large to represent")
    defaults = tuple(k for k in ("measured", "direction") if k not in t)
    measured = t.get("measured", "along")
    if measured not in ("along", "horizontal"):
        raise ConfigError(f'{where}: \'measured\' must be "along" or "horizontal", got {measured!r}')
    direction: str | tuple[float, float]
    raw = t.get("direction", "down")
    if raw in ("down", "normal"):
        direction = raw
    else:
        dx, dy = _at(where, {"direction": raw}, "direction") if isinstance(raw, list) else (math.nan, math.nan)
        size = math.hypot(dx, dy)
        if not (math.isfinite(size) and size > 0):
            raise ConfigError(f'{where}: \'direction\' must be "down", "normal" or a non-zero [dx, dy], got {raw!r}')
        direction = (dx / size, dy / size)
    return LineLoadEntry(number, kind, start, end, w, written, _case(where, t), measured, direction, defaults)


def _per_unit(where: str, key: str, value: Any, table: dict[str, float], example: str) -> float:
    """A quantity with a required unit from ``table``, in SI."""
    if isinstance(value, (bool, int, float)) or not isinstance(value, str):
        raise ConfigError(f"{where}: '{key}' needs a unit, e.g. {example}, got {value!r}")
    return parse_si(value, table, f"{where} {key}")


def _tables(where: str, data: dict[str, Any], kind: str) -> list[dict[str, Any]]:
    value = data.get(kind, [])
    if not isinstance(value, list) or not all(isinstance(t, dict) for t in value):
        raise ConfigError(f"{where}: '{kind}' must be written as [[{kind}]] tables")
    return value


#: largest loads file read (bytes): a loads file of 25,000 entries is about 1.5 MB
MAX_LOADS_FILE_BYTES = 16 * 2**20


def _read_regular_file(name: str, limit: int) -> bytes:
    """The bytes of ``name`` if it is a regular file of at most ``limit`` bytes.

    Opened without blocking (a FIFO would wait for a writer forever) and checked on the
    open descriptor, so what is checked is what is read: a device such as /dev/zero, a
    FIFO, a socket or a directory is refused before a byte is read."""
    try:
        fd = os.open(name, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_CLOEXEC", 0))
    except OSError as exc:
        raise ConfigError(f"{name}: cannot read the loads file ({exc.strerror or exc})") from None
    try:
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode):
            kind = "a directory" if stat.S_ISDIR(st.st_mode) else "not a regular file (a device, FIFO or socket)"
            raise ConfigError(f"{name}: the loads file is {kind}; give a TOML file")
        if st.st_size > limit:
            raise ConfigError(f"{name}: the loads file is {st.st_size:,} bytes, more than the limit of {limit:,} bytes")
        chunks = []
        total = 0
        while True:
            block = os.read(fd, 1 << 20)
            if not block:
                break
            total += len(block)
            if total > limit:  # the file grew while it was read
                raise ConfigError(f"{name}: the loads file is more than the limit of {limit:,} bytes")
            chunks.append(block)
        return b"".join(chunks)
    except OSError as exc:
        raise ConfigError(f"{name}: cannot read the loads file ({exc.strerror or exc})") from None
    finally:
        os.close(fd)


def read_loads_file(path: str | os.PathLike[str], *, max_bytes: int = MAX_LOADS_FILE_BYTES) -> LoadsSpec:
    """Parse and validate a loads file; raises ConfigError with the file and entry named.

    Only a regular file of at most ``max_bytes`` is read (16 MiB by default)."""
    name = str(path)
    raw = _read_regular_file(name, max_bytes)
    try:
        text = raw.decode("utf-8")
        plain = plain_toml(text)
        data = plain if plain is not None else tomllib.loads(text)
    except UnicodeDecodeError:
        raise ConfigError(f"{name}: the loads file is not UTF-8 text") from None
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{name}: TOML syntax error: {exc}") from None
    except RecursionError:  # arrays or tables nested thousands deep
        raise ConfigError(f"{name}: the loads file nests arrays or tables too deeply to be a loads file") from None
    try:
        return parse_loads(data, name)
    except RecursionError:
        raise ConfigError(f"{name}: the loads file nests values too deeply to be a loads file") from None


#: one line of the plain TOML subset: a table or array-of-tables header, or key = value
_PLAIN_LINE = re.compile(
    r"(?:\[\[(?P<aot>[A-Za-z0-9_-]+)\]\]|\[(?P<table>[A-Za-z0-9_-]+)\]"
    r"|(?P<key>[A-Za-z0-9_-]+)[ \t]*=[ \t]*(?P<value>.*?))[ \t]*\Z"
)
_INT = r"[+-]?(?:0|[1-9][0-9]*)"
_FLOAT = r"[+-]?(?:0|[1-9][0-9]*)(?:\.[0-9]+(?:[eE][+-]?[0-9]+)?|[eE][+-]?[0-9]+)"
_PLAIN_INT = re.compile(_INT + r"\Z")
_PLAIN_FLOAT = re.compile(_FLOAT + r"\Z")
_PLAIN_STRING = re.compile(r'"([^"\\\x00-\x1f\x7f]*)"\Z')
_PLAIN_ARRAY = re.compile(rf"\[[ \t]*((?:{_FLOAT}|{_INT})(?:[ \t]*,[ \t]*(?:{_FLOAT}|{_INT}))*)[ \t]*\]\Z")
_SPLIT_COMMA = re.compile(r"[ \t]*,[ \t]*")


def _plain_number(text: str) -> int | float | None:
    if _PLAIN_INT.match(text):
        return int(text)
    if _PLAIN_FLOAT.match(text):
        return float(text)
    return None


def _plain_value(text: str) -> Any:
    """A value of the plain subset, or None (also for any other TOML value)."""
    c = text[:1]
    if c == '"':
        m = _PLAIN_STRING.match(text)
        return m.group(1) if m else None
    if c == "[":
        m = _PLAIN_ARRAY.match(text)
        if not m:
            return None
        return [_plain_number(v) for v in _SPLIT_COMMA.split(m.group(1).strip())]
    if text == "true":
        return True
    if text == "false":
        return False
    return _plain_number(text)


def plain_toml(text: str) -> dict[str, Any] | None:
    """The TOML document ``text`` when it is written in the plain subset the loads files
    are usually written in (what ``bench/make_trusses.py`` writes), else None: then
    ``tomllib`` reads it. The subset: whole-line ``#`` comments, ``[name]`` and
    ``[[name]]`` headers with bare names, ``key = value`` with a bare key and a value
    that is a string without escapes, a decimal integer or float, true / false, or a
    one-line array of numbers. A key or table given twice, a carriage return or
    anything else in the text gives None, so tomllib decides (and reports errors)."""
    if "\r" in text:
        return None
    root: dict[str, Any] = {}
    arrays: set[str] = set()
    current = root
    for raw in text.split("\n"):
        line = raw.lstrip(" \t")
        if not line or line[0] == "#":
            if line and not _plain_comment(line):
                return None
            continue
        m = _PLAIN_LINE.match(line)
        if m is None:
            return None
        key = m.group("key")
        if key is not None:
            value = _plain_value(m.group("value"))
            if value is None or key in current or (isinstance(value, list) and None in value):
                return None
            current[key] = value
            continue
        name = m.group("aot")
        if name is not None:
            if name in root and name not in arrays:
                return None
            arrays.add(name)
            current = {}
            root.setdefault(name, []).append(current)
            continue
        name = m.group("table")
        if name in root:
            return None
        current = root[name] = {}
    return root


def _plain_comment(line: str) -> bool:
    """A comment TOML accepts: no control character but tab."""
    return _CONTROL.search(line) is None


_CONTROL = re.compile("[\x00-\x08\x0a-\x1f\x7f]")


def parse_loads(data: dict[str, Any], name: str = "loads file") -> LoadsSpec:
    """Validate an already parsed TOML document (see :func:`read_loads_file`)."""
    extra = sorted(set(data) - _TOP_KEYS)
    if extra:
        raise ConfigError(f"{name}: unknown table {extra[0]!r} (known: {', '.join(sorted(_TOP_KEYS))})")

    units = data.get("units", {})
    if not isinstance(units, dict):
        raise ConfigError(f"{name}: [units] must be a table")
    _unknown(f"{name}: [units]", units, "units")
    force_unit = check_unit_name(units.get("force", "kN"), FORCE_UNITS, f"{name}: [units] force")
    length_unit = units.get("length")
    if length_unit is not None:
        length_unit = check_unit_name(length_unit, LENGTH_UNITS, f"{name}: [units] length")

    drawn = data.get("drawn", {})
    if not isinstance(drawn, dict):
        raise ConfigError(f'{name}: [drawn] must be a table such as [drawn] loads = "add"')
    _unknown(f"{name}: [drawn]", drawn, "drawn")
    for key in ("loads", "supports"):
        if key in drawn and drawn[key] not in ("add", "ignore"):
            raise ConfigError(f'{name}: [drawn] {key} must be "add" or "ignore", got {drawn[key]!r}')

    report = _report_table(name, data.get("report", {}))

    supports = []
    for i, t in enumerate(_tables(name, data, "support"), 1):
        where = f"{name}: [[support]] #{i}"
        _unknown(where, t, "support")
        at, z = _at3(where, t)
        fix = t.get("fix", "xy")
        axes = "".join(sorted(set(fix.lower()))) if isinstance(fix, str) else ""
        if not isinstance(fix, str) or (fix.lower() != "roller" and (axes not in _AXES_TRACE or len(axes) != len(fix))):
            raise ConfigError(
                f'{where}: \'fix\' must be "roller" or must name the fixed axes: "xy", "x", "y" (for a space '
                f'truss also "xyz", "z", "xz", "yz"), got {fix!r}'
            )
        if fix.lower() != "roller":
            if "normal" in t:
                raise ConfigError(f"{where}: 'normal' is only for fix = \"roller\", not fix = {fix!r}")
            supports.append(SupportEntry(i, at, _AXES_TRACE[axes], axes=axes, z=z))
            continue
        if "normal" not in t:
            raise ConfigError(f"{where}: fix = \"roller\" needs 'normal' = [nx, ny], the direction it restrains")
        raw = t["normal"]
        nx, ny = _at(where, {"normal": raw}, "normal")
        size = math.hypot(nx, ny)
        if not (math.isfinite(size) and size > 0):
            raise ConfigError(f"{where}: 'normal' must be a non-zero [nx, ny], got {raw!r}")
        supports.append(SupportEntry(i, at, Fix.N, (nx / size, ny / size), z=z))

    loads = []
    for i, t in enumerate(_tables(name, data, "load"), 1):
        where = f"{name}: [[load]] #{i}"
        _unknown(where, t, "load")
        at, z = _at3(where, t)
        case = t.get("case", DEFAULT_CASE)
        if not isinstance(case, str) or not case.strip():
            raise ConfigError(f"{where}: 'case' must be a non-empty string, got {case!r}")
        fx = parse_force(t.get("fx", 0.0), force_unit, f"{where} fx")
        fy = parse_force(t.get("fy", 0.0), force_unit, f"{where} fy")
        fz = parse_force(t.get("fz", 0.0), force_unit, f"{where} fz")
        loads.append(LoadEntry(i, at, fx, fy, case.strip(), fz=fz, z=z))

    line_loads = []
    for kind in ("line_load", "area_load"):
        for i, t in enumerate(_tables(name, data, kind), 1):
            line_loads.append(_line_load(f"{name}: [[{kind}]] #{i}", i, kind, t))

    combos = []
    seen: set[str] = set()
    for i, t in enumerate(_tables(name, data, "combination"), 1):
        where = f"{name}: [[combination]] #{i}"
        _unknown(where, t, "combination")
        cname = t.get("name")
        if not isinstance(cname, str) or not cname.strip():
            raise ConfigError(f"{where}: 'name' must be a non-empty string")
        if cname in seen:
            raise ConfigError(f"{where}: the name {cname!r} is used twice")
        seen.add(cname)
        factors = t.get("factors")
        if not isinstance(factors, dict) or not factors:
            raise ConfigError(f"{where}: 'factors' must be a table such as {{ dead = 1.35, snow = 1.5 }}")
        pairs = []
        for case, factor in factors.items():
            if isinstance(factor, bool) or not isinstance(factor, (int, float)) or not math.isfinite(float(factor)):
                raise ConfigError(f"{where}: the factor of {case!r} must be a finite number, got {factor!r}")
            pairs.append((str(case), float(factor)))
        combos.append(CombinationEntry(i, cname.strip(), tuple(pairs)))

    sections = [_section(f"{name}: [[section]] #{i}", i, t) for i, t in enumerate(_tables(name, data, "section"), 1)]
    ratio, slender = _checks(name, data)
    sw = data.get("self_weight", {})
    if not isinstance(sw, dict):
        raise ConfigError(f'{name}: [self_weight] must be a table such as [self_weight] case = "dead-own"')
    _unknown(f"{name}: [self_weight]", sw, "self_weight")
    sw_case = sw.get("case", "self-weight")
    if not isinstance(sw_case, str) or not sw_case.strip():
        raise ConfigError(f"{name}: [self_weight] case must be a non-empty string, got {sw_case!r}")
    moving = [
        _moving(f"{name}: [[moving_load]] #{i}", i, t, force_unit)
        for i, t in enumerate(_tables(name, data, "moving_load"), 1)
    ]

    return LoadsSpec(
        name,
        force_unit,
        length_unit,
        tuple(supports),
        tuple(loads),
        tuple(combos),
        tuple(sections),
        "force" in units,
        drawn.get("loads"),
        drawn.get("supports"),
        tuple(line_loads),
        ratio,
        slender,
        sw_case.strip(),
        tuple(moving),
        report,
    )


def _positive(where: str, key: str, value: Any, table: dict[str, float], example: str) -> float:
    v = _per_unit(where, key, value, table, example)
    if not (v > 0 and math.isfinite(v)):
        raise ConfigError(f"{where}: '{key}' must be positive, got {value!r}")
    return v


def shape_properties(shape: str, dims: dict[str, float]) -> tuple[float, float]:
    """(area m2, smaller second moment of area m4) of a simple shape, dimensions in m.

    rectangle b x d (solid): A = b d, I = max(b, d) min(b, d)^3 / 12;
    round-hollow D x t: A = pi (D^2 - d^2) / 4, I = pi (D^4 - d^4) / 64 with d = D - 2t;
    square-hollow D x t (sharp corners): A = D^2 - d^2, I = (D^4 - d^4) / 12.
    (Closed forms of the second moment of area of a rectangle and an annulus.)"""
    if shape == "rectangle":
        b, d = dims["b"], dims["d"]
        lo, hi = min(b, d), max(b, d)
        return b * d, hi * lo**3 / 12
    big, t = dims["D"], dims["t"]
    inner = big - 2 * t
    if shape == "round-hollow":
        return math.pi * (big**2 - inner**2) / 4, math.pi * (big**4 - inner**4) / 64
    return big**2 - inner**2, (big**4 - inner**4) / 12


def _section(where: str, number: int, t: dict[str, Any]) -> Section:
    """One ``[[section]]``: which members (layer glob or member list), then the values."""
    _unknown(where, t, "section")
    layer = t.get("layer")
    members = t.get("members")
    if (layer is None) == (members is None):
        raise ConfigError(
            f"{where}: give either 'layer' (a glob such as \"CHORD*\") or 'members' (ids such as [\"M1\"])"
        )
    if layer is not None and (not isinstance(layer, str) or not layer):
        raise ConfigError(f"{where}: 'layer' must be a layer name or glob such as \"CHORD*\"")
    if members is not None and (
        not isinstance(members, list) or not members or not all(isinstance(m, str) and m for m in members)
    ):
        raise ConfigError(f'{where}: \'members\' must be a list of member ids such as ["M1", "M4"]')
    label = t.get("name", "")
    if not isinstance(label, str):
        raise ConfigError(f"{where}: 'name' must be a string")
    if "E" not in t:
        raise ConfigError(f"{where}: 'E' is missing")
    modulus = _positive(where, "E", t["E"], MODULUS_UNITS, '"210 GPa"')
    shape = t.get("shape")
    described = None
    inertia: float | None = None
    if shape is not None:
        if shape not in SHAPES:
            raise ConfigError(f"{where}: 'shape' must be one of {', '.join(SHAPES)}, got {shape!r}")
        if "area" in t or "I" in t or "r" in t:
            raise ConfigError(f"{where}: give either 'shape' with its dimensions or 'area' (with 'I' or 'r'), not both")
        dims = {}
        for key in SHAPES[shape]:
            if key not in t:
                raise ConfigError(f"{where}: shape {shape!r} needs '{key}' (a length such as \"100 mm\")")
            dims[key] = _positive(where, key, t[key], LENGTH_UNITS, '"100 mm"')
        if shape != "rectangle" and not 2 * dims["t"] < dims["D"]:
            raise ConfigError(f"{where}: the wall 't' = {t['t']!r} must be less than half of 'D' = {t['D']!r}")
        area, inertia = shape_properties(shape, dims)
        described = f"{shape} " + " x ".join(str(t[k]) for k in SHAPES[shape])
    else:
        for key in ("b", "d", "D", "t"):
            if key in t:
                raise ConfigError(f"{where}: '{key}' is a dimension of a 'shape'; give 'shape' too")
        if "area" not in t:
            raise ConfigError(f"{where}: 'area' is missing (or give a 'shape' with its dimensions)")
        area = _positive(where, "area", t["area"], AREA_UNITS, '"4800 mm2"')
        if "I" in t and "r" in t:
            raise ConfigError(f"{where}: give 'I' or 'r', not both")
        if "I" in t:
            inertia = _positive(where, "I", t["I"], INERTIA_UNITS, '"1.2e6 mm4"')
        elif "r" in t:
            inertia = area * _positive(where, "r", t["r"], LENGTH_UNITS, '"25 mm"') ** 2
    strength = _positive(where, "strength", t["strength"], MODULUS_UNITS, '"355 MPa"') if "strength" in t else None
    density = _positive(where, "density", t["density"], DENSITY_UNITS, '"7850 kg/m3"') if "density" in t else None
    if not all(math.isfinite(v) for v in (area, inertia or 1.0)):
        raise ConfigError(f"{where}: the section's values are too large to represent")
    return Section(
        layer, area, modulus, tuple(members or ()), inertia, strength, density, described, label.strip(), number
    )


def _checks(name: str, data: dict[str, Any]) -> tuple[float, float]:
    """``[checks]``: the utilisation ratio that flags a member and the slenderness limit."""
    checks = data.get("checks", {})
    if not isinstance(checks, dict):
        raise ConfigError(f"{name}: [checks] must be a table such as [checks] ratio = 0.9")
    _unknown(f"{name}: [checks]", checks, "checks")
    out = []
    for key, default in (("ratio", 1.0), ("slenderness", 200.0)):
        v = checks.get(key, default)
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not (math.isfinite(v) and v > 0):
            raise ConfigError(f"{name}: [checks] {key} must be a positive number, got {v!r}")
        out.append(float(v))
    return out[0], out[1]


def _moving(where: str, number: int, t: dict[str, Any], force_unit: str) -> MovingLoadEntry:
    """One ``[[moving_load]]``: the chord it travels along, axle loads and spacings."""
    _unknown(where, t, "moving_load")
    start, end = _at(where, t, "from"), _at(where, t, "to")
    if start == end:
        raise ConfigError(f"{where}: 'from' and 'to' are the same point {list(start)}")
    name = t.get("name", f"moving load #{number}")
    if not isinstance(name, str) or not name.strip():
        raise ConfigError(f"{where}: 'name' must be a non-empty string")
    raw = t.get("loads")
    if not isinstance(raw, list) or not raw:
        raise ConfigError(f'{where}: \'loads\' must be a list of axle loads such as ["40 kN", "40 kN"] (front first)')
    loads = tuple(parse_force(v, force_unit, f"{where} loads") for v in raw)
    gaps = t.get("spacing", [])
    if not isinstance(gaps, list) or len(gaps) != len(loads) - 1:
        raise ConfigError(
            f"{where}: 'spacing' must list {len(loads) - 1} distance(s) between consecutive axles, got {gaps!r}"
        )
    spacings = tuple(_positive(where, "spacing", g, LENGTH_UNITS, '"3 m"') for g in gaps)
    if not all(v > 0 for v in loads):
        raise ConfigError(f"{where}: axle loads act downward: give each as a positive force, got {raw!r}")
    return MovingLoadEntry(number, name.strip(), start, end, loads, spacings)


def check_planar(spec: LoadsSpec) -> None:
    """Refuse what only a space truss can use: a 3-D ``at``, ``fz`` or a support fixing z
    alone (a planar truss's plane holds no z; "xyz", "xz", "yz" are read by their x, y)."""
    for e in spec.supports:
        if e.z is not None or e.axes == "z":
            what = "a 3-D 'at'" if e.z is not None else 'fix = "z"'
            raise ConfigError(
                f"{spec.path}: [[support]] #{e.number}: {what} is for space trusses; this drawing is planar "
                "(give [x, y] in its plane and fix x, y or xy)"
            )
    for ld in spec.loads:
        if ld.z is not None or ld.fz:
            what = "a 3-D 'at'" if ld.z is not None else "'fz'"
            raise ConfigError(
                f"{spec.path}: [[load]] #{ld.number}: {what} is for space trusses; this drawing is planar "
                "(give [x, y] and fx, fy in its plane)"
            )


def _report_table(name: str, table: Any) -> tuple[tuple[str, str], ...]:
    """The ``[report]`` table: each key a string (the date may also be a TOML date)."""
    if not isinstance(table, dict):
        raise ConfigError(f'{name}: [report] must be a table such as [report] project = "Shed 2"')
    _unknown(f"{name}: [report]", table, "report")
    out = []
    for key, value in table.items():
        if key == "date" and isinstance(value, datetime.date) and not isinstance(value, datetime.datetime):
            value = value.isoformat()
        if not isinstance(value, str):
            raise ConfigError(f'{name}: [report] {key} must be a string such as "A", got {value!r}')
        if len(value) > 200:
            raise ConfigError(f"{name}: [report] {key} is {len(value)} characters long; at most 200 are allowed")
        out.append((key, value))
    return tuple(out)


def check_combinations(spec: LoadsSpec, case_names: set[str]) -> None:
    """Every case a combination names must exist (drawn or in the file)."""
    for c in spec.combinations:
        if c.name in case_names:
            raise ConfigError(f"{spec.path}: [[combination]] #{c.number}: {c.name!r} is also the name of a load case")
        for case, _ in c.factors:
            if case not in case_names:
                known = ", ".join(sorted(case_names)) or "none"
                raise ConfigError(
                    f"{spec.path}: [[combination]] #{c.number} {c.name!r}: unknown load case {case!r} (cases: {known})"
                )
