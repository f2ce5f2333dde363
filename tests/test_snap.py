"""Snapping endpoints into joints, splitting lines at joints, merging duplicates."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from dxftruss.findings import Code
from dxftruss.snap import build_geometry, cluster_points

from .drawings import pratt_segments


def geom(segs, snap=1e-6, layers=None):
    segs = np.asarray(segs, float)
    n = len(segs)
    return build_geometry(segs, tuple(f"h{i}" for i in range(n)), tuple(layers or ["T"] * n), snap=snap)


def codes(g):
    return sorted(f.code for f in g.findings)


def test_no_chaining():
    # 100 points 0.9 tol apart in a row: a chaining union-find would make one joint
    # 89 tol long (docs/methods.md, Library behaviour); leader clustering keeps every cluster within 2 tol.
    tol = 1.0
    pts = np.column_stack([np.arange(100) * 0.9 * tol, np.zeros(100)])
    label, centres = cluster_points(pts, tol=tol)
    for c in np.unique(label):
        members = pts[label == c]
        assert np.ptp(members[:, 0]) <= 2 * tol
    assert len(centres) >= 100 / 3


def test_close_endpoints_join_and_far_ones_do_not():
    #   (0,0) ---- (10,0) + 1e-7 noise ---- (20,0)
    g = geom([[0, 0, 10, 0], [10 + 1e-7, 1e-7, 20, 0]], snap=1e-6)
    assert len(g.xy) == 3 and len(g.ends) == 2
    g = geom([[0, 0, 10, 0], [10.01, 0, 20, 0]], snap=1e-6)
    assert len(g.xy) == 4


def test_chord_drawn_once_is_split_at_panel_points():
    #   U1 ----- U2
    #   /|       |\
    # L0-L1-----L2-L3   bottom chord drawn as one line L0..L3
    segs = [[0, 0, 12, 0], [0, 0, 4, 3], [4, 0, 4, 3], [4, 3, 8, 3], [8, 0, 8, 3], [8, 3, 12, 0], [4, 0, 8, 3]]
    g = geom(segs)
    assert len(g.xy) == 6 and len(g.ends) == 9
    split = [f for f in g.findings if f.code is Code.SPLIT_MEMBER]
    assert len(split) == 1 and len(split[0].members) == 3 and split[0].data["handle"] == "h0"
    # every member of the split line keeps the handle of the line it came from
    bottom = [e for e, (a, b) in enumerate(g.ends) if g.xy[a, 1] == 0 and g.xy[b, 1] == 0]
    assert len(bottom) == 3 and all(g.handles[e] == ("h0",) for e in bottom)


def test_duplicates_and_collinear_overlap():
    # A: 0..10 and B: 5..15 overlap on 5..10 (collinear); C is A drawn twice
    g = geom([[0, 0, 10, 0], [5, 0, 15, 0], [10, 0, 0, 0]])
    dups = [f for f in g.findings if f.code is Code.DUPLICATE_MEMBER]
    assert len(g.ends) == 3  # 0-5, 5-10, 10-15
    assert len(dups) == 2
    counts = sorted(f.data["count"] for f in dups)
    assert counts == [2, 3]  # 0-5 drawn twice (A, C); 5-10 three times (A, B, C)


def test_zero_length_line_is_reported_and_dropped():
    g = geom([[0, 0, 10, 0], [5, 5, 5, 5 + 1e-9]], snap=1e-6)
    assert Code.ZERO_LENGTH_MEMBER in codes(g) and len(g.ends) == 1


def test_ids_follow_coordinates():
    g = geom([[4, 3, 0, 0], [0, 0, 4, 0], [4, 0, 4, 3]])
    assert g.xy.tolist() == [[0, 0], [4, 0], [4, 3]]
    assert g.ends.tolist() == [[0, 1], [0, 2], [1, 2]]


def pratt():
    return np.array(pratt_segments(), float)


@settings(max_examples=25, deadline=None, derandomize=True)
@given(seed=st.integers(0, 10_000))
def test_same_ids_after_shuffle_and_reversal(seed):
    # property: entity order and line direction do not change joints, members or ids
    rng = np.random.default_rng(seed)
    segs = pratt()
    base = geom(segs)
    perm = rng.permutation(len(segs))
    flipped = segs[perm].copy()
    rev = rng.random(len(segs)) < 0.5
    flipped[rev] = flipped[rev][:, [2, 3, 0, 1]]
    other = geom(flipped)
    assert np.array_equal(base.xy, other.xy)
    assert np.array_equal(base.ends, other.ends)


def test_snapping_snapped_work_changes_nothing():
    g = geom(pratt())
    again = geom(np.hstack([g.xy[g.ends[:, 0]], g.xy[g.ends[:, 1]]]))
    assert np.array_equal(g.xy, again.xy) and np.array_equal(g.ends, again.ends)


@pytest.mark.parametrize("snap", [0.0, 1e-9, 1e-3])
def test_exact_drawings_do_not_depend_on_snap(snap):
    g = geom(pratt(), snap=snap)
    assert len(g.xy) == 14 and len(g.ends) == 25


def test_line_pieces_remembered_only_for_the_same_lines():
    # reference: line_pieces is a pure function of (lines, snap); the remembered answer
    # must be the freshly computed one, and any change of a bit or of snap recomputes
    from dxftruss import snap as snap_mod

    seg = np.asarray(pratt_segments(6, 2.0, 1.5), float)
    snap_mod.forget_pieces()
    first = snap_mod.line_pieces(seg, snap=0.01)
    assert snap_mod.line_pieces(seg.copy(), snap=0.01) is first
    with pytest.raises(ValueError):
        first.pa[0] = 0  # read-only: no caller can change the remembered answer
    fresh = snap_mod._line_pieces(np.ascontiguousarray(seg), 0.01)
    assert all(np.array_equal(getattr(first, k), getattr(fresh, k)) for k in ("centres", "label", "src", "pa", "pb"))
    assert first.split_info == fresh.split_info
    second = snap_mod.line_pieces(seg, snap=0.02)
    assert second is not first
    moved = seg.copy()
    moved[0, 0] = -0.0 if moved[0, 0] == 0.0 else np.nextafter(moved[0, 0], np.inf)  # -0.0 == 0.0, other bits
    assert snap_mod.line_pieces(moved, snap=0.02) is not second
    snap_mod.forget_pieces()
