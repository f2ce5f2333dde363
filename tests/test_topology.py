"""Topology audit: dangling members, near misses, unjoined crossings, parts."""

import numpy as np

from dxftruss.assemble import build_truss
from dxftruss.audit.topology import audit_topology
from dxftruss.findings import Code
from dxftruss.read import LineWork
from dxftruss.snap import build_geometry


def truss_of(segs, snap=1e-6, near=0.1):
    segs = np.asarray(segs, float)
    n = len(segs)
    lw = LineWork(segs, tuple(f"h{i}" for i in range(n)), ("T",) * n, (), (), (), "AC1027", "m", ())
    g = build_geometry(segs, lw.handles, lw.layers, snap=snap)
    t = build_truss(g, lw, None, near_miss=near, length_unit="m", outline_tol=1e-6)
    return t, audit_topology(t, snap=snap, near_miss=near)


TRI = [[0, 0, 4, 0], [4, 0, 2, 3], [2, 3, 0, 0]]


def by_code(findings, code):
    return [f for f in findings if f.code is code]


def test_clean_triangle_has_no_topology_findings():
    _, fs = truss_of(TRI)
    assert fs == []


def test_dangling_stub():
    #    /\__ stub from the apex to (3, 3)
    t, fs = truss_of([*TRI, [2, 3, 3, 3]])
    (f,) = by_code(fs, Code.DANGLING_MEMBER)
    assert t.xy[f.joints[0]].tolist() == [3, 3]


def test_near_miss_joint_to_joint_and_joint_to_member():
    # a web end stops 0.05 short of the apex, another 0.05 short of the bottom chord
    _t, fs = truss_of([*TRI, [1, 0, 2, 2.95], [2, 3, 2.5, 0.05]])
    near = by_code(fs, Code.NEAR_MISS)
    dists = sorted(round(f.data["distance"], 6) for f in near)
    assert dists == [0.05, 0.05]
    assert not by_code(fs, Code.UNJOINED_CROSSING)


def test_crossing_without_joint():
    #  X bracing in a square: the diagonals cross at (2, 2) with no joint
    sq = [[0, 0, 4, 0], [4, 0, 4, 4], [4, 4, 0, 4], [0, 4, 0, 0], [0, 0, 4, 4], [4, 0, 0, 4]]
    _, fs = truss_of(sq)
    (f,) = by_code(fs, Code.UNJOINED_CROSSING)
    assert np.allclose(f.at, (2, 2))


def test_t_junction_is_split_not_crossing():
    sq = [[0, 0, 4, 0], [4, 0, 4, 4], [4, 4, 0, 4], [0, 4, 0, 0], [2, 0, 2, 4]]
    t, fs = truss_of(sq)
    assert not by_code(fs, Code.UNJOINED_CROSSING) and t.n_members == 7


def test_disconnected_parts():
    t, fs = truss_of(TRI + [[x + 10, y, u + 10, v] for x, y, u, v in TRI])
    assert len(by_code(fs, Code.DISCONNECTED_PART)) == 2 and len(t.parts) == 2


def test_no_members():
    _t, fs = truss_of(np.zeros((0, 4)))
    assert [f.code for f in fs] == [Code.NO_MEMBERS]
