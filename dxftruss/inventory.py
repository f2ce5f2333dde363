"""The layer inventory: every layer of a drawing, what it holds and what ``check`` does
with it (``dxftruss layers``, and the brief list next to ``no-members``).

Glossary:
    entry   one layer: its name (as in the layer table, else as the entities spell it),
            whether the table has it, its state (on, frozen, locked, plotting), the
            entities on it by type in the layout read (block content counted once per
            placement, on its effective layer; the content of a reference on a frozen
            layer is not counted, the reference is), and its use.
    use     what ``check`` does with the layer: ``members``, ``supports``, ``loads``,
            ``label text``, ``reserved``, ``hidden`` or ``outside --layers``; ``why``
            says why in words. Decided in one place, :func:`layer_use`, so that a later
            stage (e.g. one that sets layers aside as not the structure) adds its reason
            there.

Nothing here reads the file or prints; the command line does.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from .read.layers import LayerState, _LayerRole, _resolve_role, _Role

#: the uses, in the order the text report explains them
USES = ("members", "supports", "loads", "label text", "reserved", "hidden", "outside --layers")

_FIX_WORDS = {"SUPPORT-XY": "restrains x and y", "SUPPORT-X": "restrains x", "SUPPORT-Y": "restrains y"}


@dataclass(frozen=True)
class LayerEntry:
    """One layer of the inventory (see the module glossary)."""

    name: str
    in_table: bool
    state: LayerState
    counts: dict[str, int]
    use: str
    why: str

    @property
    def total(self) -> int:
        return sum(self.counts.values())

    @property
    def lines(self) -> int:
        """Line work entities (LINE, LWPOLYLINE, POLYLINE) on the layer."""
        return sum(n for t, n in self.counts.items() if t in ("LINE", "LWPOLYLINE", "POLYLINE"))

    def state_words(self) -> str:
        words = ["on" if self.state.on else "off"]
        if self.state.frozen:
            words.append("frozen")
        if self.state.locked:
            words.append("locked")
        words.append("plotting" if self.state.plot else "not plotted")
        return ", ".join(words)

    def as_dict(self) -> dict[str, Any]:
        st = self.state
        return {
            "name": self.name,
            "in_table": self.in_table,
            "on": st.on,
            "frozen": st.frozen,
            "locked": st.locked,
            "plot": st.plot,
            "counts": dict(self.counts),
            "total": self.total,
            "use": self.use,
            "why": self.why,
        }


def layer_use(name: str, role: _LayerRole, state: LayerState, named_hidden: bool) -> tuple[str, str]:
    """(use, why) of one layer: the one place that decides what ``check`` does with a
    layer for the inventory (a stage that sets layers aside adds its reason here)."""
    up = name.upper()
    if role.role is _Role.HIDDEN:
        return "hidden", f"{' and '.join(state.hidden)}: nothing on it is read; name it with --layers to read it"
    why_named = f"; {' and '.join(state.hidden)} but read because --layers names it" if named_hidden else ""
    if role.role is _Role.SKIP:
        also = f" (and it is {' and '.join(state.hidden)})" if state.hidden else ""
        return "outside --layers", f"no --layers glob matches it: nothing on it is read{also}"
    if role.role is _Role.SUPPORT:
        return "supports", f"points, circles and block references are supports that {_FIX_WORDS[up]}{why_named}"
    if role.role is _Role.LOAD:
        return "loads", f"lines are loads of case '{role.case}', texts their labels{why_named}"
    if role.role is _Role.LOAD_OTHER:
        return "label text", f"texts label loads; nothing else on it is used{why_named}"
    if role.role is _Role.RESERVED:
        return "reserved", f"a SUPPORT* name that is not SUPPORT-XY, -X or -Y: nothing on it is used{why_named}"
    return "members", f"lines and polyline segments are members{why_named}"


def layer_inventory(linework: Any, globs: tuple[str, ...] = ()) -> list[LayerEntry]:
    """Every layer of the table and every layer the walk met, in table order, then the
    layers missing from the table by name. ``globs`` are the ``--layers`` values."""
    low = tuple(g.lower() for g in globs)
    table: dict[str, LayerState] = {st.name.upper(): st for st in linework.layer_states}
    counts: dict[str, dict[str, int]] = {}
    spelled: dict[str, str] = {}
    for layer, c in linework.layer_counts.items():
        key = layer.upper()
        spelled.setdefault(key, layer)
        acc = counts.setdefault(key, {})
        for t, n in c.items():
            acc[t] = acc.get(t, 0) + n
    keys = list(table) + sorted(k for k in counts if k not in table)
    aside, used = _structure(linework) if not globs else ({}, {})
    out = []
    for key in keys:
        st = table.get(key)
        name = st.name if st is not None else spelled[key]
        state = st if st is not None else LayerState(name)
        role, named = _resolve_role(name, low, table)
        use, why = layer_use(name, role, state, named)
        if use == "members" and key in aside:
            use, why = _set_aside_use(aside[key], used.get(key, 0), why)
        out.append(LayerEntry(name, st is not None, state, dict(sorted(counts.get(key, {}).items())), use, why))
    return out


def _structure(linework: Any) -> tuple[dict[str, dict[str, int]], dict[str, int]]:
    """What the structure finder (drafting.py) sets aside and uses, per layer (upper case)."""
    from .drafting import select_structure
    from .pipeline import default_snap
    from .result import Settings

    seg = getattr(linework, "segments", None)
    if seg is None or not len(seg):
        return {}, {}
    sel = select_structure(seg, linework.layers, snap=default_snap(seg, Settings().snap_fraction))
    aside: dict[str, dict[str, int]] = {}
    for name, reasons in sel.set_aside.items():
        acc = aside.setdefault(name.upper(), {})
        for r, n in reasons.items():
            acc[r] = acc.get(r, 0) + n
    used: dict[str, int] = {}
    for name, n in sel.used.items():
        used[name.upper()] = used.get(name.upper(), 0) + n
    return aside, used


def _set_aside_use(reasons: dict[str, int], n_used: int, why: str) -> tuple[str, str]:
    """(use, why) of a member layer the structure finder sets aside wholly or in part."""
    from .drafting import RULES

    words = "; ".join(f"{RULES[r]} ({n} line{'s' if n != 1 else ''})" for r, n in sorted(reasons.items()))
    total = sum(reasons.values())
    if n_used == 0:
        return "set aside", f"{total} lines set aside by the structure rules: {words}; name it with --layers to use it"
    return "members", f"{why}; {total} of its lines set aside by the structure rules: {words}"


def brief(entries: list[LayerEntry], limit: int = 12) -> str:
    """The inventory in one sentence: each layer with its line count and use, at most
    ``limit`` layers (those holding most first), then "and N more"."""
    from .escape import shown

    order = sorted(entries, key=lambda e: (-e.lines, -e.total, e.name.upper()))
    parts = [f"'{shown(e.name)}' {e.lines} line{'s' if e.lines != 1 else ''}, {e.use}" for e in order[:limit]]
    if len(order) > limit:
        parts.append(f"and {len(order) - limit} more")
    return "; ".join(parts) if parts else "the drawing has no layers"
