"""Layer roles: what a layer's name says its entities are.

``SUPPORT-XY`` / ``SUPPORT-X`` / ``SUPPORT-Y`` hold support marks, ``LOAD`` and
``LOAD-<case>`` load lines and their labels, other ``LOAD*`` layers labels only, other
``SUPPORT*`` layers nothing; every other layer holds members, unless the ``--layers``
globs leave it out (then nothing on it is read or reported). Names are compared
case-insensitively. Layer states (off, frozen, locked) are not read: line work on an
invisible layer is still read.
"""

from __future__ import annotations

import fnmatch
import re
from dataclasses import dataclass
from enum import IntEnum

from ..model import Fix


class _Role(IntEnum):
    MEMBER = 0  # line work here becomes members
    SKIP = 1  # excluded by the --layers globs: nothing is read or reported
    SUPPORT = 2  # SUPPORT-XY / SUPPORT-X / SUPPORT-Y
    LOAD = 3  # LOAD or LOAD-<case>: lines are loads, texts are labels
    LOAD_OTHER = 4  # other LOAD* layers: texts are labels, nothing else is used
    RESERVED = 5  # other SUPPORT* layers: nothing is used


_SUPPORT_FIX = {"SUPPORT-XY": Fix.XY, "SUPPORT-X": Fix.X, "SUPPORT-Y": Fix.Y}


@dataclass(frozen=True)
class _LayerRole:
    role: _Role
    fix: Fix | None = None
    case: str | None = None


def _layer_role(layer: str, globs: tuple[str, ...]) -> _LayerRole:
    up = layer.upper()
    if up.startswith("SUPPORT"):
        fix = _SUPPORT_FIX.get(up)
        return _LayerRole(_Role.SUPPORT, fix=fix) if fix is not None else _LayerRole(_Role.RESERVED)
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
