"""Line loads (a load per length along a chord) and their lumping to joint loads.

Glossary:
    chain        the members lying on the straight segment between two joints, end to
                 end: each one's joints on the segment (within the snap tolerance) and
                 together covering it once, without gaps or overlaps.
    tributary    the length of chord a joint takes its share from: half of each loaded
                 member meeting it (as measured: along the member or its horizontal
                 projection).
    lumping      each loaded member's share w x L goes half to each of its end joints.
                 For a pin-jointed truss this is the usual assumption: the joint loads
                 have the same resultant and give the same member axial forces as the
                 distributed load carried by simply supported members between joints;
                 the bending of a member loaded along its length is not checked.
    row          on the drawing: load lines on one load layer whose nearest text is one
                 per-length label (``0.75 kN/m``), optionally with one line joining
                 their tails; the arrows' heads lie on one chord.

Loads-file problems raise ConfigError; a drawn row that cannot be read without a guess is
a ``load-label-unclear`` finding and its case is not solved.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .errors import ConfigError
from .escape import shown
from .findings import Code, Finding
from .labels import LabelReading
from .loadsfile import LineLoadEntry, LoadsSpec
from .model import LineLoad, Load, LoadOrigin, Source, joint_id, member_id
from .units import FORCE_UNITS, LENGTH_UNITS, LengthFormat, plain_number

#: arrows of one drawn row must be parallel: |sin(angle)| between any two at most this
PARALLEL_SIN = 1e-3


class ChainError(ValueError):
    """The segment does not follow members exactly (the message says what was found)."""


def _pt(xy: np.ndarray, j: int, unit: str = "drawing units") -> str:
    return f"{joint_id(j)} ({float(xy[j, 0]):.6g}, {float(xy[j, 1]):.6g}) {unit}"


def find_chain(
    xy: np.ndarray, ends: np.ndarray, j0: int, j1: int, tol: float, unit: str = "drawing units"
) -> tuple[int, ...]:
    """The members from joint ``j0`` to joint ``j1`` along the straight segment between them.

    Raises ChainError when the segment is not covered exactly once by members whose
    joints lie on it within ``tol``."""
    p, q = xy[j0], xy[j1]
    span = float(np.hypot(*(q - p)))
    if j0 == j1 or span <= tol:
        raise ChainError(f"it starts and ends at the same joint {_pt(xy, j0, unit)}")
    u = (q - p) / span
    if len(ends) == 0:
        raise ChainError("the drawing has no members")
    a, b = xy[ends[:, 0]] - p, xy[ends[:, 1]] - p
    ta, tb = a @ u, b @ u
    da, db = np.abs(a[:, 0] * u[1] - a[:, 1] * u[0]), np.abs(b[:, 0] * u[1] - b[:, 1] * u[0])
    on = (da <= tol) & (db <= tol) & (np.minimum(ta, tb) >= -tol) & (np.maximum(ta, tb) <= span + tol)
    on &= np.abs(tb - ta) > tol
    cand = np.flatnonzero(on)
    if len(cand) == 0:
        raise ChainError(f"no member lies on the segment from {_pt(xy, j0, unit)} to {_pt(xy, j1, unit)}")
    starts: dict[int, list[int]] = {}
    for e in cand.tolist():
        lo = int(ends[e, 0]) if ta[e] < tb[e] else int(ends[e, 1])
        starts.setdefault(lo, []).append(e)
    chain: list[int] = []
    cur = j0
    while cur != j1:
        nxt = starts.get(cur, [])
        if not nxt:
            reached = float((xy[cur] - p) @ u)
            raise ChainError(
                f"the members on the segment from {_pt(xy, j0, unit)} to {_pt(xy, j1, unit)} stop at "
                f"{_pt(xy, cur, unit)}, {reached:.6g} {unit} of {span:.6g} {unit} along it: no member on the "
                "segment continues from there"
            )
        if len(nxt) > 1:
            raise ChainError(
                f"{len(nxt)} members on the segment start at {_pt(xy, cur, unit)} ({', '.join(map(member_id, nxt))}): "
                "the chain is not one line of members"
            )
        e = nxt[0]
        chain.append(e)
        cur = int(ends[e, 1]) if int(ends[e, 0]) == cur else int(ends[e, 0])
    extra = sorted(set(cand.tolist()) - set(chain))
    if extra:
        raise ChainError(
            f"members {', '.join(map(member_id, extra))} also lie on the segment and overlap the chain "
            f"{', '.join(map(member_id, chain))}"
        )
    return tuple(chain)


def lump(
    xy: np.ndarray,
    ends: np.ndarray,
    members: Sequence[int],
    *,
    w: float,
    measured: str,
    unit: tuple[float, float],
    metres_per_unit: float,
    newtons_per_force: float,
) -> tuple[tuple[tuple[int, float, float, float], ...], float]:
    """Joint shares ((joint, tributary length, fx, fy), ...) in chain order, and the loaded length.

    Each member's share w x L (L its length, or its horizontal projection when
    ``measured`` is "horizontal"; drawing units) goes half to each end joint; ``w`` in
    N/m, forces in the unit of ``newtons_per_force`` N."""
    trib: dict[int, float] = {}
    for e in members:
        a, b = int(ends[e, 0]), int(ends[e, 1])
        d = xy[b] - xy[a]
        length = abs(float(d[0])) if measured == "horizontal" else float(np.hypot(*d))
        for j in (a, b):
            trib[j] = trib.get(j, 0.0) + length / 2
    per = w * metres_per_unit / newtons_per_force  # force per drawing unit of length
    shares = tuple((j, t, per * t * unit[0], per * t * unit[1]) for j, t in trib.items())
    return shares, sum(trib.values())


def _direction(direction: str | tuple[float, float], p: np.ndarray, q: np.ndarray) -> tuple[str, tuple[float, float]]:
    """("down" | "normal" | "given", unit vector). "normal" is to the right walking from p to q."""
    if direction == "down":
        return "down", (0.0, -1.0)
    if direction == "normal":
        d = (q - p) / float(np.hypot(*(q - p)))
        return "normal", (float(d[1]), float(-d[0]))
    assert isinstance(direction, tuple)
    return "given", (float(direction[0]), float(direction[1]))


def _near_joint(tree: Any, xy: np.ndarray, point: tuple[float, float] | np.ndarray) -> tuple[float, int]:
    if tree is None:
        return float("inf"), -1
    d, i = tree.query(np.asarray(point, dtype=float))
    if not np.isfinite(d) or i >= tree.n:
        return float("inf"), -1
    return float(d), int(i)


def file_line_loads(
    spec: LoadsSpec,
    tree: Any,
    xy: np.ndarray,
    ends: np.ndarray,
    *,
    near_miss: float,
    snap: float,
    length_unit: str,
    force_unit: str,
) -> list[tuple[str, LineLoad]]:
    """(case, LineLoad) for every ``[[line_load]]``/``[[area_load]]``; ConfigError naming the
    entry when its ends have no joint or the segment does not follow members."""
    out = []
    for entry in spec.line_loads:
        where = f"{spec.path}: {entry.name} from {list(entry.start)} to {list(entry.end)}"
        js = []
        for key, point in (("from", entry.start), ("to", entry.end)):
            d, j = _near_joint(tree, xy, point)
            if d > near_miss:
                near = f"; nearest is {_pt(xy, j, length_unit)}, {d:.6g} {length_unit} away" if j >= 0 else ""
                raise ConfigError(f"{where}: '{key}' has no joint within {near_miss:.6g} {length_unit}{near}")
            js.append(j)
        try:
            chain = find_chain(xy, ends, js[0], js[1], snap, length_unit)
        except ChainError as exc:
            raise ConfigError(f"{where}: does not follow members: {exc}; give from/to at joints of one chord") from None
        out.append((entry.case, _make(entry, xy, ends, js[0], js[1], chain, length_unit, force_unit)))
    return out


def _make(
    entry: LineLoadEntry,
    xy: np.ndarray,
    ends: np.ndarray,
    j0: int,
    j1: int,
    chain: tuple[int, ...],
    length_unit: str,
    force_unit: str,
) -> LineLoad:
    kind, unit = _direction(entry.direction, xy[j0], xy[j1])
    shares, length = lump(
        xy,
        ends,
        chain,
        w=entry.w,
        measured=entry.measured,
        unit=unit,
        metres_per_unit=LENGTH_UNITS[length_unit],
        newtons_per_force=FORCE_UNITS[force_unit],
    )
    return LineLoad(
        entry.name,
        Source.LOADS_FILE,
        entry.w,
        entry.written,
        entry.measured,
        kind,
        unit,
        entry.defaults,
        chain,
        length,
        shares,
    )


def joint_loads(ll: LineLoad) -> list[Load]:
    """The lumped joint loads of a line load (label: the line load's name)."""
    origin = LoadOrigin("line-load", text=ll.name)
    return [Load(j, fx, fy, ll.source, ll.name, origin) for j, _, fx, fy in ll.shares]


def lumped_finding(ll: LineLoad, case: str, xy: np.ndarray, fmt: LengthFormat, force_unit: str) -> Finding:
    """The ``line-load-lumped`` warning: what was lumped, how, and what is not checked."""
    measured = "along the members" if ll.measured == "along" else "per horizontal length"
    acting = {"down": "downward", "normal": "normal to the members", "given": "along the given direction"}[ll.direction]
    if ll.source is Source.DRAWING:
        acting = "along the drawn arrows"
    said = list(ll.defaults)
    default_note = f" ({' and '.join(said)} by default)" if said else ""
    fx, fy = ll.total
    joints = ", ".join(f"{joint_id(j)} {fmt(t)}" for j, t, _, _ in ll.shares)
    message = (
        f"{ll.name}: {shown(ll.written)} on load case '{shown(case)}', measured {measured}, acting {acting}"
        f"{default_note}, over {', '.join(map(member_id, ll.members))} (loaded length {fmt(ll.length)}): "
        f"lumped to the joints by tributary length ({joints}), half of each member's share to each end - the "
        f"usual assumption for a pin-jointed truss; total ({plain_number(fx)}, {plain_number(fy)}) {force_unit}. "
        "The loaded members also bend between their joints, which this check does not cover"
    )
    return Finding(
        Code.LINE_LOAD_LUMPED,
        message,
        joints=tuple(s[0] for s in ll.shares),
        members=ll.members,
        at=(float(xy[ll.shares[0][0], 0]), float(xy[ll.shares[0][0], 1])),
        data={"case": case, "line_load": ll.name},
    )


@dataclass
class DrawnRows:
    """What :func:`drawn_line_loads` found: marks it took, line loads, findings, unread cases."""

    claimed: set[int] = field(default_factory=set)
    loads: list[tuple[str, LineLoad]] = field(default_factory=list)
    findings: list[Finding] = field(default_factory=list)
    unread: Counter[str] = field(default_factory=Counter)


def _seg_dist(points: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Distance from each of ``points`` (k, 2) to each segment a[i]-b[i] (m, 2): (k, m)."""
    d = b - a
    dd = np.einsum("ij,ij->i", d, d)
    rel = points[:, None, :] - a[None, :, :]
    t = np.clip(np.einsum("kij,ij->ki", rel, d) / np.where(dd > 0, dd, 1.0), 0.0, 1.0)
    foot = a[None, :, :] + t[..., None] * d[None, :, :]
    return np.hypot(*(points[:, None, :] - foot).transpose(2, 0, 1))


def drawn_line_loads(
    marks: Sequence[Any],
    texts: Sequence[Any],
    label_of: Callable[[Any], str | None],
    read: Callable[[str], LabelReading],
    xy: np.ndarray,
    ends: np.ndarray,
    tree: Any,
    *,
    near_miss: float,
    snap: float,
    length_unit: str,
    force_unit: str,
    skip_cases: set[str],
    not_solved: Callable[[str], str],
) -> DrawnRows:
    """Find the drawn rows of arrows under per-length labels and make them line loads.

    Every load line whose label (``label_of``) reads as a load per length is claimed (the
    joint-load reading leaves it alone); its row becomes one line load, or one
    ``load-label-unclear`` finding when the row or the chord under it is not unambiguous."""
    out = DrawnRows()
    groups: dict[tuple[str, int], list[int]] = {}
    readings: dict[tuple[str, int], LabelReading] = {}
    for i, mark in enumerate(marks):
        text = label_of(mark)
        if text is None:
            continue
        reading = read(text)
        if reading.kind != "per-length":
            continue
        out.claimed.add(i)
        if mark.case in skip_cases:
            continue
        key = (mark.layer.upper(), _which_text(texts, mark, text))
        groups.setdefault(key, []).append(i)
        readings[key] = reading
    a_all, b_all = xy[ends[:, 0]], xy[ends[:, 1]]
    for key, idx in groups.items():
        reading = readings[key]
        rows = [marks[i] for i in idx]
        case = rows[0].case
        where = f"drawn line load ({shown(rows[0].layer)}, label '{shown(reading.text)}')"
        try:
            if len({m.case for m in rows}) > 1:
                raise ChainError("its load lines are on layers of different cases")
            ll = _row(rows, reading, where, xy, ends, a_all, b_all, tree, near_miss, snap, length_unit, force_unit)
        except ChainError as exc:
            out.unread[case] += 1
            w = plain_number(reading.value) if reading.value is not None else "?"
            out.findings.append(
                Finding(
                    Code.LOAD_LABEL_UNCLEAR,
                    f"{where}: a load per length ({w} N/m) on {len(rows)} load line(s), but {exc}; "
                    "draw a row of parallel arrows with their heads on the joints and members of one chord "
                    f"(first and last on joints), or give it in the loads file as [[line_load]]; {not_solved(case)}",
                    at=rows[0].start,
                    data={"case": case, "label": reading.text, "handles": [m.handle for m in rows]},
                )
            )
            continue
        notes = list(reading.assumptions)
        if reading.negative:
            notes.append("the minus sign is not used: the arrows give the direction")
        if notes:
            out.findings.append(
                Finding(
                    Code.LOAD_LABEL_ASSUMPTION,
                    f"{where}: label '{shown(reading.text)}' read as {plain_number(ll.w)} N/m along the arrows: "
                    + "; ".join(notes),
                    at=rows[0].start,
                    data={"case": case, "label": reading.text, "assumptions": notes},
                )
            )
        out.loads.append((case, ll))
    return out


def _which_text(texts: Sequence[Any], mark: Any, text: str) -> int:
    """Index of the nearest text on the mark's layer that reads ``text`` (two labels with the
    same words are two rows)."""
    a, b = np.asarray(mark.start, float), np.asarray(mark.end, float)
    best, best_d = -1, float("inf")
    for k, t in enumerate(texts):
        if str(t.text) != text or t.layer.upper() != mark.layer.upper():
            continue
        d = float(_seg_dist(np.array([[t.x, t.y]], float), a[None, :], b[None, :])[0, 0])
        if d < best_d:
            best, best_d = k, d
    return best


def _row(
    rows: list[Any],
    reading: LabelReading,
    where: str,
    xy: np.ndarray,
    ends: np.ndarray,
    a_all: np.ndarray,
    b_all: np.ndarray,
    tree: Any,
    near_miss: float,
    snap: float,
    length_unit: str,
    force_unit: str,
) -> LineLoad:
    """One drawn row -> a line load; ChainError saying what is ambiguous."""
    seg = np.array([[*m.start, *m.end] for m in rows], dtype=float)
    starts, stops = seg[:, :2], seg[:, 2:]
    # a line joining the tails: a load line that two or more of the others end on
    ends_pts = np.vstack([starts, stops])
    touching = _seg_dist(ends_pts, starts, stops) <= near_miss  # (2n, n)
    n = len(rows)
    hits = np.array([sum(1 for k in range(n) if k != i and (touching[k, i] or touching[n + k, i])) for i in range(n)])
    tails = np.flatnonzero(hits >= 2)
    if len(tails) > 1:
        raise ChainError(f"{len(tails)} of them each join the others' tails; only one line may")
    arrows = [i for i in range(n) if i not in set(tails.tolist())]
    if len(arrows) < 2:
        raise ChainError("a row needs at least two arrows")
    heads, tails_xy = [], []
    for i in arrows:
        s, e = starts[i], stops[i]
        if float(np.hypot(*(e - s))) == 0:
            raise ChainError("one of its load lines has zero length")
        if len(tails):
            t = tails[0]
            ds = _seg_dist(np.array([s, e]), starts[t : t + 1], stops[t : t + 1])[:, 0]
            head_first = ds[0] > ds[1]
        else:
            dm = _seg_dist(np.array([s, e]), a_all, b_all).min(axis=1) if len(ends) else np.array([np.inf, np.inf])
            head_first = dm[0] < dm[1]
        heads.append(s if head_first else e)
        tails_xy.append(e if head_first else s)
    h, tl = np.array(heads), np.array(tails_xy)
    vec = h - tl
    unit_vecs = vec / np.hypot(vec[:, 0], vec[:, 1])[:, None]
    ref = unit_vecs[0]
    cross = np.abs(unit_vecs[:, 0] * ref[1] - unit_vecs[:, 1] * ref[0])
    if (cross > PARALLEL_SIN).any() or (unit_vecs @ ref <= 0).any():
        raise ChainError("its arrows are not parallel and pointing the same way")
    perp = np.array([-ref[1], ref[0]])
    along = h @ perp
    first, last = int(np.argmin(along)), int(np.argmax(along))
    p, q = h[first], h[last]
    span = float(np.hypot(*(q - p)))
    if span <= near_miss:
        raise ChainError("its arrow heads do not spread along a chord")
    u = (q - p) / span
    off = np.abs((h - p)[:, 0] * u[1] - (h - p)[:, 1] * u[0])
    if (off > near_miss).any():
        raise ChainError(
            f"its arrow heads are not on one straight line (one is {float(off.max()):.6g} {length_unit} off the line "
            "through the first and last)"
        )
    js = []
    for pt in (p, q):
        d, j = _near_joint(tree, xy, pt)
        if d > near_miss:
            raise ChainError(
                f"the {'first' if pt is p else 'last'} arrow head ({pt[0]:.6g}, {pt[1]:.6g}) {length_unit} is not "
                "on a joint"
            )
        js.append(j)
    chain = find_chain(xy, ends, js[0], js[1], snap, length_unit)
    mean = unit_vecs.mean(axis=0)
    mean /= float(np.hypot(*mean))
    shares, length = lump(
        xy,
        ends,
        chain,
        w=float(reading.value or 0.0),
        measured="along",
        unit=(float(mean[0]), float(mean[1])),
        metres_per_unit=LENGTH_UNITS[length_unit],
        newtons_per_force=FORCE_UNITS[force_unit],
    )
    defaults = ("measured",)
    return LineLoad(
        where,
        Source.DRAWING,
        float(reading.value or 0.0),
        reading.text,
        "along",
        "given",
        (float(mean[0]), float(mean[1])),
        defaults,
        chain,
        length,
        shares,
    )


__all__ = ["ChainError", "DrawnRows", "drawn_line_loads", "file_line_loads", "find_chain", "joint_loads", "lump"]
