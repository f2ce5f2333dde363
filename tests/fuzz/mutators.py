"""Seed drawings, structural DXF mutators and the guarded runner for hostile-input tests.

Glossary:
    seed       a small valid drawing (ASCII DXF text written by ezdxf in memory, or binary
               DXF) of our own scenario: a four-joint gable frame with a block reference.
    pair       one DXF group-code/value pair (two text lines), kept as raw bytes so that
               mutations can put non-UTF-8 bytes anywhere.
    mutator    a function ``(pairs, rng) -> pairs`` (structural) or ``(data, rng) -> data``
               (byte level); all randomness comes from ``rng`` (a ``random.Random`` or
               hypothesis' derandomised equivalent), so an input is reproducible from its seed.
    outcome    what one run of ``dxftruss.cli.main`` did with one input: exit code, stderr,
               the JSON report, and any guarantee it broke (``problems``).

Used by tests/test_fuzz.py (hypothesis, bounded) and tests/fuzz/fuzz_long.py (long runs).
"""

from __future__ import annotations

import contextlib
import faulthandler
import io
import json
import os
import random
import re
import signal
import sys
import time
import traceback
import warnings
from collections.abc import Callable
from dataclasses import dataclass, field
from functools import cache
from pathlib import Path

Pairs = list[tuple[bytes, bytes]]

SCHEMA = "dxftruss-report/1"

# ---------------------------------------------------------------------------------------
# seeds

#: the seed frame (drawing units m), a scenario of our own:
#:
#:          J3 (4,3)
#:         /|\
#:        / | \          J3-J1 drawn inside block BAY (which inserts block WEB)
#:       /  |  \
#:  J0 (0,0)-J1-(8,0) J2     bottom chord one polyline; pin at J0, roller at J2
#:
#: m = 5, r = 3, j = 4: m + r = 2j, determinate (Maxwell's rule, closed-form count).
SEED_NAMES = ("r12", "r2013", "r12-entities-only", "r2013-binary")


def _build_doc(version: str):  # type: ignore[no-untyped-def]
    import ezdxf

    doc = ezdxf.new(version) if version == "R12" else ezdxf.new(version, units=6)
    msp = doc.modelspace()
    web = doc.blocks.new("WEB")
    web.add_line((0, 0), (0, 3))  # layer 0: takes the INSERT's layer
    bay = doc.blocks.new("BAY")
    bay.add_blockref("WEB", (0, 0))
    tick = doc.blocks.new("TICK")
    tick.add_text("x", dxfattribs={"layer": "NOTES", "height": 0.1})
    if version == "R12":
        msp.add_polyline2d([(0, 0), (4, 0), (8, 0)], dxfattribs={"layer": "CHORD"})
    else:
        msp.add_lwpolyline([(0, 0), (4, 0), (8, 0)], dxfattribs={"layer": "CHORD"})
    msp.add_line((0, 0), (4, 3), dxfattribs={"layer": "RAFTER"})
    msp.add_line((4, 3), (8, 0), dxfattribs={"layer": "RAFTER"})
    msp.add_blockref("BAY", (4, 0), dxfattribs={"layer": "WEB"})
    mi = msp.add_blockref("TICK", (0, -1), dxfattribs={"layer": "NOTES"})
    mi.grid(size=(2, 2), spacing=(0.5, 0.5))
    msp.add_point((0, 0), dxfattribs={"layer": "SUPPORT-XY"})
    msp.add_point((8, 0), dxfattribs={"layer": "SUPPORT-Y"})
    msp.add_line((4, 4.5), (4, 3), dxfattribs={"layer": "LOAD-snow"})
    msp.add_text("6 kN", dxfattribs={"layer": "LOAD-snow", "height": 0.2}).set_placement((4.1, 4.5))
    if version != "R12":
        msp.add_mtext("9 kN", dxfattribs={"layer": "LOAD-wind", "char_height": 0.2}).set_location((-1.5, 0.1))
        msp.add_line((-1, 0), (0, 0), dxfattribs={"layer": "LOAD-wind"})
    return doc


def _ascii(doc) -> bytes:  # type: ignore[no-untyped-def]
    s = io.StringIO()
    doc.write(s)
    return s.getvalue().encode("ascii")


@cache
def seed(name: str) -> bytes:
    """The seed drawing ``name`` (one of SEED_NAMES) as file bytes."""
    if name == "r12":
        return _ascii(_build_doc("R12"))
    if name == "r2013":
        return _ascii(_build_doc("R2013"))
    if name == "r12-entities-only":  # the minimal DXF many programs write: BLOCKS + ENTITIES
        pairs = parse_pairs(seed("r12"))
        keep: Pairs = []
        section: Pairs = []
        name_ = b""
        for i, (c, v) in enumerate(pairs):
            if c.strip() == b"0" and v == b"SECTION":
                section = []
                name_ = pairs[i + 1][1] if i + 1 < len(pairs) else b""
            section.append((c, v))
            if c.strip() == b"0" and v == b"ENDSEC":
                if name_ in (b"BLOCKS", b"ENTITIES"):
                    keep += section
                section = []
        keep.append((b"  0", b"EOF"))
        return serialize(keep)
    if name == "r2013-binary":
        import tempfile

        with tempfile.TemporaryDirectory() as d:
            p = Path(d) / "b.dxf"
            _build_doc("R2013").saveas(p, fmt="bin")
            return p.read_bytes()
    raise KeyError(name)


# ---------------------------------------------------------------------------------------
# pairs


def parse_pairs(data: bytes) -> Pairs:
    lines = data.split(b"\n")
    if lines and lines[-1] == b"":
        lines.pop()
    lines = [ln[:-1] if ln.endswith(b"\r") else ln for ln in lines]
    if len(lines) % 2:
        lines.append(b"")
    return list(zip(lines[0::2], lines[1::2], strict=True))


def serialize(pairs: Pairs) -> bytes:
    return b"".join(c + b"\n" + v + b"\n" for c, v in pairs)


def _code(c: bytes) -> int | None:
    try:
        return int(c.strip())
    except ValueError:
        return None


def _is_float_code(k: int) -> bool:
    return 10 <= k <= 59 or 110 <= k <= 149 or 210 <= k <= 239 or 1010 <= k <= 1059


def _is_int_code(k: int) -> bool:
    return (
        60 <= k <= 99 or 170 <= k <= 179 or 270 <= k <= 289 or 370 <= k <= 389 or 400 <= k <= 409 or 1060 <= k <= 1071
    )


def _entity_zone(pairs: Pairs) -> tuple[int, int]:
    """Index range of the BLOCKS and ENTITIES sections (where the geometry is)."""
    start, end = None, None
    for i, (c, v) in enumerate(pairs):
        if c.strip() == b"2" and v in (b"BLOCKS", b"ENTITIES") and start is None:
            start = i
        if c.strip() == b"2" and v == b"ENTITIES":
            for k in range(i, len(pairs)):
                if pairs[k][1] == b"ENDSEC":
                    end = k + 1
                    break
    if start is None:
        return 0, len(pairs)
    return start, end if end is not None else len(pairs)


def _pick(pairs: Pairs, rng: random.Random, pred: Callable[[int, bytes, bytes], bool] | None = None) -> int | None:
    """A random pair index, 3 times in 4 inside BLOCKS/ENTITIES, optionally filtered."""
    if not pairs:
        return None
    lo, hi = _entity_zone(pairs)
    idx = range(lo, hi) if rng.random() < 0.75 and hi > lo else range(len(pairs))
    if pred is None:
        return rng.choice(idx)
    cand = [i for i in idx if pred(i, *pairs[i])]
    if not cand:
        cand = [i for i in range(len(pairs)) if pred(i, *pairs[i])]
    return rng.choice(cand) if cand else None


GARBAGE_CODES = [b"", b"abc", b"-1", b"1000000", b"99999999999999999999999", b" 10 ", b"1e3", b"0x10", b"\x00", b"10.5"]
SPECIAL_NUMBERS = [
    b"nan",
    b"NaN",
    b"inf",
    b"-inf",
    b"Infinity",
    b"1e308",
    b"-1e308",
    b"1e400",
    b"-1e400",
    b"1e-320",
    b"1e11",
    b"1e-9",
    b"1e12",
    b"-0",
    b"0",
    b"1.7976931348623157e308",
    b"4.9e-324",
]
HUGE_INTS = [b"2147483647", b"-2147483648", b"99999999999", b"-1", b"0", b"1e9", b"3.5", b"32767", b"65535"]
MARKUP = [b"<b>", b"[bold]red[/bold]", b"&amp;&", b'<img src="x"/>', b"</para>", b"[/]", b"<font color=red>"]
NON_UTF8 = [b"\xff\xfe", b"\xc3\x28", b"\x80", b"\xed\xa0\x80", b"\xf4\x90\x80\x80", b"\xc0\xaf"]
#: terminal control in names: clear screen, colour, cursor home, CSI as one C1 byte (UTF-8),
#: bell, backspace, a bidi override and isolate, a carriage return that would overwrite
CONTROL = [
    b"\x1b[2J",
    b"\x1b[31m",
    b"\x1b[H",
    "\u009b2J".encode(),
    b"\x07",
    b"\x08\x08",
    "\u202e".encode(),
    "\u2066".encode(),
    b"\r",
]
ENTITY_TYPES = [
    b"LINE",
    b"INSERT",
    b"POLYLINE",
    b"VERTEX",
    b"SEQEND",
    b"BLOCK",
    b"ENDBLK",
    b"SECTION",
    b"ENDSEC",
    b"EOF",
    b"LWPOLYLINE",
    b"MTEXT",
    b"TEXT",
    b"HATCH",
    b"DIMENSION",
    b"ARC",
    b"CIRCLE",
    b"POINT",
    b"SPLINE",
    b"FOO",
]


def garbage_value(rng: random.Random) -> bytes:
    choices: list[bytes] = [
        b"",
        b"x",
        b"-",
        b".",
        b"e",
        b"1e",
        b"--1",
        b"0x1F",
        b" ",
        b"\t",
        b"1,5",
        b"12,5 kN",
        b"9**9**9 N",
        b"\x00",
        b"A" * rng.choice([300, 5000, 100_000]),
        b"%%c",
        b"\\P",
        b"{\\fArial;}",
    ]
    choices += SPECIAL_NUMBERS + HUGE_INTS + MARKUP + NON_UTF8
    return rng.choice(choices)


# -- structural mutators (pairs -> pairs) ------------------------------------------------


def m_drop(p: Pairs, rng: random.Random) -> Pairs:
    i = _pick(p, rng)
    if i is None:
        return p
    return p[:i] + p[i + rng.randint(1, 3) :]


def m_duplicate(p: Pairs, rng: random.Random) -> Pairs:
    i = _pick(p, rng)
    if i is None:
        return p
    n = rng.randint(1, 12)
    return p[: i + n] + p[i : i + n] + p[i + n :]


def m_swap(p: Pairs, rng: random.Random) -> Pairs:
    i, j = _pick(p, rng), _pick(p, rng)
    if i is None or j is None:
        return p
    q = list(p)
    q[i], q[j] = q[j], q[i]
    return q


def m_move(p: Pairs, rng: random.Random) -> Pairs:
    i, j = _pick(p, rng), _pick(p, rng)
    if i is None or j is None:
        return p
    n = rng.randint(1, 20)
    chunk = p[i : i + n]
    rest = p[:i] + p[i + n :]
    j = min(j, len(rest))
    return rest[:j] + chunk + rest[j:]


def _replace_at(p: Pairs, i: int | None, code: bytes | None = None, value: bytes | None = None) -> Pairs:
    """``p`` with the code and/or value of pair ``i`` replaced (``p`` itself when i is None)."""
    if i is None:
        return p
    q = list(p)
    c, v = q[i]
    q[i] = (c if code is None else code, v if value is None else value)
    return q


def m_corrupt_code(p: Pairs, rng: random.Random) -> Pairs:
    i = _pick(p, rng)
    return p if i is None else _replace_at(p, i, code=rng.choice(GARBAGE_CODES))


def m_garbage_value(p: Pairs, rng: random.Random) -> Pairs:
    i = _pick(p, rng)
    return p if i is None else _replace_at(p, i, value=garbage_value(rng))


def m_special_number(p: Pairs, rng: random.Random) -> Pairs:
    i = _pick(p, rng, lambda _, c, v: (k := _code(c)) is not None and _is_float_code(k))
    return p if i is None else _replace_at(p, i, value=rng.choice(SPECIAL_NUMBERS))


def m_huge_int(p: Pairs, rng: random.Random) -> Pairs:
    i = _pick(p, rng, lambda _, c, v: (k := _code(c)) is not None and _is_int_code(k))
    return p if i is None else _replace_at(p, i, value=rng.choice(HUGE_INTS))


def _entity_spans(p: Pairs, kind: bytes) -> list[tuple[int, int]]:
    """(start, end) index ranges of every entity of type ``kind`` (end exclusive)."""
    out = []
    for i, (c, v) in enumerate(p):
        if c.strip() == b"0" and v == kind:
            j = i + 1
            while j < len(p) and p[j][0].strip() != b"0":
                j += 1
            out.append((i, j))
    return out


def m_minsert_counts(p: Pairs, rng: random.Random) -> Pairs:
    """Give an INSERT absurd MINSERT row/column counts (70 columns, 71 rows) and spacings."""
    spans = _entity_spans(p, b"INSERT")
    if not spans:
        return p
    a, b = rng.choice(spans)
    counts = [b"0", b"-3", b"1", b"2", b"1000", b"65535", b"32767", b"100000", b"2147483647", b"-2147483648", b"1e9"]
    values = {
        b" 70": rng.choice(counts),
        b" 71": rng.choice(counts),
        b" 44": rng.choice([b"0.0", b"1.0", b"1e-300", b"nan", b"1e308", b"-2.5"]),
        b" 45": rng.choice([b"0.0", b"1.0", b"1e-300", b"inf", b"1e308", b"-2.5"]),
    }
    ent = [pair for pair in p[a:b] if pair[0] not in values]
    ent += list(values.items())
    return p[:a] + ent + p[b:]


def _blocks(p: Pairs) -> list[tuple[bytes, int, int]]:
    """(name, index of BLOCK, index of ENDBLK) for every block definition."""
    out = []
    i = 0
    while i < len(p):
        if p[i][0].strip() == b"0" and p[i][1] == b"BLOCK":
            name = b""
            j = i + 1
            while j < len(p) and not (p[j][0].strip() == b"0" and p[j][1] == b"ENDBLK"):
                if p[j][0].strip() == b"2" and not name:
                    name = p[j][1]
                j += 1
            if j < len(p):
                out.append((name, i, j))
            i = j
        i += 1
    return out


def _is_r12(p: Pairs) -> bool:
    for i, (_c, v) in enumerate(p[:40]):
        if v == b"$ACADVER" and i + 1 < len(p):
            return p[i + 1][1] == b"AC1009"
    return not any(v == b"AcDbEntity" for _, v in p[:2000])


def _insert_entity(name: bytes, r12: bool, at: bytes = b"0.0") -> Pairs:
    if r12:
        return [(b"  0", b"INSERT"), (b"  8", b"0"), (b"  2", name), (b" 10", at), (b" 20", b"0.0"), (b" 30", b"0.0")]
    return [
        (b"  0", b"INSERT"),
        (b"100", b"AcDbEntity"),
        (b"  8", b"0"),
        (b"100", b"AcDbBlockReference"),
        (b"  2", name),
        (b" 10", at),
        (b" 20", b"0.0"),
        (b" 30", b"0.0"),
    ]


def m_nest_blocks(p: Pairs, rng: random.Random) -> Pairs:
    """Make a block reference itself, its parent or a missing block (cycles, dangling)."""
    blocks = [b for b in _blocks(p) if not b[0].startswith(b"*")]
    if not blocks:
        return p
    name, _start, end = rng.choice(blocks)
    parents = [nm for nm, s, e in blocks if any(v == name for c, v in p[s:e] if c.strip() == b"2") and nm != name]
    target = rng.choice([name, name, *(parents or [name]), b"NO-SUCH-BLOCK", b"", b"*Model_Space", name.lower()])
    if rng.random() < 0.5:  # rename an existing INSERT's block name
        spans = [(a, b) for a, b in _entity_spans(p, b"INSERT")]
        if spans:
            a, b = rng.choice(spans)
            q = list(p)
            for k in range(a, b):
                if q[k][0].strip() == b"2":
                    q[k] = (q[k][0], target)
                    break
            return q
    ins = _insert_entity(target, _is_r12(p), rng.choice([b"0.0", b"1.5", b"-1e6"]))
    return p[:end] + ins + p[end:]


def m_empty_layer(p: Pairs, rng: random.Random) -> Pairs:
    q = list(p)
    idx = [i for i, (c, _) in enumerate(q) if c.strip() == b"8"]
    if not idx:
        return p
    chosen = idx if rng.random() < 0.3 else [rng.choice(idx)]
    for i in chosen:
        q[i] = (q[i][0], rng.choice([b"", b" ", b"\t"]))
    return q


def m_weird_string(p: Pairs, rng: random.Random) -> Pairs:
    """Long strings, markup, terminal control or non-UTF-8 bytes in a layer name, block
    name or text."""
    i = _pick(p, rng, lambda _, c, v: c.strip() in (b"1", b"2", b"3", b"7", b"8"))
    if i is None:
        return p
    kind = rng.randrange(4)
    if kind == 0:
        new = b"L" * rng.choice([256, 2049, 70_000])
    elif kind == 1:
        new = p[i][1] + rng.choice(MARKUP)
    elif kind == 3:
        new = p[i][1] + rng.choice(CONTROL)
    else:
        v = p[i][1]
        k = rng.randint(0, len(v))
        new = v[:k] + rng.choice(NON_UTF8) + v[k:]
    q = list(p)
    q[i] = (q[i][0], new)
    return q


def m_entity_type(p: Pairs, rng: random.Random) -> Pairs:
    i = _pick(p, rng, lambda _, c, v: c.strip() == b"0")
    if i is None:
        return p
    q = list(p)
    q[i] = (q[i][0], rng.choice(ENTITY_TYPES))
    return q


def m_header_units(p: Pairs, rng: random.Random) -> Pairs:
    for i, (_c, v) in enumerate(p):
        if v == b"$INSUNITS" and i + 1 < len(p):
            q = list(p)
            q[i + 1] = (q[i + 1][0], rng.choice([*HUGE_INTS, b"x", b"", b"3", b"21", b"8"]))
            return q
    return p


STRUCTURAL: dict[str, Callable[[Pairs, random.Random], Pairs]] = {
    "drop": m_drop,
    "duplicate": m_duplicate,
    "swap": m_swap,
    "move": m_move,
    "corrupt-code": m_corrupt_code,
    "garbage-value": m_garbage_value,
    "special-number": m_special_number,
    "huge-int": m_huge_int,
    "minsert-counts": m_minsert_counts,
    "nest-blocks": m_nest_blocks,
    "empty-layer": m_empty_layer,
    "weird-string": m_weird_string,
    "entity-type": m_entity_type,
    "header-units": m_header_units,
}

# -- byte mutators (bytes -> bytes) --------------------------------------------------------

_TAIL = b"  0\nENDSEC\n  0\nEOF\n"


def b_truncate(d: bytes, rng: random.Random) -> bytes:
    if not d:
        return d
    k = rng.randrange(len(d))
    cut = d[:k]
    mode = rng.randrange(3)
    if mode == 1:  # cut at a line end, then close the file: what the recovery reader salvages
        nl = cut.rfind(b"\n")
        cut = cut[: nl + 1] + _TAIL
    elif mode == 2:
        cut = cut + b"\n" + _TAIL
    return cut


def b_insert_bytes(d: bytes, rng: random.Random) -> bytes:
    k = rng.randint(0, len(d))
    junk = rng.choice([*NON_UTF8, b"\x00" * 8, b"\r", b"\n", b"\x1a", bytes(rng.randrange(256) for _ in range(16))])
    return d[:k] + junk + d[k:]


def b_flip(d: bytes, rng: random.Random) -> bytes:
    if not d:
        return d
    b = bytearray(d)
    for _ in range(rng.randint(1, 8)):
        b[rng.randrange(len(b))] = rng.randrange(256)
    return bytes(b)


def b_crlf(d: bytes, rng: random.Random) -> bytes:
    return d.replace(b"\n", b"\r\n") if rng.random() < 0.5 else d.replace(b"\n", b"\r")


def b_strip_eof(d: bytes, rng: random.Random) -> bytes:
    k = d.rfind(b"EOF")
    return d[: max(k - 4, 0)] if k >= 0 else d


BYTES: dict[str, Callable[[bytes, random.Random], bytes]] = {
    "truncate": b_truncate,
    "insert-bytes": b_insert_bytes,
    "flip": b_flip,
    "crlf": b_crlf,
    "strip-eof": b_strip_eof,
}


def mutate(data: bytes, rng: random.Random, *, max_ops: int = 3, ascii_dxf: bool = True) -> tuple[bytes, list[str]]:
    """Apply 1..max_ops random mutations; returns the new bytes and the op names used."""
    n = rng.randint(1, max_ops)
    ops: list[str] = []
    pairs = parse_pairs(data) if ascii_dxf else None
    byte_ops: list[str] = []
    for _ in range(n):
        if pairs is not None and rng.random() < 0.8:
            name = rng.choice(sorted(STRUCTURAL))
            pairs = STRUCTURAL[name](pairs, rng)
            ops.append(name)
        else:
            byte_ops.append(rng.choice(sorted(BYTES)))
    out = serialize(pairs) if pairs is not None else data
    for name in byte_ops:
        out = BYTES[name](out, rng)
        ops.append(name)
    return out, ops


def random_input(rng: random.Random, *, max_ops: int = 3) -> tuple[bytes, str, list[str]]:
    """(file bytes, seed name, op names) for one fuzz input."""
    name = rng.choice(SEED_NAMES)
    data, ops = mutate(seed(name), rng, max_ops=max_ops, ascii_dxf=not name.endswith("binary"))
    return data, name, ops


# ---------------------------------------------------------------------------------------
# loads files

#: a valid loads file for the seed frame: joints J0 (0,0), J1 (4,0), J2 (8,0), J3 (4,3)
VALID_LOADS: list[tuple[str, dict[str, str]]] = [
    ("units", {"force": '"kN"'}),
    ("support", {"at": "[0.0, 0.0]", "fix": '"xy"'}),
    ("load", {"at": "[4.0, 3.0]", "fy": "-10.0", "case": '"dead"'}),
    ("load", {"at": "[4.0, 0.0]", "fx": '"2.5 kN"', "fy": '"-1200 N"', "case": '"dead"'}),
    ("combination", {"name": '"ULS-1"', "factors": "{ dead = 1.35, snow = 1.5 }"}),
    ("section", {"layer": '"RAFTER"', "area": '"4800 mm2"', "E": '"210 GPa"'}),
]


def toml_text(tables: list[tuple[str, dict[str, str]]]) -> str:
    out = []
    for kind, kv in tables:
        out.append(f"[{kind}]" if kind == "units" else f"[[{kind}]]")
        out += [f"{k} = {v}" for k, v in kv.items()]
        out.append("")
    return "\n".join(out)


BAD_FORCE_STRINGS = [
    '"12,5 kN"',
    '"9**9**9 N"',
    '"12.5 kn"',
    '"12.5 KN"',
    '"3\'"',
    '"kN"',
    '"(1+2) kN"',
    '"500 lb"',
    '"5 t"',
    '"1e400 kN"',
    '""',
    '"nan kN"',
    '"inf N"',
    '"12.5 kN/m"',
    '"2**10 N"',
    '"1_000 N"',
    '"12.5 kN kN"',
    '"\u221212 kN"',
]


def _entry(tables: list[tuple[str, dict[str, str]]], kind: str, rng: random.Random) -> dict[str, str]:
    idx = [i for i, (k, _) in enumerate(tables) if k == kind]
    return tables[rng.choice(idx)][1]


def bad_loads(rng: random.Random) -> tuple[bytes, str]:
    """A loads file with one guaranteed mistake (plus harmless noise); (bytes, what)."""
    tables = [(k, dict(v)) for k, v in VALID_LOADS]
    # harmless noise first: reorder same-kind entries, extra valid loads, numbers
    if rng.random() < 0.5:
        tables.append(("load", {"at": "[8.0, 0.0]", "fy": str(-rng.randint(1, 50)), "case": '"snow"'}))
    else:
        tables.append(("load", {"at": "[4.0, 3.0]", "fx": '"1 kN"', "case": '"snow"'}))
    if rng.random() < 0.3:
        tables.append(("support", {"at": "[8.0, 0.0]", "fix": '"y"'}))
    kind = rng.randrange(12)
    what = ""
    if kind == 0:
        tables.append((rng.choice(["extras", "loads", "Units", "supports"]), {"x": "1"}))
        what = "unknown table"
    elif kind == 1:
        e = _entry(tables, rng.choice(["support", "load", "combination", "section", "units"]), rng)
        e[rng.choice(["colour", "At", "fz", "factor", "unit", "Case"])] = "1"
        what = "unknown key"
    elif kind == 2:
        k = rng.choice(["support", "load"])
        e = _entry(tables, k, rng)
        e["at"] = rng.choice(['"0,0"', "[0.0]", "[1.0, 2.0, 3.0]", "[true, 0.0]", '["0", "0"]', "0.0", "{x = 0}", "[]"])
        what = "wrong type of at"
    elif kind == 3:
        k = rng.choice(["support", "load", "combination"])
        e = _entry(tables, k, rng)
        if k == "support":
            e["fix"] = rng.choice(["3", '"z"', '"XYZ"', "true", '""', '["x"]'])
        elif k == "load":
            e[rng.choice(["fy", "fx", "case"])] = rng.choice(["[1]", "true", "{ v = 1 }", '""', '"  "'])
        else:
            e[rng.choice(["name", "factors"])] = rng.choice(["3", '""', "1.5", "[1, 2]", "true"])
        what = "wrong type"
    elif kind == 4:
        e = _entry(tables, "load", rng)
        e[rng.choice(["fx", "fy"])] = rng.choice(BAD_FORCE_STRINGS)
        what = "bad force string"
    elif kind == 5:
        choice = rng.randrange(4)
        if choice == 0:
            _entry(tables, "load", rng)[rng.choice(["fx", "fy"])] = rng.choice(["nan", "inf", "-inf", "+nan"])
        elif choice == 1:
            _entry(tables, rng.choice(["load", "support"]), rng)["at"] = rng.choice(
                ["[nan, 0.0]", "[0.0, inf]", "[-inf, -inf]"]
            )
        elif choice == 2:
            _entry(tables, "combination", rng)["factors"] = rng.choice(["{ dead = nan }", "{ dead = inf }"])
        else:
            _entry(tables, "load", rng)["fy"] = "1e400"  # TOML reads it as inf
        what = "non-finite number"
    elif kind == 6:
        _entry(tables, rng.choice(["support", "load"]), rng).pop("at")
        what = "missing at"
    elif kind == 7:
        _entry(tables, rng.choice(["support", "load"]), rng)["at"] = rng.choice(
            ["[1e6, 1e6]", "[4.0, 300.0]", "[1e300, -1e300]", "[-50.0, 0.0]", "[4.0, 3.5]"]
        )
        what = "point far from joints"
    elif kind == 8:
        _entry(tables, "combination", rng)["factors"] = rng.choice(
            ["{ nosuch = 1.2 }", "{ dead = 1.35, Dead = 1.0 }", '{ "" = 1.0 }', "{}", '{ dead = "1.5" }']
        )
        what = "bad combination"
    elif kind == 9:
        bad_units = [
            {"force": '"kn"'},
            {"length": '"furlong"'},
            {"force": "5"},
            {"force": '"kip/ft"'},
            {"force": '"kN"', "length": '"M"'},
            {"force": '"lb"'},
        ]
        tables[0] = ("units", rng.choice(bad_units))
        what = "bad unit"
    elif kind == 10:
        e = _entry(tables, "section", rng)
        choice = rng.randrange(5)
        if choice == 0:
            e["area"] = rng.choice(['"-5 mm2"', '"0 mm2"', '"4800"', "4800", '"4800 mm"'])
        elif choice == 1:
            e["E"] = rng.choice(['"210"', '"210 GPA"', '"0 GPa"', "210e9", '"nan GPa"'])
        elif choice == 2:
            e["layer"] = rng.choice(['""', "5", '["A"]'])
        else:
            e.pop(rng.choice(["layer", "area", "E"]))
        what = "bad section"
    else:
        tables.append(("combination", {"name": rng.choice(['"ULS-1"', '"dead"']), "factors": "{ dead = 1.0 }"}))
        what = "duplicate combination or combination named like a case"
    text = toml_text(tables).encode("utf-8")
    if rng.random() < 0.2:  # syntax damage on top: still an error in the file
        k = rng.randrange(4)
        damaged = [
            text + b"\nat = [1.0, \n",  # unclosed array
            text + b"\n\xff\xfe bad\n",  # not UTF-8
            text[: len(text) // 2] + b"[[",  # cut off
            text + b"\n[units]\n",  # a table declared twice
        ]
        text = damaged[k]
        what += " + syntax"
    return text, what


# ---------------------------------------------------------------------------------------
# running one input with all guarantees checked


class Hang(BaseException):
    """Raised by the alarm; a BaseException so that ``except Exception`` cannot swallow it."""


@dataclass
class Outcome:
    code: int | None
    stdout: str
    stderr: str
    report: dict | None
    seconds: float
    problems: list[str] = field(default_factory=list)
    trace: str = ""
    warnings: list[str] = field(default_factory=list)

    @property
    def ok(self) -> bool:
        return not self.problems


def _strict_json(text: str) -> dict:
    def refuse(token: str) -> float:
        raise ValueError(f"non-standard JSON number {token}")

    return json.loads(text, parse_constant=refuse)


@contextlib.contextmanager
def alarm(seconds: int):  # type: ignore[no-untyped-def]
    """Turn a run longer than ``seconds`` into :class:`Hang` (main thread, POSIX only).

    A hang inside C code that never returns to Python is caught by faulthandler, which
    prints every thread's traceback and ends the process after twice the time.
    """
    fired = []

    def handler(signum, frame):  # type: ignore[no-untyped-def]
        fired.append(True)
        raise Hang(f"no result after {seconds} s")

    old = signal.signal(signal.SIGALRM, handler)
    signal.alarm(seconds)
    watchdog = True
    try:
        faulthandler.dump_traceback_later(2 * seconds + 5, exit=True, file=sys.__stderr__)
    except (AttributeError, ValueError, OSError, io.UnsupportedOperation):  # no real stderr
        watchdog = False
    try:
        yield fired
    finally:
        signal.alarm(0)
        if watchdog:
            faulthandler.cancel_dump_traceback_later()
        signal.signal(signal.SIGALRM, old)


@contextlib.contextmanager
def memory_cap(extra_bytes: int | None):  # type: ignore[no-untyped-def]
    """Limit the address space to the current size plus ``extra_bytes`` while running, so
    a memory bomb becomes a MemoryError instead of swapping the machine (Linux only)."""
    try:
        import resource
    except ImportError:  # pragma: no cover - not POSIX
        yield
        return
    if extra_bytes is None:
        yield
        return
    soft, hard = resource.getrlimit(resource.RLIMIT_AS)
    try:
        with open("/proc/self/statm") as fh:
            current = int(fh.read().split()[0]) * os.sysconf("SC_PAGE_SIZE")
    except (OSError, ValueError):
        yield
        return
    cap = current + extra_bytes
    if hard != resource.RLIM_INFINITY:
        cap = min(cap, hard)
    resource.setrlimit(resource.RLIMIT_AS, (cap, hard))
    try:
        yield
    finally:
        resource.setrlimit(resource.RLIMIT_AS, (soft, hard))


def raw_terminal_control(text: str) -> list[str]:
    """Characters in printed text that act on a terminal instead of being shown (a line
    break is the only one allowed): C0 and C1 controls, DEL, bidi overrides and isolates."""
    return [
        c
        for c in text
        if (ord(c) < 0x20 and c != "\n")
        or 0x7F <= ord(c) < 0xA0
        or 0x202A <= ord(c) <= 0x202E
        or 0x2066 <= ord(c) <= 0x2069
    ]


def run_main(
    drawing: Path,
    *,
    loads: Path | None = None,
    extra: list[str] | None = None,
    timeout: int = 30,
    quiet: bool = True,
    json_name: str = "report.json",
    debug: bool = False,
    memory: int | None = 3 << 30,
) -> Outcome:
    """Run ``main(["check", drawing, "--json", OUT, ...])`` in-process and check the guarantees.

    Guarantees checked (docs/user-guide.md, Exit codes, the hostile-input issue): exit status in {0, 1, 2}; no
    exception escapes; no hang; no "internal error" (a bug); the input files unchanged;
    on exit 2 one stderr line and no report file; otherwise strict JSON with the schema;
    never a temporary file left beside the report.
    Standard output and error are strict UTF-8 streams, like a UTF-8 terminal.
    ``debug`` sets DXFTRUSS_DEBUG so that an internal error escapes with its traceback.
    ``memory`` caps the extra address space for the run (bytes; None: no cap), so that a
    memory bomb fails as a MemoryError (an internal error: a bug) instead of swapping.
    """
    from dxftruss.cli import main

    out = drawing.parent / json_name
    if out.exists():
        out.unlink()
    inputs = [drawing] + ([loads] if loads else [])
    before = {p: (p.read_bytes(), p.stat().st_mtime_ns) for p in inputs}
    argv = ["check", str(drawing), "--json", str(out)] + (["--loads", str(loads)] if loads else [])
    argv += (["--quiet"] if quiet else []) + (extra or [])
    o_buf, e_buf = io.BytesIO(), io.BytesIO()
    o = io.TextIOWrapper(o_buf, encoding="utf-8", errors="strict", write_through=True)
    e = io.TextIOWrapper(e_buf, encoding="utf-8", errors="strict", write_through=True)
    problems: list[str] = []
    trace = ""
    code: int | None = None
    caught: list[warnings.WarningMessage] = []
    t0 = time.perf_counter()
    env_debug = os.environ.pop("DXFTRUSS_DEBUG", None)
    if debug:
        os.environ["DXFTRUSS_DEBUG"] = "1"
    try:
        with (
            memory_cap(memory),
            alarm(timeout) as fired,
            contextlib.redirect_stdout(o),
            contextlib.redirect_stderr(e),
            warnings.catch_warnings(record=True) as caught,
        ):
            warnings.simplefilter("always")
            try:
                code = main(argv)
            except Hang:
                raise
            except SystemExit as exc:  # argparse only; our argv is valid, so this is a bug too
                problems.append(f"SystemExit({exc.code!r}) escaped main")
                trace = traceback.format_exc()
            except BaseException as exc:  # noqa: BLE001 - the guarantee under test
                problems.append(f"exception escaped main: {type(exc).__name__}: {exc}"[:300])
                trace = traceback.format_exc()
        if fired:
            problems.append(f"hang: alarm fired after {timeout} s but main returned")
    except Hang as exc:
        problems.append(f"hang: {exc}")
        trace = traceback.format_exc()
    finally:
        os.environ.pop("DXFTRUSS_DEBUG", None)
        if env_debug is not None:
            os.environ["DXFTRUSS_DEBUG"] = env_debug
    seconds = time.perf_counter() - t0
    seen_warnings = sorted({f"{w.category.__name__}: {w.message} ({Path(w.filename).name}:{w.lineno})" for w in caught})
    stdout = o_buf.getvalue().decode("utf-8", "replace")
    stderr = e_buf.getvalue().decode("utf-8", "replace")
    report = None

    if code is not None and code not in (0, 1, 2):
        problems.append(f"exit status {code!r} not in {{0, 1, 2}}")
    if "internal error" in stderr:
        problems.append("internal error: " + stderr.strip()[:400])
    if "Traceback" in stderr:
        problems.append("traceback on stderr")
    raw = raw_terminal_control(stdout) + raw_terminal_control(stderr)
    if raw:
        problems.append(f"terminal control characters printed raw: {sorted(set(raw))!r}")
    for p, (data, mtime) in before.items():
        if not p.exists() or p.read_bytes() != data or p.stat().st_mtime_ns != mtime:
            problems.append(f"input {p.name} was modified")
    leftovers = [f.name for f in drawing.parent.iterdir() if f.name.startswith(f".{out.name}.")]
    if leftovers:
        problems.append(f"temporary files left: {leftovers}")
    if code == 2:
        lines = stderr.strip().splitlines()
        if len(lines) != 1:
            problems.append(f"exit 2 with {len(lines)} stderr lines (want 1): {stderr[:300]!r}")
        if out.exists():
            problems.append("exit 2 but a report was written")
    elif code in (0, 1):
        if not out.exists():
            problems.append(f"exit {code} without the JSON report")
        else:
            try:
                report = _strict_json(out.read_text(encoding="utf-8"))
                if report.get("schema") != SCHEMA:
                    problems.append(f"schema {report.get('schema')!r}")
            except (ValueError, UnicodeDecodeError) as exc:
                problems.append(f"JSON report unreadable: {type(exc).__name__}: {exc}"[:300])
    return Outcome(code, stdout, stderr, report, seconds, problems, trace, seen_warnings)


def run_bytes(data: bytes, folder: Path, *, name: str = "drawing.dxf", **kw) -> Outcome:  # type: ignore[no-untyped-def]
    path = folder / name
    path.write_bytes(data)
    try:
        return run_main(path, **kw)
    finally:
        with contextlib.suppress(OSError):
            path.unlink()


def signature(outcome: Outcome) -> str:
    """A short key that groups crashes with the same cause (numbers and handles removed)."""
    text = outcome.problems[0] if outcome.problems else ""
    if outcome.trace:
        frames = [ln.strip() for ln in outcome.trace.splitlines() if ln.strip().startswith("File ")]
        ours = [f for f in frames if "/dxftruss/" in f and "/tests/" not in f]
        if ours or frames:  # the deepest frame of the program (a hang: where the alarm hit)
            text += " @ " + (ours or frames)[-1]
    text = re.sub(r"/tmp/\S+", "<path>", text)
    text = re.sub(r"\\u[0-9a-fA-F]{4}|\\x[0-9a-fA-F]{2}", "<char>", text)
    text = re.sub(r"'[^']{0,80}'", "'...'", text)
    text = re.sub(r"\b[0-9A-F]{1,8}\b", "#", text)
    text = re.sub(r"\d+(\.\d+)?(e[+-]?\d+)?", "#", text)
    return text[:200]


def configure_stdio_for_unicode() -> None:  # for the script: keep our own prints safe
    for s in (sys.stdout, sys.stderr):
        with contextlib.suppress(AttributeError, ValueError):
            s.reconfigure(errors="backslashreplace")  # type: ignore[union-attr]


def make_output_target(kind: str, d: Path, name: str = "out.target") -> Path:
    """An output path ``d/name`` of one kind: regular (holding "old"), fifo, socket, dir,
    link-to-file, dangling-link, link-to-dir, link-to-fifo or link-loop."""
    import socket

    p = d / name
    if kind == "regular":
        p.write_text("old")
    elif kind == "fifo":
        os.mkfifo(p)
    elif kind == "socket":
        s = socket.socket(socket.AF_UNIX)
        s.bind(str(p))
        s.close()
    elif kind == "dir":
        p.mkdir()
    elif kind == "link-to-file":
        (d / "real.target").write_text("old")
        p.symlink_to(d / "real.target")
    elif kind == "dangling-link":
        p.symlink_to(d / "missing.target")
    elif kind == "link-to-dir":
        (d / "folder").mkdir()
        p.symlink_to(d / "folder")
    elif kind == "link-to-fifo":
        os.mkfifo(d / "fifo")
        p.symlink_to(d / "fifo")
    elif kind == "link-loop":
        p.symlink_to(p)
    return p
