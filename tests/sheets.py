"""Office sheets for the tests: truss drawings as they arrive from drawing offices, with
the truss's known answer.

The scenario is our own: the roof trusses of a cold store extension at a fruit packing
depot (pitched Pratt trusses, 12 m span), the roof of a school sports hall (parallel
chord trusses, 15 m span) and the truss schedule sheet of a farm workshop (forty small
pitched trusses of five types). Every sheet is written with ezdxf to a given folder and
returned with what a correct reading of it must find: the joints, the members, the
supports, the loads and the member forces.

The reference forces come from :func:`joint_forces`, a method-of-joints solve written
here (the equilibrium matrix built joint by joint and solved densely with numpy); it
does not use dxftruss. ``tests/test_office_sheets.py`` checks it once against an exact
sympy solve and against a closed-form section cut.

Traits (one builder each, composable through the ``add_*`` functions):

    a  title block and border               :func:`sheet_title_block`
    b  dimensions, real and exploded        :func:`sheet_dimensions`, :func:`sheet_exploded_dimensions`
    c  member outlines and nail plates      :func:`sheet_outlines`
    d  grid lines and a floor plan          :func:`sheet_grid_and_plan`
    e  a frozen old revision overlaid       :func:`sheet_old_revision`
    f  the truss only in paper space        :func:`sheet_paper_space`
    g  site coordinates in metres           :func:`sheet_site_coordinates`
    h  a job sheet of forty truss blocks    :func:`sheet_job_schedule`
    i  all of a-e on one sheet              :func:`sheet_everything`
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import ezdxf
import numpy as np

#: drawing layers of the truss itself
TRUSS_LAYER = "TRUSS"
LOAD_LAYER = "LOAD"


# ---------------------------------------------------------------------------------------
# The known answer and the reference solver


@dataclass(frozen=True)
class Known:
    """A truss as it must be read: joints (drawing units), members as joint pairs,
    supports as (joint, "XY" | "Y"), loads as (joint, fx, fy in kN, label as written)."""

    name: str
    joints: np.ndarray
    members: tuple[tuple[int, int], ...]
    supports: tuple[tuple[int, str], ...]
    loads: tuple[tuple[int, float, float, str], ...]
    #: names of the joints ("L0", "U3" ...), for messages
    joint_names: tuple[str, ...] = ()

    @property
    def span(self) -> float:
        return float(np.ptp(self.joints[:, 0]))

    @property
    def forces(self) -> np.ndarray:
        """Reference member forces in kN, tension positive, in the order of ``members``."""
        return joint_forces(self.joints, self.members, self.supports, self.loads)[0]

    @property
    def reactions(self) -> np.ndarray:
        """Reference reactions in kN, one per restrained direction (see :func:`joint_forces`)."""
        return joint_forces(self.joints, self.members, self.supports, self.loads)[1]

    def moved(self, dx: float, dy: float) -> Known:
        return replace(self, joints=self.joints + np.array([dx, dy]))


def equilibrium_matrix(
    joints: np.ndarray, members: Sequence[tuple[int, int]], supports: Sequence[tuple[int, str]]
) -> np.ndarray:
    """The method of joints as a matrix: row 2j (2j + 1) is the x (y) equilibrium of joint
    j; column e the force of member e (tension pulls each end toward the other), then
    one column per restrained direction (a reaction along +x or +y). A x + f = 0."""
    n = len(joints)
    restraints = [(j, k) for j, fix in supports for k in ((0, 1) if fix == "XY" else (0,) if fix == "X" else (1,))]
    A = np.zeros((2 * n, len(members) + len(restraints)))
    for e, (i, j) in enumerate(members):
        d = joints[j] - joints[i]
        u = d / math.hypot(*d)
        A[2 * i : 2 * i + 2, e] = u
        A[2 * j : 2 * j + 2, e] = -u
    for c, (j, k) in enumerate(restraints):
        A[2 * j + k, len(members) + c] = 1.0
    return A


def joint_forces(
    joints: np.ndarray,
    members: Sequence[tuple[int, int]],
    supports: Sequence[tuple[int, str]],
    loads: Sequence[tuple[int, float, float, str]],
) -> tuple[np.ndarray, np.ndarray]:
    """(member forces, reactions) in kN of a statically determinate truss by a dense
    solve of the joint equilibrium equations; refuses a truss that is not determinate."""
    A = equilibrium_matrix(joints, members, supports)
    if A.shape[0] != A.shape[1] or np.linalg.matrix_rank(A) != A.shape[0]:
        raise ValueError(f"not statically determinate: {A.shape} of rank {np.linalg.matrix_rank(A)}")
    f = np.zeros(A.shape[0])
    for j, fx, fy, _ in loads:
        f[2 * j] += fx
        f[2 * j + 1] += fy
    x = np.linalg.solve(A, -f)
    return x[: len(members)], x[len(members) :]


# ---------------------------------------------------------------------------------------
# Truss layouts


def pitched_pratt(
    name: str,
    span: float,
    rise: float,
    panels: int,
    loads: dict[str, tuple[float, str]],
) -> Known:
    """A pitched truss with verticals and diagonals falling toward mid-span; the heels are
    the end bottom joints. Joints L0..Ln (0..n), then U1..U(n-1) (n + 1 .. 2n - 1).
    ``loads``: joint name -> (downward kN, label)."""
    n = panels
    a = span / n
    xy = [(i * a, 0.0) for i in range(n + 1)]
    xy += [(i * a, rise * min(i, n - i) / (n / 2)) for i in range(1, n)]
    names = [f"L{i}" for i in range(n + 1)] + [f"U{i}" for i in range(1, n)]

    def u(i: int) -> int:
        return 0 if i == 0 else n if i == n else n + i

    members = [(i, i + 1) for i in range(n)]
    members += [(u(i), u(i + 1)) for i in range(n)]
    members += [(i, u(i)) for i in range(1, n)]
    for k in range(2, n):  # panel k lies between L(k-1) and Lk
        members.append((u(k - 1), k) if k <= n // 2 else (u(k), k - 1))
    return _known(name, xy, members, names, loads)


def parallel_pratt(name: str, span: float, depth: float, panels: int, loads: dict[str, tuple[float, str]]) -> Known:
    """A parallel chord truss with verticals and diagonals falling toward mid-span.
    Joints L0..Ln (0..n), then U0..Un (n + 1 .. 2n + 1)."""
    n = panels
    a = span / n
    xy = [(i * a, 0.0) for i in range(n + 1)] + [(i * a, depth) for i in range(n + 1)]
    names = [f"L{i}" for i in range(n + 1)] + [f"U{i}" for i in range(n + 1)]
    members = [(i, i + 1) for i in range(n)]
    members += [(n + 1 + i, n + 2 + i) for i in range(n)]
    members += [(i, n + 1 + i) for i in range(n + 1)]
    for k in range(1, n + 1):
        members.append((n + k, k) if k <= n // 2 else (k - 1, n + 1 + k))
    return _known(name, xy, members, names, loads)


def _known(name: str, xy: list[tuple[float, float]], members: list[tuple[int, int]], names: list[str], loads) -> Known:
    n_bottom = sum(1 for nm in names if nm.startswith("L"))
    index = {nm: i for i, nm in enumerate(names)}
    return Known(
        name=name,
        joints=np.array(xy, dtype=float),
        members=tuple(members),
        supports=((0, "XY"), (n_bottom - 1, "Y")),
        loads=tuple((index[j], 0.0, -p, label) for j, (p, label) in loads.items()),
        joint_names=tuple(names),
    )


def cold_store_truss() -> Known:
    """Roof truss RT2 of the cold store extension: 12 m span, 2.4 m rise, six panels, mm."""
    return pitched_pratt(
        "cold store RT2",
        12000.0,
        2400.0,
        6,
        {
            "U1": (8.5, "P1 = 8.5 kN"),
            "U2": (8.5, "P2 = 8.5 kN"),
            "U3": (12.0, "12 kN"),
            "U4": (8.5, "P4 = 8.5 kN"),
            "U5": (6.4, "P5 = 6.4 kN"),
        },
    )


def sports_hall_truss() -> Known:
    """Roof truss GT1 of the school sports hall: 15 m span, 1.5 m deep, six panels, mm."""
    return parallel_pratt(
        "sports hall GT1",
        15000.0,
        1500.0,
        6,
        {"U1": (6.0, "6 kN"), "U2": (6.0, "6 kN"), "U3": (7.5, "7.5 kN"), "U4": (6.0, "6 kN"), "U5": (4.2, "4.2 kN")},
    )


# ---------------------------------------------------------------------------------------
# Drawing the truss


def new_doc(units: int = 4) -> Any:
    """An R2013 drawing with the standard styles; $INSUNITS = ``units`` (4 mm, 6 m)."""
    doc = ezdxf.new("R2013", setup=True)
    doc.units = units
    return doc


def _layer(doc: Any, name: str, color: int = 7) -> None:
    if name not in doc.layers:
        doc.layers.add(name, color=color)


def _support_blocks(doc: Any) -> None:
    """Support symbols as blocks named PIN and ROLLER (a triangle; the roller with a base line)."""
    if "PIN" not in doc.blocks:
        b = doc.blocks.new("PIN")
        b.add_lwpolyline([(0, 0), (-150, -250), (150, -250)], close=True)
        r = doc.blocks.new("ROLLER")
        r.add_lwpolyline([(0, 0), (-150, -220), (150, -220)], close=True)
        r.add_line((-200, -250), (200, -250))


def draw_truss(
    layout: Any,
    known: Known,
    *,
    layer: str = TRUSS_LAYER,
    supports: str = "layers",
    arrow: float = 1000.0,
    text_height: float = 150.0,
) -> None:
    """The truss's centre lines, its supports (POINTs on SUPPORT-XY / SUPPORT-Y, or PIN /
    ROLLER block references when ``supports="blocks"``) and its loads (a LINE on LOAD per
    load, the head on the joint, the label beside the tail)."""
    doc = layout.doc
    for lay in (layer, LOAD_LAYER, "SUPPORT-XY", "SUPPORT-Y"):
        _layer(doc, lay)
    xy = known.joints
    for i, j in known.members:
        layout.add_line(tuple(xy[i]), tuple(xy[j]), dxfattribs={"layer": layer})
    if supports == "blocks":
        _support_blocks(doc)
    for j, fix in known.supports:
        p = tuple(xy[j])
        if supports == "blocks":
            layout.add_blockref("PIN" if fix == "XY" else "ROLLER", p, dxfattribs={"layer": layer})
        else:
            layout.add_point(p, dxfattribs={"layer": f"SUPPORT-{fix}"})
    for j, fx, fy, label in known.loads:
        head = xy[j]
        d = -np.array([fx, fy]) / math.hypot(fx, fy)
        tail = head + arrow * d
        layout.add_line(tuple(tail), tuple(head), dxfattribs={"layer": LOAD_LAYER})
        t = layout.add_text(label, height=text_height, dxfattribs={"layer": LOAD_LAYER})
        t.set_placement((tail[0] + 0.1 * arrow, tail[1] + 0.05 * arrow))


# ---------------------------------------------------------------------------------------
# Drafting around the truss (one function per trait)


def _rect(layout: Any, x0: float, y0: float, x1: float, y1: float, layer: str) -> None:
    layout.add_lwpolyline([(x0, y0), (x1, y0), (x1, y1), (x0, y1)], close=True, dxfattribs={"layer": layer})


def add_title_block(layout: Any, box: tuple[float, float, float, float], *, title: str, number: str) -> None:
    """A drawing border (outer frame and inner margin) on BORDER and a title block of
    ruled cells with texts on TITLE, bottom right inside ``box`` (x0, y0, x1, y1)."""
    doc = layout.doc
    _layer(doc, "BORDER", 8)
    _layer(doc, "TITLE", 8)
    x0, y0, x1, y1 = box
    _rect(layout, x0, y0, x1, y1, "BORDER")
    m = 0.02 * (x1 - x0)
    _rect(layout, x0 + m, y0 + m, x1 - m, y1 - m, "BORDER")
    # title block: 3 columns x 4 rows of cells drawn as single ruling lines
    w, h = 0.34 * (x1 - x0), 0.16 * (y1 - y0)
    tx1, ty0 = x1 - m, y0 + m
    tx0, ty1 = tx1 - w, ty0 + h
    _rect(layout, tx0, ty0, tx1, ty1, "TITLE")
    cols = [tx0 + w * f for f in (0.45, 0.75)]
    rows = [ty0 + h * f for f in (0.25, 0.5, 0.75)]
    for x in cols:
        layout.add_line((x, ty0), (x, rows[-1]), dxfattribs={"layer": "TITLE"})
    for y in rows:
        layout.add_line((tx0, y), (tx1, y), dxfattribs={"layer": "TITLE"})
    th = 0.08 * h
    cells = [
        ("Orchard Vale Structural Partners", tx0, rows[2]),
        ("Client: Brennock Fruit Packers", tx0, rows[1]),
        (title, tx0, rows[0]),
        ("Drawn: MK  Checked: RD", tx0, ty0),
        ("Scale 1:50 @ A1", cols[0], rows[1]),
        ("Date 14.03.2024", cols[1], rows[1]),
        ("Drawing no.", cols[0], rows[0]),
        (number, cols[1], rows[0]),
        ("Rev", cols[0], ty0),
        ("C", cols[1], ty0),
    ]
    for text, x, y in cells:
        layout.add_text(text, height=th, dxfattribs={"layer": "TITLE"}).set_placement((x + th, y + th))
    # revision table above the title block: a header line and two rows
    for k in range(3):
        yk = ty1 + 0.03 * (y1 - y0) * (k + 1)
        layout.add_line((tx0, yk), (tx1, yk), dxfattribs={"layer": "TITLE"})
    layout.add_text("B  09.02.2024  diagonals revised", height=th, dxfattribs={"layer": "TITLE"}).set_placement(
        (tx0 + th, ty1 + th)
    )


def add_dimensions(layout: Any, known: Known, *, exploded: bool, layer: str = "DIM", level: float = 1.0) -> None:
    """A chain of panel dimensions under the truss, an overall span below it and the rise
    at the right end (``level`` scales their distance from the truss). Real DIMENSION
    entities (rendered), or "exploded" ones: dimension line, 45 degree ticks, extension
    lines and the value as TEXT, all plain entities."""
    _layer(layout.doc, layer, 3)
    xy = known.joints
    bottom = sorted({float(x) for x, y in xy if abs(y) < 1e-9})
    span = known.span
    y1, y2 = -0.08 * span * level, -0.14 * span * level
    chains = [(bottom, y1), ([bottom[0], bottom[-1]], y2)]
    top = float(xy[:, 1].max())
    x_apex = float(xy[int(np.argmax(xy[:, 1])), 0])
    for xs, yd in chains:
        for a, b in itertools.pairwise(xs):
            if exploded:
                _exploded_dim(layout, (a, 0.0), (b, 0.0), (a, yd), (b, yd), f"{b - a:.0f}", layer)
            else:
                dim = layout.add_linear_dim(
                    base=(a, yd), p1=(a, 0.0), p2=(b, 0.0), dimstyle="EZDXF", dxfattribs={"layer": layer}
                )
                dim.render()
    # the rise: a vertical dimension right of the truss
    xr = bottom[-1] + 0.06 * span * level
    if exploded:
        _exploded_dim(layout, (x_apex, top), (bottom[-1], 0.0), (xr, top), (xr, 0.0), f"{top:.0f}", layer)
    else:
        dim = layout.add_linear_dim(
            base=(xr, 0.0),
            p1=(bottom[-1], 0.0),
            p2=(x_apex, top),
            angle=90,
            dimstyle="EZDXF",
            dxfattribs={"layer": layer},
        )
        dim.render()


def _exploded_dim(layout: Any, p1, p2, d1, d2, text: str, layer: str) -> None:
    """Extension lines from a small gap off p1, p2 to just past d1, d2; the dimension line
    d1-d2 run a little past both ends; a tick at each end; the value above the middle."""
    p1, p2, d1, d2 = (np.asarray(p, float) for p in (p1, p2, d1, d2))
    length = float(np.hypot(*(d2 - d1)))
    u = (d2 - d1) / length
    gap, over, tick = 50.0, 100.0, 90.0
    att = {"layer": layer}
    for p, d in ((p1, d1), (p2, d2)):
        v = d - p
        lv = float(np.hypot(*v))
        if lv > 0:
            v = v / lv
            layout.add_line(tuple(p + gap * v), tuple(d + over * v), dxfattribs=att)
    layout.add_line(tuple(d1 - over * u), tuple(d2 + over * u), dxfattribs=att)
    diag = np.array([u[0] - u[1], u[0] + u[1]]) / math.sqrt(2) * tick / 2
    for d in (d1, d2):
        layout.add_line(tuple(d - diag), tuple(d + diag), dxfattribs=att)
    mid = (d1 + d2) / 2
    normal = np.array([-u[1], u[0]])
    t = layout.add_text(text, height=180.0, dxfattribs=att)
    t.set_placement(tuple(mid + 60 * normal), align=ezdxf.enums.TextEntityAlignment.BOTTOM_CENTER)


def add_outlines_and_plates(
    layout: Any,
    known: Known,
    *,
    widths: dict[str, float] | None = None,
    outline_layer: str = "OUTLINE",
    plate_layer: str = "PLATES",
) -> None:
    """The timber outline of every member (two lines at +-half width from the centre
    line, stopped short of each joint) and a nail plate (a closed polyline square to the
    member directions) at every joint."""
    doc = layout.doc
    _layer(doc, outline_layer, 2)
    _layer(doc, plate_layer, 4)
    widths = widths or {"chord": 120.0, "web": 90.0}
    xy = known.joints
    names = known.joint_names
    heels = {0, sum(1 for nm in names if nm.startswith("L")) - 1}
    for i, j in known.members:
        sloped = xy[i][0] != xy[j][0]
        chord = names[i][0] == names[j][0] or (sloped and bool({i, j} & heels))
        half = (widths["chord"] if chord else widths["web"]) / 2
        d = xy[j] - xy[i]
        length = float(np.hypot(*d))
        u = d / length
        nrm = np.array([-u[1], u[0]])
        cut = min(180.0, 0.2 * length)
        for s in (-1.0, 1.0):
            a = xy[i] + cut * u + s * half * nrm
            b = xy[j] - cut * u + s * half * nrm
            layout.add_line(tuple(a), tuple(b), dxfattribs={"layer": outline_layer})
    for p in xy:
        x, y = float(p[0]), float(p[1])
        layout.add_lwpolyline(
            [(x - 200, y - 150), (x + 200, y - 150), (x + 200, y + 150), (x - 200, y + 150)],
            close=True,
            dxfattribs={"layer": plate_layer},
        )


def add_grid_and_plan(layout: Any, known: Known, *, plan_y: float = -16000.0, bays: int = 5) -> None:
    """Structural grid lines A, B, C ... through the truss supports and mid-span, running
    from the plan below up past the elevation, with bubbles and letters; numbered grid
    lines across the plan; the plan's walls (outer and inner faces) and two door openings
    with leaf lines and swing arcs."""
    doc = layout.doc
    for lay, col in (("GRID", 1), ("WALLS", 7), ("DOORS", 5), ("GRID-TEXT", 1)):
        _layer(doc, lay, col)
    span = known.span
    top = float(known.joints[:, 1].max())
    bay = 6000.0
    length = bays * bay
    y_plan0, y_plan1 = plan_y - length, plan_y
    xs = [0.0, span / 2, span]
    r = 400.0
    for k, x in enumerate(xs):
        y_end = top + 2500.0
        layout.add_line((x, y_plan0 - 1500.0), (x, y_end), dxfattribs={"layer": "GRID"})
        layout.add_circle((x, y_end + r), r, dxfattribs={"layer": "GRID"})
        t = layout.add_text("ABC"[k], height=350.0, dxfattribs={"layer": "GRID-TEXT"})
        t.set_placement((x, y_end + r), align=ezdxf.enums.TextEntityAlignment.MIDDLE_CENTER)
    for k in range(bays + 1):
        y = y_plan1 - k * bay
        layout.add_line((-1500.0, y), (span + 1500.0, y), dxfattribs={"layer": "GRID"})
        layout.add_circle((-1500.0 - r, y), r, dxfattribs={"layer": "GRID"})
        t = layout.add_text(str(k + 1), height=350.0, dxfattribs={"layer": "GRID-TEXT"})
        t.set_placement((-1500.0 - r, y), align=ezdxf.enums.TextEntityAlignment.MIDDLE_CENTER)
    wall = 300.0
    _rect(layout, -wall / 2, y_plan0 - wall / 2, span + wall / 2, y_plan1 + wall / 2, "WALLS")
    _rect(layout, wall / 2, y_plan0 + wall / 2, span - wall / 2, y_plan1 - wall / 2, "WALLS")
    for cx in (0.3 * span, 0.7 * span):  # doors in the front wall
        w = 1000.0
        y = y_plan0 + wall / 2
        layout.add_line((cx, y), (cx, y + w), dxfattribs={"layer": "DOORS"})
        layout.add_arc((cx, y), w, 0.0, 90.0, dxfattribs={"layer": "DOORS"})
        layout.add_line((cx + w, y - wall), (cx + w, y), dxfattribs={"layer": "DOORS"})


def add_old_revision(layout: Any, known: Known, *, layer: str = "REV-B", state: str = "frozen") -> None:
    """Revision B of the truss on its own layer, frozen (or off): the apex 150 mm lower,
    the bottom chord's second panel point 100 mm to the right and the second panel braced
    with both diagonals. A correct reading ignores it."""
    doc = layout.doc
    _layer(doc, layer, 9)
    lay = doc.layers.get(layer)
    if state == "frozen":
        lay.freeze()
    else:
        lay.off()
    xy = known.joints.copy()
    apex = int(np.argmax(xy[:, 1]))
    xy[apex, 1] -= 150.0
    xy[2, 0] += 100.0
    names = known.joint_names
    members = [*known.members, (names.index("L1"), names.index("U2"))]  # second panel, both diagonals
    for i, j in members:
        layout.add_line(tuple(xy[i]), tuple(xy[j]), dxfattribs={"layer": layer})
    t = layout.add_text("REV B - SUPERSEDED", height=200.0, dxfattribs={"layer": layer})
    t.set_placement((xy[apex, 0], xy[apex, 1] + 600.0))


# ---------------------------------------------------------------------------------------
# Sheets


@dataclass(frozen=True)
class Placement:
    """One truss block reference on the job sheet: its mark, block, insertion point and
    the fault drawn into its block ("" when none)."""

    mark: str
    block: str
    at: tuple[float, float]
    fault: str = ""
    box: tuple[float, float, float, float] = (0.0, 0.0, 0.0, 0.0)


@dataclass(frozen=True)
class Sheet:
    """A written sheet and its known answer: the trusses a correct reading must find (in
    model space coordinates), the drafting layers it must set aside and, for the job
    sheet, the placements of its truss blocks."""

    name: str
    path: Path
    trusses: tuple[Known, ...]
    drafting_layers: tuple[str, ...] = ()
    placements: tuple[Placement, ...] = field(default=())
    length_unit: str = "mm"


def _save(doc: Any, folder: Path, name: str) -> Path:
    path = Path(folder) / f"{name}.dxf"
    doc.saveas(path)
    return path


def sheet_plain(folder: Path) -> Sheet:
    """The cold store truss alone: the control sheet (today's conventions)."""
    known = cold_store_truss()
    doc = new_doc()
    draw_truss(doc.modelspace(), known)
    return Sheet("plain", _save(doc, folder, "plain"), (known,))


def sheet_title_block(folder: Path) -> Sheet:
    """a: the cold store truss inside a drawing border with a title block."""
    known = cold_store_truss()
    doc = new_doc()
    msp = doc.modelspace()
    draw_truss(msp, known)
    add_title_block(
        msp, (-4000.0, -5000.0, 24000.0, 9000.0), title="Cold store ext. roof truss RT2", number="OV-2291-S-102"
    )
    return Sheet("title_block", _save(doc, folder, "title_block"), (known,), ("BORDER", "TITLE"))


def sheet_dimensions(folder: Path) -> Sheet:
    """b: the sports hall truss with real DIMENSION entities (rendered)."""
    known = sports_hall_truss()
    doc = new_doc()
    msp = doc.modelspace()
    draw_truss(msp, known, supports="blocks")
    add_dimensions(msp, known, exploded=False)
    return Sheet("dimensions", _save(doc, folder, "dimensions"), (known,), ("DIM",))


def sheet_exploded_dimensions(folder: Path) -> Sheet:
    """b: the sports hall truss with exploded dimensions (lines, ticks and texts on DIM)."""
    known = sports_hall_truss()
    doc = new_doc()
    msp = doc.modelspace()
    draw_truss(msp, known, supports="blocks")
    add_dimensions(msp, known, exploded=True)
    return Sheet("exploded_dimensions", _save(doc, folder, "exploded_dimensions"), (known,), ("DIM",))


def sheet_outlines(folder: Path) -> Sheet:
    """c: the cold store truss as centre lines on C-L, with timber outlines and nail plates."""
    known = cold_store_truss()
    doc = new_doc()
    msp = doc.modelspace()
    draw_truss(msp, known, layer="C-L")
    add_outlines_and_plates(msp, known)
    return Sheet("outlines", _save(doc, folder, "outlines"), (known,), ("OUTLINE", "PLATES"))


def sheet_grid_and_plan(folder: Path) -> Sheet:
    """d: the sports hall truss elevation on TRUSS-ELEV above a floor plan, grid lines
    through both."""
    known = sports_hall_truss()
    doc = new_doc()
    msp = doc.modelspace()
    draw_truss(msp, known, layer="TRUSS-ELEV")
    add_grid_and_plan(msp, known)
    return Sheet(
        "grid_and_plan", _save(doc, folder, "grid_and_plan"), (known,), ("GRID", "WALLS", "DOORS", "GRID-TEXT")
    )


def sheet_old_revision(folder: Path) -> Sheet:
    """e: the cold store truss with its frozen revision B overlaid on REV-B."""
    known = cold_store_truss()
    doc = new_doc()
    msp = doc.modelspace()
    draw_truss(msp, known)
    add_old_revision(msp, known)
    return Sheet("old_revision", _save(doc, folder, "old_revision"), (known,), ("REV-B",))


def sheet_old_revision_off(folder: Path) -> Sheet:
    """e: as :func:`sheet_old_revision`, the revision layer switched off instead of frozen."""
    known = cold_store_truss()
    doc = new_doc()
    msp = doc.modelspace()
    draw_truss(msp, known)
    add_old_revision(msp, known, state="off")
    return Sheet("old_revision_off", _save(doc, folder, "old_revision_off"), (known,), ("REV-B",))


def sheet_paper_space(folder: Path) -> Sheet:
    """f: the sports hall truss drawn only in the paper space layout "Layout1" (full
    size, mm); model space is empty."""
    known = sports_hall_truss()
    doc = new_doc()
    draw_truss(doc.paperspace("Layout1"), known)
    return Sheet("paper_space", _save(doc, folder, "paper_space"), (known,))


#: the site grid origin offset of the site-coordinate sheet, metres (a made-up local grid)
SITE_ORIGIN = (600_412.0, 5_104_287.5)


def sheet_site_coordinates(folder: Path) -> Sheet:
    """g: the cold store truss in metres at site coordinates near (6.0e5, 5.1e6), with
    $INSUNITS = metres and a survey marker (a 1 m cross of lines and a POINT) at the
    origin of the site grid."""
    base = cold_store_truss()
    known = replace(base, joints=base.joints / 1000.0 + np.array(SITE_ORIGIN), name="cold store RT2, site grid")
    doc = new_doc(units=6)
    msp = doc.modelspace()
    draw_truss(msp, known, arrow=1.0, text_height=0.15)
    _layer(doc, "SURVEY", 6)
    msp.add_line((-0.5, 0.0), (0.5, 0.0), dxfattribs={"layer": "SURVEY"})
    msp.add_line((0.0, -0.5), (0.0, 0.5), dxfattribs={"layer": "SURVEY"})
    msp.add_point((0.0, 0.0), dxfattribs={"layer": "SURVEY"})
    msp.add_text("SP1 E 0.000 N 0.000", height=0.25, dxfattribs={"layer": "SURVEY"}).set_placement((0.6, 0.6))
    return Sheet("site_coordinates", _save(doc, folder, "site_coordinates"), (known,), ("SURVEY",), length_unit="m")


#: the workshop's truss types: block name -> (span, rise) in mm, four panels each
JOB_TYPES = {
    "T1": (6000.0, 1500.0),
    "T2": (7200.0, 1800.0),
    "T3": (8400.0, 2100.0),
    "T4": (9600.0, 2400.0),
    "T5": (10800.0, 2400.0),
}
#: the faulty variants: block name -> (the type it was copied from, the fault)
JOB_FAULTS = {"T3A": ("T3", "missing-diagonal"), "T4A": ("T4", "gap"), "T5A": ("T5", "duplicate")}
#: where the faulty variants are placed: mark number (1-based) -> block
JOB_FAULT_MARKS = {7: "T3A", 22: "T4A", 35: "T5A"}
#: the gap left at the end of the faulty diagonal, mm (less than 2 % of the shortest member)
JOB_GAP = 12.0


def job_truss(block: str) -> Known:
    """The good truss of a job-sheet type in its block's coordinates (left heel at 0, 0)."""
    span, rise = JOB_TYPES[block]
    return pitched_pratt(
        f"workshop {block}",
        span,
        rise,
        4,
        {"U1": (3.0, "P1 = 3 kN"), "U2": (4.5, "P2 = 4.5 kN"), "U3": (3.0, "P3 = 3 kN")},
    )


def _job_block(doc: Any, name: str, known: Known, fault: str) -> None:
    """A truss type as a block: centre lines on layer 0 (they take the reference's layer),
    nested PIN / ROLLER blocks at the heels, load lines and their labels on LOAD."""
    blk = doc.blocks.new(name)
    xy = known.joints
    members = list(known.members)
    diagonal = members[-1]  # U3 - L2
    if fault == "missing-diagonal":
        members.remove(diagonal)
    for i, j in members:
        a, b = xy[i], xy[j]
        if fault == "gap" and (i, j) == diagonal:
            d = (a - b) / float(np.hypot(*(a - b)))
            b = b + JOB_GAP * d  # stops short of L2
        blk.add_line(tuple(a), tuple(b))
    if fault == "duplicate":
        i, j = members[0]
        blk.add_line(tuple(xy[i]), tuple(xy[j]))
    for j, fix in known.supports:
        blk.add_blockref("PIN" if fix == "XY" else "ROLLER", tuple(xy[j]))
    for j, fx, fy, label in known.loads:
        head = xy[j]
        tail = head + 800.0 * (-np.array([fx, fy]) / math.hypot(fx, fy))
        blk.add_line(tuple(tail), tuple(head), dxfattribs={"layer": LOAD_LAYER})
        blk.add_text(label, height=120.0, dxfattribs={"layer": LOAD_LAYER}).set_placement(
            (tail[0] + 80.0, tail[1] + 40.0)
        )


def sheet_job_schedule(folder: Path) -> Sheet:
    """h: the workshop's truss schedule: 40 block references of types T1..T5 in a grid of
    8 x 5, each with its mark (W01 ... W40) below; marks 7, 22 and 35 use the variants
    T3A (a diagonal left out: a mechanism), T4A (a diagonal stopping 12 mm short of its
    joint: a near-miss) and T5A (a bottom chord bar drawn twice: a duplicate)."""
    doc = new_doc()
    _support_blocks(doc)
    for lay in ("TRUSSES", LOAD_LAYER, "MARKS"):
        _layer(doc, lay)
    for name in JOB_TYPES:
        _job_block(doc, name, job_truss(name), "")
    for name, (base, fault) in JOB_FAULTS.items():
        _job_block(doc, name, job_truss(base), fault)
    msp = doc.modelspace()
    types = list(JOB_TYPES)
    placements: list[Placement] = []
    trusses: list[Known] = []
    for k in range(40):
        mark = k + 1
        col, row = k % 8, k // 8
        at = (col * 13000.0, -row * 5000.0)
        block = JOB_FAULT_MARKS.get(mark, types[k % 5])
        base, fault = JOB_FAULTS.get(block, (block, ""))
        span, rise = JOB_TYPES[base]
        msp.add_blockref(block, at, dxfattribs={"layer": "TRUSSES"})
        t = msp.add_text(f"W{mark:02d} ({block})", height=250.0, dxfattribs={"layer": "MARKS"})
        t.set_placement((at[0] + span / 2, at[1] - 700.0), align=ezdxf.enums.TextEntityAlignment.MIDDLE_CENTER)
        box = (at[0] - 500.0, at[1] - 500.0, at[0] + span + 500.0, at[1] + rise + 500.0)
        placements.append(Placement(f"W{mark:02d}", block, at, fault, box))
        trusses.append(replace(job_truss(base), name=f"W{mark:02d} {block}").moved(*at))
    return Sheet("job_schedule", _save(doc, folder, "job_schedule"), tuple(trusses), ("MARKS",), tuple(placements))


def sheet_everything(folder: Path) -> Sheet:
    """i: the cold store truss with a title block, real and exploded dimensions, member
    outlines and nail plates, grid lines and a floor plan, and the frozen revision B."""
    known = cold_store_truss()
    doc = new_doc()
    msp = doc.modelspace()
    draw_truss(msp, known, layer="C-L")
    add_title_block(
        msp, (-6000.0, -48000.0, 30000.0, 9000.0), title="Cold store ext. roof truss RT2", number="OV-2291-S-103"
    )
    add_dimensions(msp, known, exploded=False, layer="DIM")
    add_dimensions(msp, known, exploded=True, layer="DIM-X", level=2.0)
    add_outlines_and_plates(msp, known)
    add_grid_and_plan(msp, known, plan_y=-10000.0)
    add_old_revision(msp, known)
    layers = ("BORDER", "TITLE", "DIM", "DIM-X", "OUTLINE", "PLATES", "GRID", "WALLS", "DOORS", "GRID-TEXT", "REV-B")
    return Sheet("everything", _save(doc, folder, "everything"), (known,), layers)


#: every sheet builder by name
SHEETS: dict[str, Callable[[Path], Sheet]] = {
    "plain": sheet_plain,
    "title_block": sheet_title_block,
    "dimensions": sheet_dimensions,
    "exploded_dimensions": sheet_exploded_dimensions,
    "outlines": sheet_outlines,
    "grid_and_plan": sheet_grid_and_plan,
    "old_revision": sheet_old_revision,
    "old_revision_off": sheet_old_revision_off,
    "paper_space": sheet_paper_space,
    "site_coordinates": sheet_site_coordinates,
    "job_schedule": sheet_job_schedule,
    "everything": sheet_everything,
}
