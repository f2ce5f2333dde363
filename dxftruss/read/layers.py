"""Layer roles: what a layer's name says its entities are.

``SUPPORT-XY`` / ``SUPPORT-X`` / ``SUPPORT-Y`` hold support marks, ``LOAD`` and
``LOAD-<case>`` load lines and their labels, other ``LOAD*`` layers labels only, other
``SUPPORT*`` layers nothing; every other layer holds members, unless the ``--layers``
globs leave it out (then nothing on it is read or reported). Names are compared
case-insensitively.

Layer states come from the layer table (:func:`_layer_states`): a layer that is off
(negative colour), frozen, or set not to plot is *hidden*, and nothing on it is read
(not members, supports, loads nor label texts; ``hidden-layer`` says what it holds),
unless ``--layers`` names it exactly (no glob characters, any case): then it is read
with its usual role and ``hidden-layer-read`` warns. A glob never matches a hidden
layer. A layer used by entities but missing from the table is visible. Locked layers
are read (locking only stops editing). An INSERT on a frozen layer hides all of its
content; on an off or not-plotted layer only the content on layer "0" (which takes
the INSERT's layer) is hidden, as CAD shows it (see ``walk.py``).
"""

from __future__ import annotations

import fnmatch
import re
from dataclasses import dataclass
from enum import IntEnum
from typing import Any

from ..model import Fix


class _Role(IntEnum):
    MEMBER = 0  # line work here becomes members
    SKIP = 1  # excluded by the --layers globs: nothing is read or reported
    SUPPORT = 2  # SUPPORT-XY / SUPPORT-X / SUPPORT-Y; SUPPORT-XYZ / -XZ / -YZ / -Z
    LOAD = 3  # LOAD or LOAD-<case>: lines are loads, texts are labels
    LOAD_OTHER = 4  # other LOAD* layers: texts are labels, nothing else is used
    RESERVED = 5  # other SUPPORT* layers: nothing is used
    HIDDEN = 6  # off, frozen or not plotted (layer table) and not named by --layers: nothing is read


_SUPPORT_FIX = {"SUPPORT-XY": Fix.XY, "SUPPORT-X": Fix.X, "SUPPORT-Y": Fix.Y}
#: the world axes each support layer fixes; the 3-D layers' ``fix`` is their trace in
#: the XY plane (SUPPORT-Z has none: planar drawings refuse its marks, plane.py)
SUPPORT_AXES = {
    "SUPPORT-XY": "xy",
    "SUPPORT-X": "x",
    "SUPPORT-Y": "y",
    "SUPPORT-XYZ": "xyz",
    "SUPPORT-XZ": "xz",
    "SUPPORT-YZ": "yz",
    "SUPPORT-Z": "z",
}
_SUPPORT_FIX |= {"SUPPORT-XYZ": Fix.XY, "SUPPORT-XZ": Fix.X, "SUPPORT-YZ": Fix.Y, "SUPPORT-Z": Fix.XY}


@dataclass(frozen=True)
class _LayerRole:
    role: _Role
    fix: Fix | None = None
    case: str | None = None
    #: the world axes a support layer fixes ("xy", "xyz", "z" ...)
    axes: str = ""


def _layer_role(layer: str, globs: tuple[str, ...]) -> _LayerRole:
    up = layer.upper()
    if up.startswith("SUPPORT"):
        fix = _SUPPORT_FIX.get(up)
        if fix is None:
            return _LayerRole(_Role.RESERVED)
        return _LayerRole(_Role.SUPPORT, fix=fix, axes=SUPPORT_AXES[up])
    if up.startswith("LOAD"):
        if up == "LOAD":
            return _LayerRole(_Role.LOAD, case="main")
        if up.startswith("LOAD-"):
            return _LayerRole(_Role.LOAD, case=layer[5:] or "main")
        return _LayerRole(_Role.LOAD_OTHER)
    if globs:
        low = layer.lower()
        if not any(fnmatch.fnmatchcase(low, g) for g in globs):
            return _LayerRole(_Role.SKIP)
    return _LayerRole(_Role.MEMBER)


#: characters that make a ``--layers`` value a glob rather than a layer name
_GLOB_CHARS = frozenset("*?[")


@dataclass(frozen=True)
class LayerState:
    """A layer's entry in the layer table (``name`` as written there)."""

    name: str
    on: bool = True
    frozen: bool = False
    locked: bool = False
    plot: bool = True

    @property
    def hidden(self) -> tuple[str, ...]:
        """Why nothing on the layer is shown on a plot: ("off", "frozen", "not plotted"),
        empty when it is visible."""
        why = []
        if not self.on:
            why.append("off")
        if self.frozen:
            why.append("frozen")
        if not self.plot:
            why.append("not plotted")
        return tuple(why)


def _layer_states(doc: Any) -> dict[str, LayerState]:
    """The layer table, keyed by the upper-case name (DXF names are case-insensitive).
    An entry whose flags cannot be read counts as visible."""
    from .boundary import _ENTITY_FAILURES

    out: dict[str, LayerState] = {}
    try:
        entries = list(doc.layers)
    except _ENTITY_FAILURES:
        return out
    for layer in entries:
        try:
            name = str(layer.dxf.name)
            st = LayerState(
                name,
                on=not layer.is_off(),
                frozen=bool(layer.is_frozen()),
                locked=bool(layer.is_locked()),
                plot=bool(int(layer.dxf.get("plot", 1))),
            )
        except _ENTITY_FAILURES:  # ValueError and TypeError included
            continue
        out.setdefault(name.upper(), st)
    return out


def _names_exactly(layer: str, globs: tuple[str, ...]) -> bool:
    """True when one of the ``--layers`` values (lower case) is this layer's name, not a glob."""
    low = layer.lower()
    return any(g == low and not (_GLOB_CHARS & set(g)) for g in globs)


def _resolve_role(layer: str, globs: tuple[str, ...], states: dict[str, LayerState]) -> tuple[_LayerRole, bool]:
    """The role of ``layer`` with its state: (role, read although hidden). A hidden
    layer is ``HIDDEN`` unless named exactly by ``globs`` (lower case); a layer the
    globs leave out stays ``SKIP`` whatever its state."""
    r = _layer_role(layer, globs)
    if r.role is _Role.SKIP:
        return r, False
    st = states.get(layer.upper())
    if st is None or not st.hidden:
        return r, False
    if _names_exactly(layer, globs):
        return r, True
    return _LayerRole(_Role.HIDDEN), False


#: the trade words that make a block reference a support on any layer: whole words,
#: any case; letters on either side make it another word ("PINROLLER" is not one)
_PIN_WORDS = ("pin", "pinned", "hinge")
_ROLLER_WORDS = ("roller", "sliding")
_WORD = re.compile(r"(?<![a-z])(pin|pinned|hinge|roller|sliding)(?![a-z])")
#: a run of letters starting or ending with a trade word ("PINROLLER", "HINGED"), not
#: one that merely holds its letters ("SPINDLE")
_ANY = re.compile(r"(?<![a-z])(pin|hinge|roller|sliding)[a-z]+|[a-z]+(pin|pinned|hinge|roller|sliding)(?![a-z])")


def _support_kind(name: str, attribs: list[str]) -> tuple[str | None, str]:
    """What a block reference's name and attribute values say about a support:
    ("pin" | "roller", why) when exactly one kind of trade word is used as a whole word;
    (None, why) when both kinds are, or a word only inside another ("PINROLLER");
    (None, "") when the reference says nothing about supports."""
    sources = [("block name", name)] + [("attribute", a) for a in attribs]
    kinds: dict[str, list[str]] = {}
    partial: list[str] = []
    for what, text in sources:
        low = text.lower()
        for m in _WORD.finditer(low):
            kind = "pin" if m.group(1) in _PIN_WORDS else "roller"
            kinds.setdefault(kind, []).append(f"{what} '{text}' says '{m.group(1)}'")
        if not _WORD.search(low) and _ANY.search(low):
            partial.append(f"{what} '{text}'")
    if len(kinds) == 1:
        ((kind, whys),) = kinds.items()
        return kind, "; ".join(dict.fromkeys(whys))
    if len(kinds) == 2:
        whys = [w for ws in kinds.values() for w in ws]
        return None, "it names both a pin and a roller (" + "; ".join(dict.fromkeys(whys)) + ")"
    if partial:
        return None, (
            "a support word appears only inside another word ("
            + "; ".join(partial)
            + "); name the block or its attribute PIN or ROLLER as a word of its own"
        )
    return None, ""
