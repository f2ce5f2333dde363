"""The ``engineering`` object of the JSON report (docs/report-format.md, engineering):
envelope, sections, member checks, self-weight, deflections and moving loads.

Units: forces in the force unit (tension positive), stations and displacements in
drawing units, member lengths in metres, stresses in Pa, sections in SI.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from ..checks import CHECKS_CAUTION
from ..model import joint_id, member_id
from ..units import STANDARD_GRAVITY

if TYPE_CHECKING:
    from ..result import Result

#: members listed as governing in the envelope
GOVERNING = 10


def _num(x: Any) -> float | None:
    from .json import _num as num

    return num(x)


def engineering_dict(result: Result) -> dict[str, Any] | None:
    """The ``engineering`` object, or None when the check has no engineering results."""
    eng = result.engineering
    t = result.truss
    if eng is None or not (result.cases or eng.moving):
        return None
    env = eng.envelope
    names = [s.name for s in env.sources]

    def src(k: int) -> str | None:
        return names[k] if k >= 0 else None

    members = {}
    for e in range(t.n_members):
        if not (np.isfinite(env.tension[e]) or np.isfinite(env.compression[e])):
            continue
        members[member_id(e)] = {
            "tension": _num(env.tension[e]),
            "tension_from": src(int(env.tension_source[e])) if env.tension[e] > 0 else None,
            "tension_at": _num(env.tension_station[e]),
            "compression": _num(env.compression[e]),
            "compression_from": src(int(env.compression_source[e])) if env.compression[e] < 0 else None,
            "compression_at": _num(env.compression_station[e]),
        }
    reactions = []
    for j, vals, srcs in env.reactions:
        row: dict[str, Any] = {"joint": joint_id(j)}
        for key, v, k in zip(("rx_max", "rx_min", "ry_max", "ry_min"), vals, srcs, strict=True):
            row[key] = _num(v)
            row[key + "_from"] = src(k)
        reactions.append(row)
    out: dict[str, Any] = {
        "caution": CHECKS_CAUTION,
        "sources": [{"kind": s.kind, "name": s.name} for s in env.sources],
        "envelope": {
            "governing": [member_id(e) for e in env.top(GOVERNING)],
            "members": members,
            "reactions": reactions,
        },
        "sections": [_section(s) for s in t.sections],
        "members_without_section": [member_id(int(e)) for e in np.flatnonzero(~eng.sections.given)]
        if eng.sections is not None
        else [member_id(e) for e in range(t.n_members)],
        "member_checks": _checks(result),
        "self_weight": _self_weight(result),
        "deflections": [
            {
                "case": d.case,
                "part": d.part + 1,
                "joint": joint_id(d.joint),
                "dx": _num(d.dx),
                "dy": _num(d.dy),
                "span": _num(d.span),
                "span_from": d.span_from,
                "span_ratio": _num(d.ratio) if d.ratio is not None else None,
            }
            for d in eng.deflections
        ],
        "moving_loads": [_moving(result, mv) for mv in eng.moving],
    }
    return out


def _section(s: Any) -> dict[str, Any]:
    return {
        "number": s.number,
        "name": s.label,
        "layer": s.layer,
        "members": list(s.members),
        "shape": s.shape,
        "area": _num(s.area),
        "E": _num(s.modulus),
        "I": _num(s.inertia) if s.inertia is not None else None,
        "r": _num(s.radius) if s.radius is not None else None,
        "strength": _num(s.strength) if s.strength is not None else None,
        "density": _num(s.density) if s.density is not None else None,
    }


def _checks(result: Result) -> dict[str, Any] | None:
    eng = result.engineering
    assert eng is not None
    ch, ms = eng.checks, eng.sections
    if ch is None or ms is None:
        return None
    t = result.truss
    members = {}
    for e in np.flatnonzero(ms.given).tolist():
        members[member_id(e)] = {
            "section": t.sections[int(ms.index[e])].label,
            "length_m": _num(ch.length[e]),
            "stress_tension": _num(ch.stress_t[e]),
            "stress_compression": _num(ch.stress_c[e]),
            "euler": _num(ch.euler[e]),
            "slenderness": _num(ch.slenderness[e]),
            "buckling_ratio": _num(ch.buckling[e]),
            "strength_ratio": _num(ch.strength[e]),
            "ratio": _num(ch.ratio[e]),
            "governs": ch.kind[e] or None,
            "over_ratio": bool(np.isfinite(ch.ratio[e]) and ch.ratio[e] > ch.limit),
        }
    return {
        "ratio_limit": _num(ch.limit),
        "slenderness_limit": _num(ch.slenderness_limit) if ch.slenderness_limit is not None else None,
        "effective_length": "the member length between its joints: pin ends, unbraced",
        "members": members,
    }


def _self_weight(result: Result) -> dict[str, Any] | None:
    sw = result.truss.self_weight
    if sw is None:
        return None
    return {
        "case": sw.case,
        "gravity": STANDARD_GRAVITY,
        "total": _num(sum(sw.per_part)),
        "parts": [{"part": k + 1, "name": result.part_name(k), "weight": _num(w)} for k, w in enumerate(sw.per_part)],
        "members_without_density": [member_id(e) for e in sw.missing],
    }


def _moving(result: Result, mv: Any) -> dict[str, Any]:
    ext = mv.extremes
    extremes = {}
    for e in result.truss.parts[mv.part].members.tolist():
        extremes[member_id(e)] = {
            "tension": _num(ext.tmax[e]),
            "tension_at": _num(ext.tmax_at[e]),
            "tension_direction": int(ext.tmax_dir[e]) if np.isfinite(ext.tmax_dir[e]) else None,
            "compression": _num(ext.cmin[e]),
            "compression_at": _num(ext.cmin_at[e]),
            "compression_direction": int(ext.cmin_dir[e]) if np.isfinite(ext.cmin_dir[e]) else None,
        }
    lines = {member_id(int(e)): [_num(v) for v in row.tolist()] for e, row in zip(mv.members, mv.lines, strict=True)}
    return {
        "name": mv.name,
        "part": mv.part + 1,
        "loads": [_num(v) for v in mv.vehicle.loads],
        "offsets": [_num(v) for v in mv.vehicle.offsets],
        "panel_joints": [joint_id(j) for j in mv.panel_joints],
        "stations": [_num(v) for v in mv.stations.tolist()],
        "positions": mv.positions,
        "influence_lines": {"complete": mv.complete, "lines": lines},
        "extremes": extremes,
    }
