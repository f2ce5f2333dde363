"""Part names the way the sheet names them.

    block    a part drawn wholly by one block reference is named after its block, with
             the insertion point when the block is placed more than once
             (``T3 at (12000, 0)``);
    mark     otherwise a mark text (``T3``, ``TR-03``, ``W12``: one to four letters, an
             optional ``-`` or ``_`` or space, one to four digits, an optional letter)
             on a member or label layer, inside the part's box or within a quarter of
             its size from it, and nearer to this part than to any other;
    order    otherwise ``P1`` ... ``Pn``: the parts numbered from left to right (then
             bottom to top) by the lower-left corner of their box.

A name given to two parts gets the insertion point or box corner added, so every name
is unique. Every finding that concerns joints or members names its part(s).
"""

from __future__ import annotations

import re
from collections import Counter
from dataclasses import dataclass
from typing import Any

import numpy as np

from .findings import Finding
from .model import Truss
from .read.boundary import _ENTITY_FAILURES

_MARK = re.compile(r"^[A-Za-z]{1,4}[-_ ]?\d{1,4}[A-Za-z]?$")


@dataclass(frozen=True)
class PartNames:
    """The parts' names, and the parts the sheet itself names (a block or a mark) that
    are meant to stand alone: all of them but the parts of one block reference whose
    content falls into several parts."""

    names: tuple[str, ...]
    stand_alone: frozenset[int]


def part_names(truss: Truss, texts: tuple[Any, ...] = (), document: Any = None) -> tuple[str, ...]:
    """One name per part of ``truss`` (see the module docstring)."""
    return name_parts(truss, texts, document).names


def name_parts(truss: Truss, texts: tuple[Any, ...] = (), document: Any = None) -> PartNames:
    """The names of :func:`part_names` and the parts that stand alone (:class:`PartNames`)."""
    parts = truss.parts
    if not parts:
        return PartNames((), frozenset())
    boxes = []
    for p in parts:
        pts = truss.xy[p.joints] if len(p.joints) else np.zeros((1, 2))
        boxes.append((pts.min(axis=0), pts.max(axis=0)))
    order = sorted(range(len(parts)), key=lambda i: (float(boxes[i][0][0]), float(boxes[i][0][1]), i))
    fallback = {i: f"P{k + 1}" for k, i in enumerate(order)}
    names: dict[int, str] = {}
    corner: dict[int, str] = {}
    inserts = _block_names(document)
    uses: dict[str, int] = {}
    single: dict[int, str] = {}  # part -> its one handle, for parts drawn by one entity
    for i, p in enumerate(parts):
        handles = {h for e in p.members.tolist() for h in truss.handles[e]}
        if len(handles) == 1:
            (h,) = handles
            single[i] = h
            info = inserts.get(h)
            if info is not None:
                names[i] = info[0]
                corner[i] = _fmt_point(info[1])
                uses[info[0]] = uses.get(info[0], 0) + 1
    marks = _marks(texts, boxes, set(names))
    for i, text in marks.items():
        names.setdefault(i, text)
    out = []
    seen: dict[str, int] = {}
    for i in range(len(parts)):
        name = names.get(i, fallback[i])
        seen[name] = seen.get(name, 0) + 1
    for i in range(len(parts)):
        name = names.get(i, fallback[i])
        if seen[name] > 1 or uses.get(name, 0) > 1:
            name = f"{name} at {corner.get(i, _fmt_point(boxes[i][0]))}"
        out.append(name)
    # still equal (two inserts at one point): the left-to-right number makes them unique
    final, count = [], Counter(out)
    for i, name in enumerate(out):
        final.append(f"{name} ({fallback[i]})" if count[name] > 1 else name)
    uses_of = Counter(single.values())
    return PartNames(tuple(final), frozenset(i for i in names if uses_of.get(single.get(i, ""), 0) <= 1))


def _fmt_point(p: Any) -> str:
    return f"({float(p[0]):.6g}, {float(p[1]):.6g})"


def _block_names(document: Any) -> dict[str, tuple[str, tuple[float, float]]]:
    """{handle: (block name, insertion point)} of the model-space block references."""
    if document is None:
        return {}
    out = {}
    try:
        for e in document.modelspace().query("INSERT"):
            ins = e.dxf.insert
            out[str(e.dxf.handle)] = (str(e.dxf.name), (float(ins[0]), float(ins[1])))
    except _ENTITY_FAILURES:  # a damaged document: no block names, the other rules still apply
        return {}
    return out


def _marks(texts: tuple[Any, ...], boxes: list[tuple[np.ndarray, np.ndarray]], named: set[int]) -> dict[int, str]:
    """{part: mark text} for parts with exactly one nearest mark text."""
    found: dict[int, set[str]] = {}
    if not boxes:
        return {}
    lo = np.array([b[0] for b in boxes])
    hi = np.array([b[1] for b in boxes])
    size = np.hypot(*(hi - lo).T)
    for t in texts:
        text = str(t.text).strip()
        if not _MARK.match(text) or t.layer.upper().startswith(("LOAD", "SUPPORT")):
            continue
        p = np.array([t.x, t.y])
        gap = np.hypot(*np.maximum(np.maximum(lo - p, p - hi), 0.0).T)  # distance to each box
        i = int(np.argmin(gap))
        if gap[i] <= 0.25 * size[i] and (np.sum(gap == gap[i]) == 1):
            found.setdefault(i, set()).add(text)
    return {i: next(iter(v)) for i, v in found.items() if len(v) == 1 and i not in named}


def part_index(truss: Truss) -> tuple[np.ndarray, np.ndarray]:
    """(part of each joint, part of each member); -1 where none."""
    jp = np.full(truss.n_joints, -1, dtype=np.int64)
    mp = np.full(truss.n_members, -1, dtype=np.int64)
    for k, p in enumerate(truss.parts):
        jp[p.joints] = k
        mp[p.members] = k
    return jp, mp


def finding_parts(f: Finding, index: tuple[np.ndarray, np.ndarray], names: tuple[str, ...]) -> list[str]:
    """The names of the parts a finding's joints and members belong to."""
    if not names or (not f.joints and not f.members):
        return []
    joint_part, member_part = index
    idx = {int(joint_part[j]) for j in f.joints if 0 <= j < len(joint_part) and joint_part[j] >= 0}
    idx |= {int(member_part[e]) for e in f.members if 0 <= e < len(member_part) and member_part[e] >= 0}
    return [names[i] for i in sorted(idx)]


def finding_entities(truss: Truss, f: Finding, limit: int) -> list[tuple[str, str]]:
    """(entity key, layer) of the drawn entities a finding concerns, at most ``limit``:
    those of its members, then those its data names by handle."""
    out: list[tuple[str, str]] = []
    seen: set[str] = set()

    def add(key: str, layer: str) -> None:
        if key and key not in seen and len(out) < limit:
            seen.add(key)
            out.append((key, layer))

    keys = truss.entities if len(truss.entities) == truss.n_members else truss.handles
    for e in f.members:
        if 0 <= e < len(keys):
            for k in keys[e]:
                add(k, truss.layers[e])
    layer = f.data.get("layer")
    layer = layer if isinstance(layer, str) else ""
    one = f.data.get("handle")
    if isinstance(one, str):
        add(one, layer)
    many = f.data.get("handles")
    if isinstance(many, list | tuple):
        for k in many:
            if isinstance(k, str):
                add(k, layer)
    return out


def describe_entity(key: str, layer: str, block_names: dict[str, str]) -> str:
    """One entity in CAD words: ``handle 5B`` in model space; inside blocks the entity's
    own handle, then each block and the reference placing it, out to model space."""
    parts = key.split("/")
    on = f" on layer {layer}" if layer else ""
    if len(parts) == 1:
        return f"handle {key}{on}"
    words = [f"entity {parts[-1]}"]
    for h in reversed(parts[:-1]):
        name = block_names.get(h)
        words.append(f"in block {name!r} (reference {h})" if name else f"in reference {h}")
    return " ".join(words) + on


def where_drawn(truss: Truss, f: Finding, limit: int = 3) -> str:
    """The first few entities of a finding in CAD words, "" when it names none."""
    ents = finding_entities(truss, f, limit + 1)
    if not ents:
        return ""
    text = "; ".join(describe_entity(k, layer, truss.block_names) for k, layer in ents[:limit])
    return text + ("; ..." if len(ents) > limit else "")
