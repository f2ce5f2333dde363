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
import stat
import tomllib
from dataclasses import dataclass
from typing import Any

from .errors import ConfigError
from .model import Fix, Section
from .units import (
    AREA_UNITS,
    FORCE_UNITS,
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
    """``fix`` "roller" in the file is ``Fix.N`` with its unit ``normal`` (None otherwise)."""

    number: int
    at: tuple[float, float]
    fix: Fix
    normal: tuple[float, float] | None = None


@dataclass(frozen=True)
class LoadEntry:
    """fx, fy in the file's force unit."""

    number: int
    at: tuple[float, float]
    fx: float
    fy: float
    case: str


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
    #: the ``[report]`` table: title-block fields (titleblock.py), in file order
    report: tuple[tuple[str, str], ...] = ()


_TOP_KEYS = {"units", "drawn", "report", "support", "load", "line_load", "area_load", "combination", "section"}
_KEYS = {
    "units": {"force", "length"},
    "drawn": {"loads", "supports"},
    "report": {"project", "drawing_no", "revision", "checked_by", "date"},
    "support": {"at", "fix", "normal"},
    "load": {"at", "fx", "fy", "case"},
    "line_load": {"from", "to", "w", "case", "measured", "direction"},
    "area_load": {"from", "to", "q", "spacing", "case", "measured", "direction"},
    "combination": {"name", "factors"},
    "section": {"layer", "area", "E"},
}


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
        data = tomllib.loads(raw.decode("utf-8"))
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
        at = _at(where, t)
        fix = t.get("fix", "xy")
        if not isinstance(fix, str) or fix.lower() not in ("xy", "x", "y", "roller"):
            raise ConfigError(f'{where}: \'fix\' must be "xy", "x", "y" or "roller", got {fix!r}')
        if fix.lower() != "roller":
            if "normal" in t:
                raise ConfigError(f"{where}: 'normal' is only for fix = \"roller\", not fix = {fix!r}")
            supports.append(SupportEntry(i, at, Fix(fix.lower())))
            continue
        if "normal" not in t:
            raise ConfigError(f"{where}: fix = \"roller\" needs 'normal' = [nx, ny], the direction it restrains")
        raw = t["normal"]
        nx, ny = _at(where, {"normal": raw}, "normal")
        size = math.hypot(nx, ny)
        if not (math.isfinite(size) and size > 0):
            raise ConfigError(f"{where}: 'normal' must be a non-zero [nx, ny], got {raw!r}")
        supports.append(SupportEntry(i, at, Fix.N, (nx / size, ny / size)))

    loads = []
    for i, t in enumerate(_tables(name, data, "load"), 1):
        where = f"{name}: [[load]] #{i}"
        _unknown(where, t, "load")
        at = _at(where, t)
        case = t.get("case", DEFAULT_CASE)
        if not isinstance(case, str) or not case.strip():
            raise ConfigError(f"{where}: 'case' must be a non-empty string, got {case!r}")
        fx = parse_force(t.get("fx", 0.0), force_unit, f"{where} fx")
        fy = parse_force(t.get("fy", 0.0), force_unit, f"{where} fy")
        loads.append(LoadEntry(i, at, fx, fy, case.strip()))

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

    sections = []
    for i, t in enumerate(_tables(name, data, "section"), 1):
        where = f"{name}: [[section]] #{i}"
        _unknown(where, t, "section")
        for key in ("layer", "area", "E"):
            if key not in t:
                raise ConfigError(f"{where}: '{key}' is missing")
        layer = t["layer"]
        if not isinstance(layer, str) or not layer:
            raise ConfigError(f"{where}: 'layer' must be a layer name or glob such as \"CHORD*\"")
        area = parse_si(t["area"], AREA_UNITS, f"{where} area")
        modulus = parse_si(t["E"], MODULUS_UNITS, f"{where} E")
        if area <= 0 or modulus <= 0:
            raise ConfigError(f"{where}: area and E must be positive")
        sections.append(Section(layer, area, modulus))

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
        report,
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
