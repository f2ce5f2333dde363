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


def _nums(values: Any) -> list[float | None]:
    """:func:`_num` of every element, each distinct value formatted once (json._nums)."""
    from .json import _nums as nums

    return nums(values)


def _dirs(values: np.ndarray) -> list[int | None]:
    """A direction (+1 / -1) per element as an int, None where not finite."""
    ok = np.isfinite(values)
    ints = np.where(ok, values, 0).astype(np.int64).tolist()
    return [k if f else None for k, f in zip(ints, ok.tolist(), strict=True)]


def engineering_dict(
    result: Result, pieces: dict[str, str] | None = None, member_ids: list[str] | None = None
) -> dict[str, Any] | None:
    """The ``engineering`` object, or None when the check has no engineering results.
    With ``pieces`` (json._report), the envelope's members are written as JSON text
    into ``pieces`` (the same text json writes, without the per-member dicts);
    ``member_ids``: every member's id (the report's own list, shared, not made again)."""
    eng = result.engineering
    t = result.truss
    if eng is None or not (result.cases or eng.moving):
        return None
    env = eng.envelope
    names = [s.name for s in env.sources]
    ids = member_ids if member_ids is not None else [member_id(e) for e in range(t.n_members)]

    def src(k: int) -> str | None:
        return names[k] if k >= 0 else None

    # column by column, each distinct number formatted once
    idx = np.flatnonzero(np.isfinite(env.tension) | np.isfinite(env.compression))
    tens, comp = env.tension[idx], env.compression[idx]
    t_from = [
        src(k) if pos else None for k, pos in zip(env.tension_source[idx].tolist(), (tens > 0).tolist(), strict=True)
    ]
    c_from = [
        src(k) if neg else None
        for k, neg in zip(env.compression_source[idx].tolist(), (comp < 0).tolist(), strict=True)
    ]
    mids = [ids[e] for e in idx.tolist()]
    numbers = (tens, env.tension_station[idx], comp, env.compression_station[idx])
    if pieces is not None:
        from .json import _piece

        members: Any = _piece(pieces, "envelope members", lambda: _envelope_text(mids, numbers, t_from, c_from))
    else:
        tv, ta, cv, ca = (_nums(a) for a in numbers)
        members = {
            mid: dict(zip(ENVELOPE_KEYS, row, strict=True))
            for mid, *row in zip(mids, tv, t_from, ta, cv, c_from, ca, strict=True)
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
        "members_without_section": [ids[e] for e in np.flatnonzero(~eng.sections.given).tolist()]
        if eng.sections is not None
        else list(ids),
        "member_checks": _checks(result, ids),
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


#: the keys of one member of the envelope, in the order written
ENVELOPE_KEYS = ("tension", "tension_from", "tension_at", "compression", "compression_from", "compression_at")


def _envelope_text(
    mids: list[str], numbers: tuple[np.ndarray, ...], t_from: list[str | None], c_from: list[str | None]
) -> str:
    """The envelope's members object as json writes it (compact, see json._dumps):
    ``numbers`` are the tension, its station, the compression and its station."""
    from .json import _encode_string as enc
    from .json import _texts

    names: dict[str | None, str] = {None: "null"}
    for col in (t_from, c_from):
        for name in set(col):
            if name is not None and name not in names:
                names[name] = enc(name)
    keys = [enc(k) for k in ENVELOPE_KEYS]
    tv, ta, cv, ca = (_texts(a) for a in numbers)
    return (
        "{"
        + ",".join(
            f"{enc(mid)}:{{{keys[0]}:{a},{keys[1]}:{names[af]},{keys[2]}:{b},"
            f"{keys[3]}:{c},{keys[4]}:{names[cf]},{keys[5]}:{d}}}"
            for mid, a, af, b, c, cf, d in zip(mids, tv, t_from, ta, cv, c_from, ca, strict=True)
        )
        + "}"
    )


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


def _checks(result: Result, ids: list[str]) -> dict[str, Any] | None:
    eng = result.engineering
    assert eng is not None
    ch, ms = eng.checks, eng.sections
    if ch is None or ms is None:
        return None
    t = result.truss
    idx = np.flatnonzero(ms.given)
    labels = [s.label for s in t.sections]
    ratio = ch.ratio[idx]
    over = (np.isfinite(ratio) & (ratio > ch.limit)).tolist()
    cols = [_nums(a[idx]) for a in (ch.length, ch.stress_t, ch.stress_c, ch.euler, ch.slenderness, ch.buckling)]
    cols += [_nums(ch.strength[idx]), _nums(ratio)]
    members = {
        ids[e]: {
            "section": labels[k],
            "length_m": c0,
            "stress_tension": c1,
            "stress_compression": c2,
            "euler": c3,
            "slenderness": c4,
            "buckling_ratio": c5,
            "strength_ratio": c6,
            "ratio": c7,
            "governs": ch.kind[e] or None,
            "over_ratio": o,
        }
        for e, k, c0, c1, c2, c3, c4, c5, c6, c7, o in zip(
            idx.tolist(), ms.index[idx].astype(np.int64).tolist(), *cols, over, strict=True
        )
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
    idx = result.truss.parts[mv.part].members
    extremes = {
        member_id(e): {
            "tension": tv,
            "tension_at": ta,
            "tension_direction": td,
            "compression": cv,
            "compression_at": ca,
            "compression_direction": cd,
        }
        for e, tv, ta, td, cv, ca, cd in zip(
            idx.tolist(),
            _nums(ext.tmax[idx]),
            _nums(ext.tmax_at[idx]),
            _dirs(ext.tmax_dir[idx]),
            _nums(ext.cmin[idx]),
            _nums(ext.cmin_at[idx]),
            _dirs(ext.cmin_dir[idx]),
            strict=True,
        )
    }
    arr = np.asarray(mv.lines, dtype=float)
    width = arr.shape[1] if arr.ndim == 2 else 0
    flat = _nums(arr) if arr.size else []
    lines = {
        member_id(int(e)): flat[k * width : (k + 1) * width] for k, e in enumerate(np.asarray(mv.members).tolist())
    }
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
