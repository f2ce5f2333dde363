"""Model assembly: supports, loads, defaults of docs/user-guide.md, Defaults, parts."""

import numpy as np
import pytest

from dxftruss.assemble import UNIT_PANEL_CASE, build_truss, find_parts, upper_outline_joints
from dxftruss.errors import ConfigError
from dxftruss.findings import Code
from dxftruss.loadsfile import parse_loads
from dxftruss.model import Fix, Source
from dxftruss.read import LineWork, LoadMark, SupportMark, TextMark
from dxftruss.snap import build_geometry

#  U0----U1----U2          a two-panel truss, 4 m panels, 3 m deep
#  |  \  |  /  |
#  L0----L1----L2
SEGS = np.array(
    [
        [0, 0, 4, 0],
        [4, 0, 8, 0],
        [0, 3, 4, 3],
        [4, 3, 8, 3],
        [0, 0, 0, 3],
        [4, 0, 4, 3],
        [8, 0, 8, 3],
        [0, 3, 4, 0],
        [8, 3, 4, 0],
    ],
    float,
)


def linework(segs=SEGS, supports=(), loads=(), texts=()):
    n = len(segs)
    return LineWork(
        segments=segs,
        handles=tuple(f"h{i}" for i in range(n)),
        layers=("TRUSS",) * n,
        supports=tuple(supports),
        loads=tuple(loads),
        texts=tuple(texts),
        dxf_version="AC1027",
        length_unit="m",
        findings=(),
    )


def build(lw, spec=None, near=0.08):
    g = build_geometry(lw.segments, lw.handles, lw.layers, snap=1e-6)
    return build_truss(g, lw, spec, near_miss=near, length_unit="m", outline_tol=1e-6)


def jid(t, x, y):
    return int(np.flatnonzero((np.abs(t.xy - (x, y)) < 1e-9).all(axis=1))[0])


def test_default_supports_and_loads():
    t = build(linework())
    sup = {(s.joint, s.fix, s.source) for s in t.supports}
    assert sup == {(jid(t, 0, 0), Fix.XY, Source.DEFAULT), (jid(t, 8, 0), Fix.Y, Source.DEFAULT)}
    codes = {f.code for f in t.findings}
    assert Code.ASSUMED_SUPPORTS in codes and Code.ASSUMED_LOADS in codes
    (case,) = t.cases
    assert case.name == UNIT_PANEL_CASE and case.assumed
    # upper outline: the three top joints, 1 force unit down each
    assert sorted(ld.joint for ld in case.loads) == sorted(jid(t, x, 3) for x in (0, 4, 8))
    assert all(ld.fx == 0 and ld.fy == -1 for ld in case.loads)


def test_upper_outline_includes_collinear_joints_and_apex():
    #        A(4,3)
    #       /  |  \
    #  (0,0)-(4,0)-(8,0)      plus a collinear joint (2,1.5) on the left rafter
    xy = np.array([[0, 0], [2, 1.5], [4, 0], [4, 3], [8, 0]], float)
    on = upper_outline_joints(xy, np.arange(5), tol=1e-9)
    assert on.tolist() == [0, 1, 3, 4]


def test_drawn_supports_and_loads_with_label():
    lw = linework(
        supports=[SupportMark(0.0, 0.0, Fix.XY, "s1", "SUPPORT-XY"), SupportMark(8.02, 0.0, Fix.Y, "s2", "SUPPORT-Y")],
        loads=[LoadMark((4.0, 2.0), (4.0, 0.0), "deck", "l1", "LOAD-deck")],  # arrow head at L1 (4, 0)
        texts=[TextMark(4.2, 1.0, "18 kN", "LOAD-deck", "t1"), TextMark(50, 50, "99 kN", "LOAD-deck", "t2")],
    )
    t = build(lw)
    assert [(s.joint, s.fix) for s in t.supports] == [(jid(t, 0, 0), Fix.XY), (jid(t, 8, 0), Fix.Y)]
    (case,) = t.cases
    assert case.name == "deck"
    (ld,) = case.loads
    assert ld.joint == jid(t, 4, 0) and ld.fx == pytest.approx(0) and ld.fy == pytest.approx(-18)
    assert not any(f.code in (Code.ASSUMED_LOADS, Code.ASSUMED_SUPPORTS) for f in t.findings)


def test_drawn_problems_are_findings():
    lw = linework(
        supports=[SupportMark(2.0, 1.0, Fix.XY, "s1", "SUPPORT-XY")],
        loads=[LoadMark((2.0, 2.0), (2.0, 1.5), "main", "l1", "LOAD"), LoadMark((4, 5), (4, 3), "main", "l2", "LOAD")],
    )
    t = build(lw)
    codes = sorted(f.code.value for f in t.findings)
    assert "support-off-joint" in codes and "load-off-joint" in codes and "load-without-value" in codes


def test_loads_file_points_must_hit_a_joint():
    spec = parse_loads({"load": [{"at": [4.5, 0.0], "fy": -1}]}, "my.toml")
    with pytest.raises(ConfigError) as err:
        build(linework(), spec)
    msg = str(err.value)
    assert "my.toml: [[load]] #1" in msg and "nearest is J" in msg and "0.5 away" in msg


def test_combination_sums_factored_cases():
    spec = parse_loads(
        {
            "load": [{"at": [4, 0], "fy": -10, "case": "dead"}, {"at": [4, 0], "fy": -4, "case": "snow"}],
            "combination": [{"name": "ULS", "factors": {"dead": 1.35, "snow": 1.5}}],
        }
    )
    t = build(linework(), spec)
    uls = next(c for c in t.cases if c.name == "ULS")
    f = uls.load_vector(t.n_joints)
    assert f[2 * jid(t, 4, 0) + 1] == pytest.approx(-10 * 1.35 - 4 * 1.5)
    assert [c.name for c in t.cases] == ["dead", "snow", "ULS"]


def test_parts_are_numbered_from_the_left():
    segs = np.vstack([SEGS + np.array([100, 0, 100, 0]), SEGS])
    lw = linework(segs)
    t = build(lw)
    assert len(t.parts) == 2 and t.parts[0].joints.min() == 0
    # each part got its own pair of assumed supports
    assert len(t.supports) == 4
    parts = find_parts(t.n_joints, t.ends)
    assert sum(p.members.size for p in parts) == t.n_members


def test_unread_drawn_loads_leave_their_case_unsolved_and_labels_are_kept():
    # "12 T" may be a tonne or a short ton: the case must not be solved with either
    lw = linework(
        supports=[SupportMark(0.0, 0.0, Fix.XY, "s1", "SUPPORT-XY"), SupportMark(8.0, 0.0, Fix.Y, "s2", "SUPPORT-Y")],
        loads=[
            LoadMark((4.0, 2.0), (4.0, 0.0), "deck", "l1", "LOAD-deck"),
            LoadMark((0.0, 5.0), (0.0, 3.0), "snow", "l2", "LOAD-snow"),
            LoadMark((8.0, 5.0), (8.0, 3.0), "wind", "l3", "LOAD-wind"),
        ],
        texts=[TextMark(4.2, 1.0, "P1 = 18 kN", "LOAD-deck", "t1"), TextMark(0.2, 4.0, "12 T", "LOAD-snow", "t2")],
    )
    t = build(lw)
    by = {c.name: c for c in t.cases}
    assert by["deck"].unread == 0 and by["deck"].loads[0].label == "P1 = 18 kN"
    assert by["snow"].unread == 1 and by["snow"].loads == ()  # unclear label
    assert by["wind"].unread == 1  # no text on its layer: load-without-value
    codes = {f.code for f in t.findings}
    assert Code.LOAD_LABEL_UNCLEAR in codes and Code.LOAD_WITHOUT_VALUE in codes
