"""Member sections: which ``[[section]]`` each member takes, and its values per member.

Glossary:
    section     a ``model.Section``: area, E, and where given the smaller second moment
                of area I (or the radius of gyration r = sqrt(I / A)), a strength and a
                density, or a simple shape they were computed from.
    match       a member takes the first section of the loads file that names it: by
                its id in ``members`` or by a ``layer`` glob matching its layer
                (fnmatch, case-insensitive).
    default     a member no section names. In a part where some members have sections,
                it takes the median EA of those members for the stiffness solution
                (``assumed-stiffness`` names it); it has no I, strength or weight.

Units: SI (m2, Pa, m4, kg/m3) per member; NaN where the member has no value.
"""

from __future__ import annotations

from dataclasses import dataclass
from fnmatch import fnmatchcase

import numpy as np

from .errors import ConfigError
from .model import Section, Truss, member_id


@dataclass(frozen=True)
class MemberSections:
    """Per member (arrays of length m): ``index`` of the section taken (-1 none), and
    its ``area`` m2, ``modulus`` Pa, ``inertia`` m4, ``strength`` Pa, ``density``
    kg/m3 (NaN where not given)."""

    index: np.ndarray
    area: np.ndarray
    modulus: np.ndarray
    inertia: np.ndarray
    strength: np.ndarray
    density: np.ndarray

    @property
    def ea(self) -> np.ndarray:
        """EA in N per member; NaN without a section."""
        return self.area * self.modulus

    @property
    def given(self) -> np.ndarray:
        """Members that have a section (bool)."""
        return self.index >= 0


def member_sections(truss: Truss, *, source: str = "loads file") -> MemberSections:
    """The section of every member (see the module glossary).

    Raises ConfigError when a ``members`` list names a member the drawing does not have."""
    return sections_of(truss.layers, truss.sections, source=source)


def sections_of(
    layers: tuple[str, ...], sections: tuple[Section, ...], *, source: str = "loads file"
) -> MemberSections:
    """:func:`member_sections` for members given by their layers (member ``e`` is ``M{e+1}``)."""
    m = len(layers)
    index = np.full(m, -1, dtype=np.int64)
    ids = {member_id(e): e for e in range(m)}
    by_layer = np.asarray([s.lower() for s in layers], dtype=str) if m else np.zeros(0, dtype=str)
    names, inverse = np.unique(by_layer, return_inverse=True) if m else (np.zeros(0, dtype=str), np.zeros(0, int))
    for k, sec in enumerate(sections):
        if sec.members:
            unknown = [name for name in sec.members if name.upper() not in ids]
            if unknown:
                raise ConfigError(
                    f"{source}: [[section]] #{sec.number or k + 1}: no member {unknown[0]!r} in the drawing "
                    f"(members are M1 to M{m})"
                )
            hit = np.zeros(m, dtype=bool)
            hit[[ids[name.upper()] for name in sec.members]] = True
        else:
            glob = (sec.layer or "").lower()
            per_name = np.array([fnmatchcase(str(n), glob) for n in names], dtype=bool)
            hit = per_name[inverse.ravel()] if m else np.zeros(0, dtype=bool)
        index[hit & (index < 0)] = k

    def values(get: list[float | None]) -> np.ndarray:
        table = np.asarray([np.nan if v is None else float(v) for v in get], dtype=np.float64)
        out = np.full(m, np.nan)
        has = index >= 0
        out[has] = table[index[has]]
        return out

    secs = sections
    return MemberSections(
        index,
        values([s.area for s in secs]),
        values([s.modulus for s in secs]),
        values([s.inertia for s in secs]),
        values([s.strength for s in secs]),
        values([s.density for s in secs]),
    )
