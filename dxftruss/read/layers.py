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
