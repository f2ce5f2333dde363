"""Self-weight: member weights from their sections, lumped to the joints as a load case.

Glossary:
    weight        of a member: area (m2) x density (kg/m3) x length (m) x g (standard
                  gravity, 9.80665 m/s2), in newtons, then in the force unit.
    lumping       half of a member's weight acts downward at each of its end joints
                  (a pin-jointed bar's own weight carried by its ends; the bending of
                  the member under its own weight is not covered).
    self-weight   a load case of its own (default name ``self-weight``, ``[self_weight]
    case          case`` in the loads file) that combinations can name like any case.

Members without a density (no section, or a section without ``density``) add no weight;
when others have one, ``self-weight-incomplete`` names them.
"""

from __future__ import annotations

import numpy as np

from .findings import Code, Finding
from .model import Load, LoadOrigin, Part, SelfWeight, Source, member_id
from .sections import MemberSections
from .units import FORCE_UNITS, LENGTH_UNITS, STANDARD_GRAVITY


def member_weights(
    xy: np.ndarray, ends: np.ndarray, ms: MemberSections, *, length_unit: str, force_unit: str
) -> np.ndarray:
    """Weight per member in the force unit (NaN without a density)."""
    d = xy[ends[:, 1]] - xy[ends[:, 0]]
    metres = np.hypot(d[:, 0], d[:, 1]) * LENGTH_UNITS[length_unit]
    return ms.area * ms.density * metres * STANDARD_GRAVITY / FORCE_UNITS[force_unit]


def self_weight(
    xy: np.ndarray,
    ends: np.ndarray,
    parts: tuple[Part, ...],
    ms: MemberSections,
    *,
    case: str,
    length_unit: str,
    force_unit: str,
) -> tuple[SelfWeight, list[Load], list[Finding]]:
    """The self-weight record, its joint loads (one per loaded joint, sorted) and the
    ``self-weight-incomplete`` finding when some members have no density."""
    w = member_weights(xy, ends, ms, length_unit=length_unit, force_unit=force_unit)
    has = np.isfinite(w)
    per_joint = np.zeros(xy.shape[0])
    np.add.at(per_joint, ends[has, 0], w[has] / 2)
    np.add.at(per_joint, ends[has, 1], w[has] / 2)
    origin = LoadOrigin("self-weight", text=case)
    loads = [
        Load(int(j), 0.0, -float(per_joint[j]), Source.LOADS_FILE, None, origin) for j in np.flatnonzero(per_joint > 0)
    ]
    per_part = tuple(float(np.nansum(w[p.members])) for p in parts)
    missing = tuple(int(e) for e in np.flatnonzero(~has))
    findings = []
    if missing:
        first = missing[0]
        mid = xy[ends[first]].mean(axis=0)
        names = ", ".join(member_id(e) for e in missing[:8]) + (
            f" and {len(missing) - 8} more" if len(missing) > 8 else ""
        )
        findings.append(
            Finding(
                Code.SELF_WEIGHT_INCOMPLETE,
                f"self-weight case '{case}': {len(missing)} of {len(w)} members have no density ({names}); "
                "their weight is left out",
                members=missing,
                at=(float(mid[0]), float(mid[1])),
                data={"case": case, "missing": len(missing)},
            )
        )
    return SelfWeight(case, w, missing, per_part), loads, findings
