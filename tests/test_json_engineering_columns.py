"""The ``engineering`` JSON object written column by column (each distinct number
formatted once) gives the same JSON text as the plain member-by-member computation
written out below (the definitions of docs/report-format.md, engineering; no other
source), on the footbridge sample (envelope, member checks, a moving load)."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from dxftruss import Settings, check
from dxftruss.model import member_id
from dxftruss.report.json import _num, _nums, _texts
from dxftruss.report.json_engineering import engineering_dict

SAMPLES = Path(__file__).resolve().parent.parent / "samples"


def _plain_members(result):
    env = result.engineering.envelope
    names = [s.name for s in env.sources]

    def src(k):
        return names[k] if k >= 0 else None

    out = {}
    for e in range(result.truss.n_members):
        if not (np.isfinite(env.tension[e]) or np.isfinite(env.compression[e])):
            continue
        out[member_id(e)] = {
            "tension": _num(env.tension[e]),
            "tension_from": src(int(env.tension_source[e])) if env.tension[e] > 0 else None,
            "tension_at": _num(env.tension_station[e]),
            "compression": _num(env.compression[e]),
            "compression_from": src(int(env.compression_source[e])) if env.compression[e] < 0 else None,
            "compression_at": _num(env.compression_station[e]),
        }
    return out


def _plain_checks(result):
    eng, t = result.engineering, result.truss
    ch, ms = eng.checks, eng.sections
    out = {}
    for e in np.flatnonzero(ms.given).tolist():
        out[member_id(e)] = {
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
    return out


def _plain_moving(result, mv):
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
    return extremes, lines


def _text(x):
    return json.dumps(x, ensure_ascii=False, allow_nan=False, separators=(",", ":"))


def test_engineering_columns_give_the_plain_json_text():
    r = check(SAMPLES / "footbridge_truss.dxf", Settings(loads=str(SAMPLES / "footbridge_truss.toml")))
    eng = engineering_dict(r)
    assert eng is not None and eng["member_checks"]["members"] and eng["moving_loads"]
    assert _text(eng["envelope"]["members"]) == _text(_plain_members(r))
    assert _text(eng["member_checks"]["members"]) == _text(_plain_checks(r))
    for got, mv in zip(eng["moving_loads"], r.engineering.moving, strict=True):
        extremes, lines = _plain_moving(r, mv)
        assert _text(got["extremes"]) == _text(extremes)
        assert _text(got["influence_lines"]["lines"]) == _text(lines)


def test_each_distinct_number_formatted_once_gives_every_number_as_alone():
    # repeated values, NaN, infinities and -0.0 among 5,000 numbers
    rng = np.random.default_rng(7)
    pool = np.concatenate([rng.normal(size=50) * 1e3, [np.nan, np.inf, -np.inf, -0.0, 0.0, 1e-300, 1 / 3]])
    values = rng.choice(pool, size=5000)
    assert _text(_nums(values)) == _text([_num(v) for v in values.tolist()])
    # and as JSON text: what json writes of each number alone
    assert _texts(values) == [_text(_num(v)) for v in values.tolist()]
    assert _texts(values[:10]) == [_text(_num(v)) for v in values[:10].tolist()]
