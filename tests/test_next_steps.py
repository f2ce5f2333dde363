"""Next steps (audit/next_steps.py): each one is checked by doing it and checking again.

A near miss's closing snap is given to --snap and must close that gap and merge nothing
else; a mechanism's suggested member (or support) is drawn and must remove it.
"""

from pathlib import Path

import numpy as np
import pytest

import dxftruss
from dxftruss.findings import Code, Severity
from dxftruss.result import Settings
from tests.drawings import pratt_segments, write_drawing

SUPPORTS = [(0.0, 0.0, "XY"), (24.0, 0.0, "Y")]


def _check(tmp_path: Path, name: str, segments, supports=SUPPORTS, loads=(), **settings):
    path = write_drawing(tmp_path / f"{name}.dxf", segments, supports=supports, loads=loads)
    return dxftruss.check(path, Settings(**settings))


def _codes(result, code):
    return [f for f in result.findings if f.code is code]


def _same_joints(before: np.ndarray, after: np.ndarray, tol: float = 1e-9) -> bool:
    """Every joint of ``before`` has one of ``after`` within ``tol``."""
    d = np.hypot(*(before[:, None, :] - after[None, :, :]).transpose(2, 0, 1))
    return bool(np.all(d.min(axis=1) <= tol))


def _gapped(shift=(0.0, -0.036), which=2):
    """The Pratt truss of tests/drawings.py with one diagonal's lower end pulled off L1.

    U0---U1---
    |  \\  |
    L0---L1---   the diagonal U0-L1 ends 36 mm below L1 (m drawing), clear of every
         '       member's inside, so only joining the two ends closes it
    """
    segs = pratt_segments()
    x1, y1, x2, y2 = segs[which]
    segs[which] = (x1, y1, x2 + shift[0], y2 + shift[1])
    return segs


def test_near_miss_snap_closes_the_gap_and_nothing_else(tmp_path):
    r = _check(tmp_path, "gap", _gapped())
    [nm] = [f for f in _codes(r, Code.NEAR_MISS) if len(f.joints) == 2]
    assert nm.next_step
    assert nm.data["snap_joins_only_this"] is True
    snap = nm.data["closing_snap"]
    assert nm.data["distance"] < snap < nm.data["next_closest"]
    a, b = nm.joints
    again = dxftruss.check(tmp_path / "gap.dxf", Settings(snap=f"{snap}m"))
    assert not _codes(again, Code.NEAR_MISS)
    assert again.truss.n_joints == r.truss.n_joints - 1
    others = np.delete(r.truss.xy, [a, b], axis=0)
    assert _same_joints(others, again.truss.xy)  # no other joint moved or merged
    assert all(st.mechanisms == 0 for st in again.stability)
    # the closing snap is the gap plus a margin of 0.2 %: 1 % below the gap leaves both ends
    # (at that snap L1 lies on the diagonal, so its end past L1 is an overhang's free end)
    below = dxftruss.check(tmp_path / "gap.dxf", Settings(snap=f"{0.99 * nm.data['distance']}m"))
    ends = np.vstack([below.truss.xy, [o.free for o in below.overhangs]])
    assert _same_joints(r.truss.xy[[a, b]], ends)


def test_near_miss_snap_not_offered_when_it_would_join_a_closer_pair(tmp_path):
    # two gaps: 20 mm below L1 and 36 mm above U5; the snap closing the larger joins the smaller too
    segs = _gapped(shift=(0.0, -0.02), which=2)
    x1, y1, x2, y2 = segs[14]  # diagonal L4-U5, upper end pulled 36 mm above U5
    assert (x1, y1, x2, y2) == (16.0, 0.0, 20.0, 3.0)
    segs[14] = (x1, y1, x2, y2 + 0.036)
    r = _check(tmp_path, "two", segs)
    pairs = sorted((f for f in _codes(r, Code.NEAR_MISS) if len(f.joints) == 2), key=lambda f: f.data["distance"])
    assert len(pairs) == 2
    small, large = pairs
    assert small.data["snap_joins_only_this"] is True
    assert large.data["snap_joins_only_this"] is False
    assert large.next_step and "--snap" in large.next_step
    again = dxftruss.check(tmp_path / "two.dxf", Settings(snap=f"{small.data['closing_snap']}m"))
    left = [f for f in _codes(again, Code.NEAR_MISS) if len(f.joints) == 2]
    assert len(left) == 1 and left[0].data["distance"] == pytest.approx(large.data["distance"])
    assert again.truss.n_joints == r.truss.n_joints - 1


def test_joint_to_member_near_miss_snap_splits_only_that_member(tmp_path):
    # an extra hanger at x = 14, mid-panel between L3 and L4: its top end is on the top
    # chord's inside (a joint there), its lower end 25 mm above the bottom chord's inside
    #
    #   U3----+----U4
    #    |    |    |
    #   L3---(.)---L4    hanger end 25 mm above the chord, not on it
    segs = [*pratt_segments(), (14.0, 0.025, 14.0, 3.0)]
    r = _check(tmp_path, "hanger", segs)
    [f] = _codes(r, Code.NEAR_MISS)
    assert len(f.joints) == 1 and len(f.members) == 1  # a joint and the inside of a member
    assert f.data["snap_joins_only_this"] is True and f.next_step
    again = dxftruss.check(tmp_path / "hanger.dxf", Settings(snap=f"{f.data['closing_snap']}m"))
    assert not _codes(again, Code.NEAR_MISS)
    assert again.truss.n_joints == r.truss.n_joints  # the end became a joint on the chord
    assert again.truss.n_members == r.truss.n_members + 1  # the chord member split there, nothing else
    assert _same_joints(r.truss.xy, again.truss.xy)
    assert not _codes(again, Code.DANGLING_MEMBER)


def test_mechanism_steps_together_with_the_near_miss_join_make_the_part_rigid(tmp_path):
    # the hanger drawing above: one motion is the loose end (joined by closing the near
    # miss); the other, the hanger and both its straight joints moving up and down, needs
    # a member; doing both steps leaves no mechanism
    segs = [*pratt_segments(), (14.0, 0.025, 14.0, 3.0)]
    r = _check(tmp_path, "hanger", segs)
    steps = {f.data["mode"]: f.data for f in _codes(r, Code.MECHANISM)}
    assert len(steps) == 2 == r.stability[0].mechanisms
    joins = [d["join"] for d in steps.values() if "join" in d]
    bars = [d["add_member"] for d in steps.values() if "add_member" in d]
    assert len(joins) == 1 and len(bars) == 1
    [near] = _codes(r, Code.NEAR_MISS)
    assert joins[0] == [f"J{near.joints[0] + 1}", f"M{near.members[0] + 1}"]
    snap = near.data["closing_snap"]
    path = write_drawing(tmp_path / "fixed.dxf", _with_bar(segs, r, bars[0]), supports=SUPPORTS)
    fixed = dxftruss.check(path, Settings(snap=f"{snap}m"))
    assert fixed.stability[0].mechanisms == 0
    # the member alone leaves the loose end's motion
    assert _check(tmp_path, "bar only", _with_bar(segs, r, bars[0])).stability[0].mechanisms == 1


def test_straight_joint_mechanism_is_braced_by_the_suggested_member(tmp_path):
    # a triangle whose bottom chord is drawn in two pieces meeting at mid-span with
    # nothing else there: the straight joint J moves across the chord
    #
    #        C
    #      /   \
    #    A---J---B       a load drawn at J keeps it a joint (with nothing there the two
    #        v           pieces would be read as one member, habits.py)
    segs = [(0.0, 0.0, 4.0, 0.0), (4.0, 0.0, 8.0, 0.0), (8.0, 0.0, 4.0, 3.0), (4.0, 3.0, 0.0, 0.0)]
    sup = [(0.0, 0.0, "XY"), (8.0, 0.0, "Y")]
    load = [(4.0, 1.0, 4.0, 0.0, "1 kN", "LOAD")]
    r = _check(tmp_path, "straight", segs, supports=sup, loads=load)
    [mech] = _codes(r, Code.MECHANISM)
    bar = mech.data["add_member"]
    again = _check(tmp_path, "braced", _with_bar(segs, r, bar), supports=sup, loads=load)
    assert again.stability[0].mechanisms == 0
    assert {tuple(r.truss.xy[int(j[1:]) - 1]) for j in bar} == {(4.0, 0.0), (4.0, 3.0)}  # the only bar there is


def _with_bar(segments, result, ids):
    xy = {f"J{i + 1}": tuple(result.truss.xy[i]) for i in range(result.truss.n_joints)}
    (x1, y1), (x2, y2) = xy[ids[0]], xy[ids[1]]
    return [*segments, (x1, y1, x2, y2)]


def test_mechanism_member_suggestion_makes_the_part_rigid(tmp_path):
    # the Pratt truss without its first diagonal: one internal mechanism (the end panel shears)
    segs = [s for i, s in enumerate(pratt_segments()) if i != 2]
    r = _check(tmp_path, "open", segs)
    [mech] = _codes(r, Code.MECHANISM)
    assert mech.next_step and r.stability[0].mechanisms == 1
    ids = mech.data["add_member"]
    again = _check(tmp_path, "closed", _with_bar(segs, r, ids))
    assert again.stability[0].mechanisms == 0
    assert not [f for f in again.findings if f.severity is Severity.ERROR]


def test_two_mechanisms_two_members_that_together_remove_both(tmp_path):
    # two panels without diagonals (L0-U1 side and the far end): two independent mechanisms
    segs = [s for i, s in enumerate(pratt_segments()) if i not in (2, 17)]
    r = _check(tmp_path, "open2", segs)
    mechs = _codes(r, Code.MECHANISM)
    assert r.stability[0].mechanisms == 2 and len(mechs) == 2
    bars = [tuple(f.data["add_member"]) for f in mechs]
    assert len(set(bars)) == 2
    first = _check(tmp_path, "one", _with_bar(segs, r, bars[0]))
    assert first.stability[0].mechanisms == 1  # each member removes one mechanism
    both = _with_bar(_with_bar(segs, r, bars[0]), r, bars[1])
    assert _check(tmp_path, "both", both).stability[0].mechanisms == 0


def test_rigid_mode_suggests_a_restraint_that_stops_it(tmp_path):
    # two rollers and no pin: the truss slides along x
    r = _check(tmp_path, "slide", pratt_segments(), supports=[(0.0, 0.0, "Y"), (24.0, 0.0, "Y")])
    [mech] = _codes(r, Code.MECHANISM)
    assert mech.data["rigid"] is True and mech.next_step
    where = mech.data["add_restraint"]
    j = int(where["joint"][1:]) - 1
    x, y = r.truss.xy[j]
    rollers = [(0.0, 0.0, "Y"), (24.0, 0.0, "Y")]
    supported = any((sx, sy) == (x, y) for sx, sy, _ in rollers)
    supports = [s for s in rollers if (s[0], s[1]) != (x, y)]
    supports.append((x, y, "XY" if supported else where["direction"].upper()))
    again = _check(tmp_path, "held", pratt_segments(), supports=supports)
    assert again.stability[0].mechanisms == 0


def test_a_swinging_stub_is_to_be_erased_not_propped(tmp_path):
    # a 36 mm stub drawn off L2 at a slant: it swings about L2; the step is to erase it
    # (or join its end), and erasing it leaves no mechanism. (Drawn straight on past L2
    # as the vertical's continuation it would be an overhang, habits.py.)
    segs = [*pratt_segments(), (8.0, 0.0, 7.98, -0.03)]
    r = _check(tmp_path, "stub", segs)
    [mech] = _codes(r, Code.MECHANISM)
    [stub] = mech.data["erase_or_join"]
    e = int(stub[1:]) - 1
    ends = {tuple(r.truss.xy[j]) for j in r.truss.ends[e]}
    assert ends == {(7.98, -0.03), (8.0, 0.0)}
    assert _check(tmp_path, "no stub", segs[:-1]).stability[0].mechanisms == 0  # the stub erased


def test_dangling_member_names_its_free_end(tmp_path):
    segs = [*pratt_segments(), (24.0, 3.0, 26.0, 4.0)]  # a stray line off the top right corner
    r = _check(tmp_path, "stray", segs)
    [d] = _codes(r, Code.DANGLING_MEMBER)
    assert d.next_step
    j = d.joints[0]
    assert tuple(r.truss.xy[j]) == pytest.approx((26.0, 4.0))
    assert d.data["free_end"] == pytest.approx([26.0, 4.0])
    assert f"J{j + 1}" in d.next_step


def test_next_steps_in_the_json_terminal_and_pdf(tmp_path):
    import json

    jsonschema = pytest.importorskip("jsonschema")
    pypdf = pytest.importorskip("pypdf")
    from dxftruss.report.json import to_json
    from dxftruss.report.pdf import write_pdf
    from dxftruss.report.text import summary

    r = _check(tmp_path, "gap", _gapped())
    doc = json.loads(to_json(r))
    schema = json.loads((Path(__file__).parent.parent / "docs" / "report.schema.json").read_text())
    jsonschema.Draft202012Validator(schema).validate(doc)
    by_code = {}
    for f in doc["findings"]:
        by_code.setdefault(f["code"], []).append(f["next_step"])
    assert all(isinstance(s, str) and s for s in by_code["dangling-member"] + by_code["mechanism"])
    assert all(s for s in by_code["near-miss"])
    [nm] = [f for f in r.findings if f.code is Code.NEAR_MISS]
    near = [f for f in doc["findings"] if f["code"] == "near-miss"]
    assert [f["data"]["closing_snap"] for f in near] == [nm.data["closing_snap"]]
    text = summary(r, width=200)
    assert text.count("next step:") == sum(1 for f in r.findings if f.next_step)
    out = tmp_path / "gap.pdf"
    write_pdf(r, out)
    pages = " ".join(" ".join((p.extract_text() or "").split()) for p in pypdf.PdfReader(str(out)).pages)
    assert pages.count("next step:") == sum(1 for f in r.findings if f.next_step)
    assert f"--snap {nm.data['closing_snap']}m" in pages
