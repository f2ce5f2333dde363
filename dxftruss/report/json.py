"""The JSON report, schema ``dxftruss-report/1`` (docs/report-format.md; JSON Schema in
docs/report.schema.json).

Numbers are rounded to 12 significant digits, -0.0 is written as 0.0 and NaN as null,
so the same input and options always give byte-identical JSON.
"""

from __future__ import annotations

import json
import math
import re
from typing import TYPE_CHECKING, Any

import numpy as np

from ..cutlist import cut_list
from ..model import LoadOrigin, Part, Support, Truss, entity_ref, joint_id, member_id
from ..naming import finding_entities, finding_parts, part_index
from . import CAUTION, assumptions
from .cutlist import JSON_CUT_MEMBERS, cut_list_dict
from .json_engineering import engineering_dict

_encode_string = json.encoder.encode_basestring  # json's own (C) string writer, ensure_ascii=False

if TYPE_CHECKING:
    from ..findings import Finding
    from ..model import LineLoad
    from ..plane import DrawingPlane
    from ..result import Result
    from ..statics import CaseResult

SCHEMA = "dxftruss-report/1"
#: integer form of the schema version; raised when a key changes meaning or is removed
SCHEMA_VERSION = 1


def _support(sp: Support) -> dict[str, Any]:
    """One support; an inclined one (fix "n") adds its unit ``normal`` and that
    direction's angle from +x in degrees, [0, 180)."""
    out: dict[str, Any] = {"joint": joint_id(sp.joint), "fix": sp.fix.value}
    if sp.normal is not None:
        out["normal"] = [float(sp.normal[0]), float(sp.normal[1])]
        out["direction_deg"] = sp.angle
    out["assumed"] = sp.assumed
    out["source"] = sp.source.value
    return out


def _num(x: float) -> float | None:
    x = float(x)
    if not math.isfinite(x):
        return None
    y = float(f"{x:.12g}")
    return 0.0 if y == 0 else y


def _nums(values: Any) -> list[float | None]:
    """:func:`_num` of every element of an array, each distinct value formatted once
    (the parts of a sheet repeat their coordinates' fractions and their forces)."""
    a = np.asarray(values, dtype=float).ravel()
    if len(a) < 64:
        return [_num(x) for x in a.tolist()]
    uniq, inverse = np.unique(a, return_inverse=True)
    done = [_num(x) for x in uniq.tolist()]
    return [done[i] for i in inverse.tolist()]


def _texts(values: Any) -> list[str]:
    """Each element of an array as json writes :func:`_num` of it ("null" for NaN and
    the infinities), each distinct value formatted once (for the pieces of to_json)."""
    a = np.asarray(values, dtype=float).ravel()
    if len(a) < 64:
        return [_text_of(_num(x)) for x in a.tolist()]
    uniq, inverse = np.unique(a, return_inverse=True)
    done = [_text_of(_num(x)) for x in uniq.tolist()]
    return [done[i] for i in inverse.tolist()]


def _jsonable(v: Any) -> Any:
    if isinstance(v, dict):
        return {str(k): _jsonable(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [_jsonable(x) for x in v]
    if isinstance(v, (bool, np.bool_)):
        return bool(v)
    if isinstance(v, (int, np.integer)):
        return int(v)
    if isinstance(v, (float, np.floating)):
        return _num(float(v))
    if v is None or isinstance(v, str):
        return v
    return str(v)


def _title_block(result: Result) -> dict[str, Any]:
    """{field: {value, source, note}} of the title block (titleblock.py)."""
    from ..titleblock import FIELD_NAMES

    tb = result.title_block
    out: dict[str, Any] = {}
    for key in FIELD_NAMES:
        f = tb.get(key) if tb is not None else None
        out[key] = {
            "value": (f.value or None) if f is not None else None,
            "source": f.source if f is not None else "not given",
            "note": (f.note or None) if f is not None else None,
        }
    return out


def _joints(result: Result, jid: list[str], xs: list[Any], ys: list[Any]) -> list[dict[str, Any]]:
    """``{id, x, y}`` per joint; in a drawing plane other than XY also ``world``:
    [x, y, z] as drawn (x, y are then in-plane)."""
    to_world = result.plane or result.planes
    if to_world is None:
        return [{"id": jid[i], "x": xs[i], "y": ys[i]} for i in range(len(jid))]
    world = to_world.to_world(result.truss.xy)
    wx, wy, wz = _nums(world[:, 0]), _nums(world[:, 1]), _nums(world[:, 2])
    return [{"id": jid[i], "x": xs[i], "y": ys[i], "world": [wx[i], wy[i], wz[i]]} for i in range(len(jid))]


def _plane(result: Result) -> dict[str, Any]:
    """The drawing plane (only present when the line work is not flat in XY)."""
    assert result.plane is not None
    return _plane_keys(result.plane)


def _part_plane(result: Result, part: Part) -> dict[str, Any]:
    """``plane`` and ``plane_shift`` of a part when the parts lie in several planes."""
    if result.planes is None or not len(part.joints):
        return {}
    pp = result.planes.parts[int(result.planes.slot([result.truss.xy[part.joints[0], 0]])[0])]
    return {"plane": _plane_keys(pp.plane), "plane_shift": _num(pp.shift)}


def _at_world(result: Result, f: Finding) -> dict[str, Any]:
    """``at_world`` of a finding with a place when the parts lie in several planes."""
    if result.planes is None or f.at is None or not all(map(math.isfinite, f.at)):
        return {}
    return {"at_world": _nums(result.planes.to_world([f.at])[0])}


def _plane_keys(pl: DrawingPlane) -> dict[str, Any]:
    return {
        "kind": pl.kind,
        "origin": _nums(pl.origin),
        "normal": _nums(pl.normal),
        "x_axis": _nums(pl.u),
        "y_axis": _nums(pl.v),
        "max_offset": _num(pl.max_offset),
        "tolerance": _num(pl.tolerance),
    }


def _space(result: Result) -> dict[str, Any]:
    """The keys of a space truss (docs/report-format.md, space): joints with z, members,
    supports with their axes, parts with the 3-D counts, cases with fz."""
    sa = result.space
    assert sa is not None
    t = sa.truss
    jid = [joint_id(i) for i in range(t.n_joints)]
    mid = [member_id(e) for e in range(t.n_members)]
    x, y, z = (_nums(t.xyz[:, c]) for c in range(3))
    lengths = _nums(t.lengths()) if t.n_members else []
    parts = []
    for p, st in zip(t.parts, sa.stability, strict=True):
        parts.append(
            {
                "id": p.index + 1,
                "name": f"P{p.index + 1}",
                "same_as": None,
                "joints": [jid[j] for j in p.joints.tolist()],
                "members": [mid[e] for e in p.members.tolist()],
                "j": st.j,
                "m": st.m,
                "r": st.r,
                "rank": st.rank,
                "mechanisms": st.mechanisms,
                "self_stress": st.self_stress,
                "generic_mechanisms": None,
                "generic_self_stress": None,
                "verdict": st.verdict,
                "sigma_min": _num(st.sigma_min) if st.sigma_min is not None else None,
                "sigma_max": _num(st.sigma_max) if st.sigma_max is not None else None,
                "rank_gap": _num(st.rank_gap) if st.rank_gap is not None else None,
                "rank_method": st.method,
                "maxwell": st.maxwell,
                "rigid_mechanisms": st.rigid_mechanisms,
                "mechanism_order": st.order or None,
                "rank_tolerance": _num(st.tolerance),
                "modes": [{"rigid": md.rigid, "joints": [jid[j] for j in md.joints]} for md in st.modes],
                "self_stress_members": [[mid[e] for e in ms] for ms in st.self_stress_members],
            }
        )
    by_name = {c.name: c for c in t.cases}
    cases = []
    for c in sa.cases:
        case = by_name[c.name]
        cases.append(
            {
                "name": c.name,
                "assumed": c.assumed,
                "combination": {k: _num(v) for k, v in c.factors} if c.factors else None,
                "loads": [
                    {
                        "joint": joint_id(ld.joint),
                        "fx": _num(ld.fx),
                        "fy": _num(ld.fy),
                        "fz": _num(ld.fz),
                        "source": ld.source.value,
                        "label": ld.label,
                        "label_source": None,
                    }
                    for ld in case.loads
                ],
                "reactions": [
                    {"joint": joint_id(j), "fx": _num(rx), "fy": _num(ry), "fz": _num(rz)}
                    for j, rx, ry, rz in c.reactions
                ],
                "forces": dict(zip(mid, _nums(c.forces), strict=True)),
                "zero_force": {
                    "by_rule": [member_id(e) for e in c.zero_by_rule],
                    "by_solution": [member_id(e) for e in c.zero_by_solution],
                },
                "loads_symmetric": None,
                "solved_parts": [p + 1 for p in c.solved_parts],
                "residual": _num(c.residual),
                "methods": {str(p + 1): how for p, how in c.methods},
            }
        )
    return {
        "space": {
            "dimension": 3,
            "rank": "numerical",
            "note": "stability from the numerical rank of the 3-D equilibrium matrix (tolerance "
            "max(rows, cols) x machine epsilon x sigma_max, gap reported); the pebble game and the counts "
            "alone do not decide rigidity in space",
        },
        "joints": [{"id": jid[i], "x": x[i], "y": y[i], "z": z[i]} for i in range(t.n_joints)],
        "members": [
            {
                "id": mid[e],
                "joints": [jid[a], jid[b]],
                "length": lengths[e],
                "layer": t.layers[e],
                "handles": list(t.handles[e]),
            }
            for e, (a, b) in enumerate(t.ends.tolist())
        ],
        "supports": [
            {"joint": joint_id(sp.joint), "fix": sp.axes, "assumed": False, "source": sp.source.value}
            for sp in t.supports
        ],
        "parts": parts,
        "cases": cases,
    }


def report_dict(result: Result, zones: dict[int, list[tuple[int, str]]] | None = None) -> dict[str, Any]:
    """The report as plain JSON-ready data; ``zones`` is what ``write_pdf`` returns
    (where the PDF marks each finding), None when no PDF was written."""
    return _report(result, pieces=None, zones=zones)


def _report(
    result: Result, pieces: dict[str, str] | None, zones: dict[int, list[tuple[int, str]]] | None = None
) -> dict[str, Any]:
    """The report; with ``pieces``, the joint and member lists and the forces of each
    case are written as JSON text into ``pieces`` (key: a placeholder string the dict
    holds instead), as :func:`to_json` writes them. ``zones``: see ``report_dict``."""
    zones = zones or {}
    t = result.truss
    lengths = _nums(t.lengths())
    xs, ys = _nums(t.xy[:, 0]), _nums(t.xy[:, 1])
    jid = [joint_id(i) for i in range(t.n_joints)]
    mid = [member_id(e) for e in range(t.n_members)]
    src = result.source
    s = result.settings
    tol = result.tolerances
    index = part_index(t)
    doc: dict[str, Any] = {
        "schema": SCHEMA,
        "schema_version": SCHEMA_VERSION,
        "source": {
            "path": src.path,
            "sha256": src.sha256,
            "dxf_version": src.dxf_version,
            "length_unit": src.length_unit,
            "unit_source": src.unit_source,
            "recovered": src.recovered,
            "layout": src.layout,
            # names DXF cannot store, and the legal names the annotated DXF uses for them
            "renamed_in_dxf": [
                {"kind": kind, "name": name, "written_as": new} for kind, name, new in result.linework.renamed
            ],
        },
        "settings": {
            "snap": _num(tol.snap),
            "snap_source": tol.snap_source,
            "near_miss": _num(tol.near_miss),
            "near_miss_source": tol.near_miss_source,
            "units": s.units,
            "layers": list(s.layers),
            "loads": s.loads,
            "force_unit": t.force_unit,
        },
        "title_block": _title_block(result),
        "assumptions": assumptions(result),
        "line_work": _line_work(result),
        "joints": _joints(result, jid, xs, ys)
        if pieces is None or result.plane is not None or result.planes is not None
        else _piece(pieces, "joints", lambda: _joints_text(jid, xs, ys)),
        "members": _piece(pieces, "members", lambda: _members_text(t, jid, mid, lengths))
        if pieces is not None
        else [
            {
                "id": mid[e],
                "joints": [jid[a], jid[b]],
                "length": lengths[e],
                "layer": t.layers[e],
                "handles": list(t.handles[e]),
                **({"entities": _member_entities(t, e)} if _in_block(t, e) else {}),
            }
            for e, (a, b) in enumerate(t.ends.tolist())
        ],
        "supports": [_support(sp) for sp in t.supports],
        "parts": [
            {
                "id": p.index + 1,
                "name": result.part_name(p.index),
                "same_as": result.part_name(result.same_as[p.index]) if p.index in result.same_as else None,
                "joints": [jid[j] for j in p.joints.tolist()],
                "members": [mid[e] for e in p.members.tolist()],
                "j": st.j,
                "m": st.m,
                "r": st.r,
                "rank": st.rank,
                "mechanisms": st.mechanisms,
                "self_stress": st.self_stress,
                "generic_mechanisms": st.generic_mechanisms,
                "generic_self_stress": st.generic_self_stress,
                "verdict": st.verdict.value,
                "sigma_min": _num(st.sigma_min) if st.sigma_min is not None else None,
                "sigma_max": _num(st.sigma_max) if st.sigma_max is not None else None,
                "rank_gap": _num(st.rank_gap) if st.rank_gap is not None else None,
                "rank_method": st.method,
                **_part_plane(result, p),
            }
            for p, st in zip(t.parts, result.stability, strict=True)
        ],
        "findings": [
            {
                "code": f.code.value,
                "severity": f.severity.value,
                "message": f.message,
                "joints": [joint_id(j) for j in f.joints if j >= 0],
                "members": [member_id(e) for e in f.members],
                "at": [_num(f.at[0]), _num(f.at[1])] if f.at is not None else None,
                **_at_world(result, f),
                "parts": finding_parts(f, index, result.part_names),
                "entities": _finding_entities(t, f),
                "next_step": f.next_step or None,
                "zone": zones[n][0][1] if zones.get(n) else None,
                "zones": [{"page": page, "zone": zone} for page, zone in zones.get(n, [])],
                **({"data": _jsonable(f.data)} if f.data else {}),
            }
            for n, f in enumerate(result.findings, 1)
        ],
        "cases": [_case(result, c, pieces) for c in result.cases],
        "symmetry": {"axis_x": _num(result.symmetry_axis) if result.symmetry_axis is not None else None},
        "engineering": engineering_dict(result, pieces, mid),
        "cut_list": cut_list_dict(cut_list(result), list_members=t.n_members <= JSON_CUT_MEMBERS, member_ids=mid),
        "caution": CAUTION,
    }
    if result.space is not None:
        doc.update(_space(result))
        keys = list(doc)
        at = keys.index("line_work") + 1
        doc = (
            {k: doc[k] for k in keys[:at] if k != "space"}
            | {"space": doc["space"]}
            | {k: doc[k] for k in keys[at:] if k != "space"}
        )
    if result.plane is not None:  # after line_work: the plane the coordinates are in
        keys = list(doc)
        at = keys.index("line_work") + 1
        doc = {k: doc[k] for k in keys[:at]} | {"plane": _plane(result)} | {k: doc[k] for k in keys[at:]}
    return doc


def _case(result: Result, c: CaseResult, pieces: dict[str, str] | None = None) -> dict[str, Any]:
    t = result.truss
    case = next(lc for lc in t.cases if lc.name == c.name)
    out: dict[str, Any] = {
        "name": c.name,
        "assumed": c.assumed,
        "combination": {k: _num(v) for k, v in c.factors} if c.factors else None,
        "loads": [
            {
                "joint": joint_id(ld.joint),
                "fx": _num(ld.fx),
                "fy": _num(ld.fy),
                "source": ld.source.value,
                "label": ld.label,
                "label_source": _origin(ld.origin),
            }
            for ld in case.loads
        ],
        "reactions": [{"joint": joint_id(j), "fx": _num(rx), "fy": _num(ry)} for j, rx, ry in c.reactions],
        "forces": _piece(pieces, f"forces {len(pieces)}", lambda: _forces_text(c.forces))
        if pieces is not None
        else dict(zip((member_id(e) for e in range(len(c.forces))), _nums(c.forces), strict=True)),
        "zero_force": {
            "by_rule": [member_id(e) for e in c.zero_by_rule],
            "by_solution": [member_id(e) for e in c.zero_by_solution],
        },
        "loads_symmetric": c.loads_symmetric,
        "solved_parts": [p + 1 for p in c.solved_parts],
        "residual": _num(c.residual),
    }
    if case.line_loads:
        out["line_loads"] = [_line_load(ll) for ll in case.line_loads]
        tx = sum(ll.total[0] for ll in case.line_loads)
        ty = sum(ll.total[1] for ll in case.line_loads)
        out["line_load_total"] = {"fx": _num(tx), "fy": _num(ty)}
    if c.displacements is not None:
        out["displacements"] = {
            joint_id(j): [_num(dx), _num(dy)] for j, (dx, dy) in enumerate(np.asarray(c.displacements))
        }
    return out


def _line_load(ll: LineLoad) -> dict[str, Any]:
    fx, fy = ll.total
    return {
        "name": ll.name,
        "source": ll.source.value,
        "w": _num(ll.w),
        "written": ll.written,
        "measured": ll.measured,
        "direction": ll.direction,
        "unit_vector": [_num(ll.unit[0]), _num(ll.unit[1])],
        "defaults": list(ll.defaults),
        "members": [member_id(e) for e in ll.members],
        "loaded_length": _num(ll.length),
        "joints": [
            {"joint": joint_id(j), "tributary_length": _num(t), "fx": _num(jx), "fy": _num(jy)}
            for j, t, jx, jy in ll.shares
        ],
        "total": {"fx": _num(fx), "fy": _num(fy)},
    }


def _line_work(result: Result) -> dict[str, Any]:
    """Which drawn lines were used as members, per layer, and what was set aside."""
    sel = result.selection
    if sel is None:
        return {"rule": "option", "fallback": False, "used": [], "set_aside": []}
    return {
        "rule": sel.rule,
        "fallback": sel.fallback,
        "used": [{"layer": name, "lines": n} for name, n in sorted(sel.used.items())],
        "set_aside": [
            {"layer": name, "lines": sum(r.values()), "reasons": dict(sorted(r.items()))}
            for name, r in sorted(sel.set_aside.items())
        ],
    }


#: at most this many entities are listed per finding (the members list is complete)
MAX_FINDING_ENTITIES = 100


def _in_block(t: Truss, e: int) -> bool:
    return e < len(t.entities) and any("/" in k for k in t.entities[e])


def _member_entities(t: Truss, e: int) -> list[dict[str, Any]]:
    return [entity_ref(k, t.layers[e], t.block_names) for k in t.entities[e]]


def _member_entities_text(t: Truss, e: int) -> str:
    """``_dumps(_member_entities(t, e))`` written directly (tens of thousands of block
    members: one small json call each costs more than the text)."""
    enc = _encode_string
    layer = enc(t.layers[e])
    out = []
    for key in t.entities[e]:
        parts = key.split("/")
        inserts = parts[:-1]
        path = ",".join(map(enc, parts[1:]))
        blocks = ",".join(enc(t.block_names.get(h, "")) for h in inserts)
        out.append(f'{{"layer":{layer},"handle":{enc(parts[0])},"path":[{path}],"blocks":[{blocks}]}}')
    return "[" + ",".join(out) + "]"


def _finding_entities(t: Truss, f: Any) -> list[dict[str, Any]]:
    """The entities a finding concerns (docs/report-format.md, entities)."""
    return [entity_ref(k, layer, t.block_names) for k, layer in finding_entities(t, f, MAX_FINDING_ENTITIES)]


def _dumps(data: Any) -> str:
    # no indent: json's C encoder is used only without one (3-5x faster on large reports)
    return json.dumps(data, ensure_ascii=False, allow_nan=False, separators=(",", ":"))


#: a placeholder for a piece of JSON text written separately (see _report)
_PIECE = "\u0000dxftruss piece {}\u0000"


def _piece(pieces: dict[str, str], name: str, text: Any) -> str:
    key = _PIECE.format(name)
    pieces[key] = text()
    return key


def _text_of(x: float | None) -> str:
    return "null" if x is None else repr(x)  # as json writes a float (it refuses NaN here)


def _joints_text(jid: list[str], xs: list[float | None], ys: list[float | None]) -> str:
    enc = _encode_string
    return (
        "["
        + ",".join(
            f'{{"id":{enc(j)},"x":{_text_of(x)},"y":{_text_of(y)}}}' for j, x, y in zip(jid, xs, ys, strict=True)
        )
        + "]"
    )


def _members_text(t: Truss, jid: list[str], mid: list[str], lengths: list[float | None]) -> str:
    enc = _encode_string
    layer_text = {name: enc(name) for name in set(t.layers)}
    joint = [enc(j) for j in jid]
    # which members came from block content (their key paths hold "/"): usually none
    nested = {e for e, keys in enumerate(t.entities) if any("/" in k for k in keys)} if _any_nested(t) else set()
    out = [
        f'{{"id":{enc(mid[e])},"joints":[{joint[a]},{joint[b]}],"length":{_text_of(lengths[e])},'
        f'"layer":{layer_text[layer]},"handles":[{",".join(map(enc, handles))}]'
        + (',"entities":' + _member_entities_text(t, e) if e in nested else "")
        + "}"
        for e, ((a, b), layer, handles) in enumerate(zip(t.ends.tolist(), t.layers, t.handles, strict=True))
    ]
    return "[" + ",".join(out) + "]"


def _any_nested(t: Truss) -> bool:
    return any("/" in k for keys in t.entities for k in keys)


def _forces_text(forces: Any) -> str:
    enc = _encode_string
    return "{" + ",".join(f"{enc(member_id(e))}:{v}" for e, v in enumerate(_texts(forces))) + "}"


def _joined(text: str, pieces: dict[str, str]) -> list[str] | None:
    """``text`` with each placeholder replaced by its piece, as the list of strings it
    is made of in order; None unless every placeholder is there exactly once and
    nothing else looks like one."""
    quoted = {_encode_string(k): v for k, v in pieces.items()}
    head = _encode_string(_PIECE.format(""))[:-7]  # up to the name: '"\\u0000dxftruss piece '
    parts = text.split(head)
    if len(parts) != len(quoted) + 1:
        return None
    out = [parts[0]]
    for part in parts[1:]:
        end = part.find('\\u0000"')
        piece = quoted.pop(head + part[: end + 7], None) if end >= 0 else None
        if piece is None:
            return None
        out.append(piece)
        out.append(part[end + 7 :])
    return out


def to_json(result: Result, zones: dict[int, list[tuple[int, str]]] | None = None) -> str:
    """The report as JSON text: ``report_dict`` as json writes it (compact, UTF-8 kept,
    no NaN), the long lists written piece by piece (the same text, faster)."""
    return "".join(json_chunks(result, zones))


def json_chunks(result: Result, zones: dict[int, list[tuple[int, str]]] | None = None) -> list[str]:
    """:func:`to_json` as a list of strings in order (a file can be written from them
    without the whole text as one more string)."""
    pieces: dict[str, str] = {}
    out = _joined(_dumps(_report(result, pieces, zones)), pieces)
    pieces.clear()  # the list holds what is still needed
    if out is None:  # a name in the drawing holds a placeholder's text: no pieces
        out = [_dumps(report_dict(result, zones))]
    out.append("\n")
    # JSON escapes C0 itself; C1 controls (a lone CSI is an escape sequence on many
    # terminals), bidi and line separators and undecodable bytes are written as \\u
    # escapes too, so the report can go to a terminal (``--json -``) unaltered in meaning;
    # one character at a time, so chunk by chunk is the same (and a chunk of ASCII
    # without DEL has none: the class is DEL and beyond)
    return [chunk if chunk.isascii() and "\x7f" not in chunk else _UNSAFE.sub(_escape_unsafe, chunk) for chunk in out]


def _escape_unsafe(m: re.Match[str]) -> str:
    return f"\\u{ord(m.group()):04x}"


_UNSAFE = re.compile("[\u007f-\u009f\u061c\u200b-\u200f\u2028-\u202e\u2060-\u2069\ufeff\ud800-\udfff]")


def _origin(o: LoadOrigin | None) -> dict[str, Any] | None:
    """Where a load's value came from (docs/report-format.md, label_source)."""
    if o is None:
        return None
    if o.kind == "loads-file":
        return {"kind": "loads-file", "entry": o.entry}
    if o.kind == "line-load":
        return {"kind": "line-load", "line_load": o.text}
    if o.kind == "self-weight":
        return {"kind": "self-weight", "case": o.text}
    return {
        "kind": "text",
        "text": o.text,
        "at": [_num(o.at[0]), _num(o.at[1])] if o.at is not None else None,
        "handle": o.handle,
        "layer": o.layer,
    }
