"""Line work drawn flat in a plane other than XY: find the plane, analyse in it.

Glossary:
    drawing plane  the plane every member line lies in, within the snap tolerance (a
                   front view in a user coordinate system, an elevation drawn upright in a
                   3-D model, a roof slope). Found only when the line work is not flat in
                   XY; a flat XY drawing is read exactly as before (no plane).
    plane axes     ``u`` (in-plane x) and ``v`` (in-plane y) with ``u x v = normal``.
                   Where the plane is vertical ``v`` is world +Z, so "down" (default
                   loads, line loads "down", the report's up/down) is world -Z; on an
                   inclined plane ``v`` is world +Z projected onto the plane (down the
                   slope); on a horizontal plane ``u``, ``v`` are world x, y. ``u`` is
                   horizontal wherever the plane is not; on a vertical plane its x
                   (else y) component is positive, on an inclined one the normal
                   points up.
    in-plane       coordinates ``(p . u, p . v)`` of a world point ``p``: the origin is
                   the point of the plane nearest the world origin (``origin``), so in a
                   front view (y constant) the in-plane coordinates are world (x, z).

Everything after this stage works in the in-plane coordinates: segments, support and
load marks and label texts are carried into the plane; the reports give the plane and
each joint's world coordinates beside the in-plane ones.

Supports drawn on SUPPORT-X / SUPPORT-Y (and inclined roller blocks) restrain world
directions; in the plane each such direction is either in the plane (a restraint along
it) or normal to the plane (nothing to restrain in a planar analysis). A direction at
any other angle is refused (``inclined-support``), as is a support that restrains no
direction of the plane.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from .escape import shown
from .findings import Code, Finding
from .model import Fix
from .read import LineWork, LoadMark, SupportMark, TextMark

#: a world direction whose in-plane part has a length within this of 1 lies in the
#: plane, within this of 0 is normal to it (as the sine of the angle)
DIRECTION_SIN = 1e-6


@dataclass(frozen=True)
class DrawingPlane:
    """The plane the line work lies in (world coordinates, drawing units).

    origin      the plane's point nearest the world origin
    normal      unit normal, ``u x v``
    u, v        in-plane x and y axes (unit vectors; see the module glossary)
    kind        "vertical", "inclined" or "horizontal"
    max_offset  the largest distance of a member line end from the plane
    tolerance   the distance within which the line work counted as in the plane
    """

    origin: tuple[float, float, float]
    normal: tuple[float, float, float]
    u: tuple[float, float, float]
    v: tuple[float, float, float]
    kind: str
    max_offset: float
    tolerance: float

    def to_plane(self, xyz: Any) -> tuple[np.ndarray, np.ndarray]:
        """((n, 2) in-plane coordinates, (n,) signed distances from the plane)."""
        p = np.asarray(xyz, dtype=float).reshape(-1, 3)
        axes = np.array([self.u, self.v, self.normal])
        local = p @ axes.T
        return local[:, :2], local[:, 2] - float(np.dot(self.origin, self.normal))

    def to_world(self, xy: Any) -> np.ndarray:
        """(n, 3) world coordinates of (n, 2) in-plane coordinates."""
        q = np.asarray(xy, dtype=float).reshape(-1, 2)
        return np.asarray(self.origin) + q[:, :1] * np.asarray(self.u) + q[:, 1:2] * np.asarray(self.v)

    def brief(self, unit: str) -> str:
        """The plane in a few words (a point and the normal), for the PDF's part list."""
        return f"in a {self.kind} plane through {_vec(self.origin)} {unit}, normal {_vec(self.normal)}"

    def sentence(self, unit: str) -> str:
        """The plane and the axes, for the assumptions of every report."""
        down = {
            "vertical": "in-plane y is world +Z, so down is world -Z",
            "inclined": "in-plane y is world +Z projected onto the plane, so down is down the slope "
            "(load components out of the plane are not carried by a planar analysis)",
            "horizontal": "in-plane x, y are world x, y",
        }[self.kind]
        return (
            f"the line work lies in one {self.kind} plane (through {_vec(self.origin)} {unit}, normal "
            f"{_vec(self.normal)}; farthest line end {self.max_offset:.3g} {unit} from it): analysed in that "
            f"plane with in-plane x along {_vec(self.u)} and y along {_vec(self.v)}; {down}; coordinates are "
            "in-plane (world coordinates in the JSON joints)"
        )


def _vec(v: tuple[float, ...]) -> str:
    return "(" + ", ".join(f"{0.0 if abs(c) < 5e-13 else c:.6g}" for c in v) + ")"


def _points(linework: LineWork) -> np.ndarray:
    """(2n, 3) world coordinates of the member line ends."""
    seg = np.asarray(linework.segments, dtype=float).reshape(-1, 4)
    z = linework.segment_z
    z = np.zeros((len(seg), 2)) if z is None else np.asarray(z, dtype=float).reshape(-1, 2)
    return np.column_stack([seg[:, [0, 2]].ravel(), seg[:, [1, 3]].ravel(), z.ravel()])


def default_snap_3d(linework: LineWork, fraction: float) -> float:
    """The default snap tolerance (pipeline.default_snap) from the lines' 3-D lengths."""
    pts = _points(linework).reshape(-1, 2, 3)
    if not len(pts):
        return 0.0
    lengths = np.linalg.norm(pts[:, 1] - pts[:, 0], axis=1)
    lengths = lengths[lengths > 0]
    median = float(np.median(lengths)) if len(lengths) else 0.0
    noise = 64 * float(np.finfo(float).eps) * float(np.abs(pts).max())
    return max(fraction * median, noise)


def is_flat_xy(linework: LineWork) -> bool:
    """The reader found the line work flat in XY (no ``non-planar`` finding)."""
    return not any(
        f.code is Code.UNSUPPORTED_GEOMETRY and f.data.get("reason") == "non-planar" for f in linework.findings
    )


def find_plane(points: np.ndarray, *, tol: float) -> DrawingPlane | None:
    """The plane all ``points`` (n, 3) lie in within ``tol`` (drawing units), or None.

    The plane is the least-squares plane (SVD of the centred points); a normal within
    ``tol`` over the extent of a world axis, or of horizontal, is made exact so a front
    view gives in-plane coordinates that are exactly world (x, z)."""
    p = np.asarray(points, dtype=float).reshape(-1, 3)
    if len(p) < 3:
        return None
    centre = p.mean(axis=0)
    q = p - centre
    _, sv, vt = np.linalg.svd(q, full_matrices=False)
    extent = float(np.linalg.norm(np.ptp(p, axis=0)))
    if extent == 0.0:
        return None
    normal = vt[2]
    if sv[1] <= tol * np.sqrt(len(p)):  # collinear: the plane through the line and world Z (or X)
        line = vt[0]
        other = np.array([0.0, 0.0, 1.0]) if abs(line[2]) < 0.9 else np.array([1.0, 0.0, 0.0])
        normal = np.cross(line, other)
        normal /= np.linalg.norm(normal)
    candidates = [normal]
    for axis in np.eye(3):  # exact world-axis planes first, then exactly vertical
        candidates.insert(0, axis)
    if abs(normal[2]) * extent <= tol:
        flat = np.array([normal[0], normal[1], 0.0])
        candidates.insert(3, flat / np.linalg.norm(flat))
    for n in candidates:
        off = q @ n
        offset = float(np.abs(off - (off.max() + off.min()) / 2).max())
        if offset <= tol:
            return _plane(np.asarray(n, dtype=float), centre + n * (off.max() + off.min()) / 2, offset, tol, extent)
    return None


def _plane(n: np.ndarray, on: np.ndarray, offset: float, tol: float, extent: float) -> DrawingPlane:
    z = np.array([0.0, 0.0, 1.0])
    horiz = float(np.hypot(n[0], n[1]))
    if horiz * extent <= tol:  # horizontal: world x, y
        n, u, v, kind = z, np.array([1.0, 0.0, 0.0]), np.array([0.0, 1.0, 0.0]), "horizontal"
    else:
        if abs(n[2]) * extent <= tol:
            kind, v = "vertical", z
        else:
            kind = "inclined"
            if n[2] < 0:
                n = -n
            v = z - n[2] * n
            v /= np.linalg.norm(v)
        u = np.cross(v, n)
        u /= np.linalg.norm(u)
        if kind == "vertical" and (u[0] < -1e-12 or (abs(u[0]) <= 1e-12 and u[1] < 0)):
            n, u = -n, -u
    if kind == "vertical":
        # exact axes where the plane is a world-axis plane (front and side views)
        u = np.where(np.abs(u) < 1e-15, 0.0, u)
    d = float(np.dot(on, n))
    origin = n * d
    return DrawingPlane(_t(origin), _t(n), _t(u), _t(v), kind, offset, tol)


def _t(a: np.ndarray) -> tuple[float, float, float]:
    return (float(a[0]), float(a[1]), float(a[2]))


def into_plane(
    linework: LineWork, *, snap: float | None, fraction: float, mark_reach: float
) -> tuple[LineWork, DrawingPlane | None]:
    """``linework`` carried into its drawing plane, and the plane; unchanged (None)
    when it is flat in XY or lies in no plane (``snap``: the snap tolerance given, else
    the default from ``fraction`` of the 3-D line lengths). Marks farther than
    ``mark_reach`` (relative to the median line length) from the plane are left out
    with an ``unsupported-geometry`` finding (reason ``off-plane``)."""
    if not len(linework.segments) or is_flat_xy(linework):
        return planar_supports(linework), None
    tol = snap if snap is not None else default_snap_3d(linework, fraction)
    pts = _points(linework)
    plane = find_plane(pts, tol=tol)
    if plane is None:
        return linework, None
    xy, _ = plane.to_plane(pts)
    seg = np.ascontiguousarray(xy.reshape(-1, 4))
    seg.setflags(write=False)
    lengths = np.linalg.norm(pts.reshape(-1, 2, 3)[:, 1] - pts.reshape(-1, 2, 3)[:, 0], axis=1)
    reach = max(tol, mark_reach * float(np.median(lengths)))
    findings = [
        f
        for f in linework.findings
        if not (f.code is Code.UNSUPPORTED_GEOMETRY and f.data.get("reason") == "non-planar")
    ]
    off: list[str] = []
    supports: list[SupportMark] = []
    for s in linework.supports:
        (uv,), (d,) = plane.to_plane([(s.x, s.y, s.z)])
        if abs(d) > reach:
            off.append(s.handle)
            continue
        mark, problem = _support_in_plane(s, plane, uv)
        if mark is not None:
            supports.append(mark)
        if problem is not None:
            findings.append(problem)
    loads: list[LoadMark] = []
    for m in linework.loads:
        uv, d = plane.to_plane([(*m.start, m.z[0]), (*m.end, m.z[1])])
        if float(np.abs(d).max()) > reach:
            off.append(m.handle)
            continue
        loads.append(replace(m, start=(float(uv[0, 0]), float(uv[0, 1])), end=(float(uv[1, 0]), float(uv[1, 1]))))
        loads[-1] = replace(loads[-1], z=(0.0, 0.0))
    texts: list[TextMark] = []
    for t in linework.texts:
        (uv,), (d,) = plane.to_plane([(t.x, t.y, t.z)])
        if abs(d) <= reach:
            texts.append(replace(t, x=float(uv[0]), y=float(uv[1]), z=0.0))
    if off:
        findings.append(off_plane_finding(off, f"more than {reach:.6g} drawing units off the drawing plane"))
    out = replace(
        linework,
        segments=seg,
        segment_z=np.zeros((len(seg), 2)),
        supports=tuple(supports),
        loads=tuple(loads),
        texts=tuple(texts),
        findings=tuple(findings),
    )
    return out, plane


def off_plane_finding(off: list[str], where: str) -> Finding:
    """The ``unsupported-geometry`` finding (reason ``off-plane``) for the support and
    load marks with handles ``off`` that lie ``where`` (words); they are not used."""
    handles = sorted(set(off))
    return Finding(
        Code.UNSUPPORTED_GEOMETRY,
        f"{len(off)} support or load mark(s) lie {where} (handles {', '.join(shown(h) for h in handles[:10])}); "
        "they were not used",
        data={"reason": "off-plane", "handles": handles[:20], "count": len(off)},
    )


def _support_in_plane(s: SupportMark, plane: DrawingPlane, uv: np.ndarray) -> tuple[SupportMark | None, Finding | None]:
    """The support mark in in-plane terms, or None with an ``inclined-support`` finding."""
    dirs = mark_directions(s)
    inplane: list[np.ndarray] = []
    for w in dirs:
        pw = np.array([np.dot(w, plane.u), np.dot(w, plane.v)])
        length = float(np.hypot(*pw))
        if length >= 1.0 - DIRECTION_SIN:
            inplane.append(pw / length)
        elif length > DIRECTION_SIN:
            return None, _refused(s, "restrains a direction at an angle to the drawing plane")
    at = (float(uv[0]), float(uv[1]))
    if not inplane:
        return None, _refused(s, "restrains only the direction normal to the drawing plane")
    if len(inplane) == 2:
        return replace(s, x=at[0], y=at[1], z=0.0, fix=Fix.XY, normal=None), None
    (n,) = inplane
    if abs(n[1]) <= DIRECTION_SIN:
        return replace(s, x=at[0], y=at[1], z=0.0, fix=Fix.X, normal=None), None
    if abs(n[0]) <= DIRECTION_SIN:
        return replace(s, x=at[0], y=at[1], z=0.0, fix=Fix.Y, normal=None), None
    return replace(s, x=at[0], y=at[1], z=0.0, fix=Fix.N, normal=(float(n[0]), float(n[1]))), None


def mark_directions(s: SupportMark) -> list[tuple[float, float, float]]:
    """The world directions a drawn support mark restrains."""
    dirs: list[tuple[float, float, float]] = []
    if s.axes:
        dirs = [tuple(float(k == "xyz".index(a)) for k in range(3)) for a in s.axes]  # type: ignore[misc]
    if not s.axes and s.fix in (Fix.XY, Fix.X):
        dirs.append((1.0, 0.0, 0.0))
    if not s.axes and s.fix in (Fix.XY, Fix.Y):
        dirs.append((0.0, 1.0, 0.0))
    if s.fix is Fix.N and s.normal is not None:
        dirs.append((s.normal[0], s.normal[1], 0.0))
    return dirs


def planar_supports(linework: LineWork) -> LineWork:
    """A flat XY drawing's support marks: a SUPPORT-Z mark restrains only z, the normal of
    the drawing plane, so it is refused (``inclined-support``); the other 3-D support
    layers are read by their x and y (SUPPORT-XYZ a pin, SUPPORT-XZ an x roller ...)."""
    if not any(s.axes == "z" for s in linework.supports):
        return linework
    refused = [
        _refused(s, "restrains only z, the direction normal to the drawing plane")
        for s in linework.supports
        if s.axes == "z"
    ]
    return replace(
        linework,
        supports=tuple(s for s in linework.supports if s.axes != "z"),
        findings=(*linework.findings, *refused),
    )


def _refused(s: SupportMark, why: str) -> Finding:
    where = f"support mark on layer {shown(s.layer)} (handle {shown(s.handle)})"
    return Finding(
        Code.INCLINED_SUPPORT,
        f"{where} {why}, so it is not used; give the support in the loads file in in-plane terms",
        at=None,
        data={"handle": s.handle, "layer": s.layer, "status": "off-plane", "why": why},
    )
