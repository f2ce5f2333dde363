"""Write the demo drawings and loads files of the Hollybrook Farm scenario.

Usage::

    python samples/make_samples.py [OUTDIR]      # default: the samples/ folder itself

Glossary:
    panel point   a point of a chord where web members meet it (a joint of the truss).
    member layer  any layer that is not SUPPORT* or LOAD*; its lines become members.
    loads file    the TOML file beside a drawing (docs/user-guide.md, The loads file) with extra supports,
                  loads, load combinations and member sections.

Every drawing is written with ezdxf's fixed meta data, so running the script twice gives
byte-identical files. Coordinates are computed from span, panel count and depth; the
ASCII sketch in each function's docstring shows the truss and the names of its joints.

The drawings (all a scenario of our own; loads are illustrative, not a design):

- ``farm_shed_truss``   Fink roof truss, machinery shed, millimetres, R2018;
                        supports drawn as circles, loads and sections in the loads file.
- ``farm_shed_truss_rev_b``  its revision B with four known edits (``dxftruss compare``).
- ``footbridge_truss``  Pratt girder of the Mill Stream footbridge, metres, R2004;
                        a web panel drawn as a block (inserted plain and mirrored), one
                        X-braced panel, deck loads drawn on LOAD-deck, wind in the file.
- ``drafting_slips``    yard canopy truss with the usual drafting slips, R12 (no units
                        in the header), no supports and no loads.
- ``hoist_bracket``     hay-loft hoist bracket cantilevered from a barn post, inches,
                        R2000; chords drawn as single lines that must be split at the
                        panel points; supports only in the loads file, forces in lbf.
"""

from __future__ import annotations

import json
import logging
import math
import re
import sys
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path

import ezdxf
from ezdxf.document import Drawing
from ezdxf.layouts import BaseLayout

Point = tuple[float, float]

SITE = "HOLLYBROOK FARM"


@dataclass(frozen=True)
class Sample:
    """One demo: a drawing and, optionally, the text of its loads file."""

    name: str
    doc: Drawing
    loads_toml: str | None


# --------------------------------------------------------------------------- helpers


def new_drawing(dxfversion: str, insunits: int | None, layers: dict[str, int]) -> tuple[Drawing, BaseLayout]:
    """A new drawing with ``layers`` (name -> ACI colour) and ``$INSUNITS`` (None: not set)."""
    ezdxf_log = logging.getLogger("ezdxf")
    level = ezdxf_log.level
    ezdxf_log.setLevel(logging.ERROR)  # ezdxf.new() warns that R12 cannot store units: intended here
    try:
        doc = ezdxf.new(dxfversion, setup=False, units=0 if insunits is None else insunits)
    finally:
        ezdxf_log.setLevel(level)
    for name, colour in layers.items():
        doc.layers.add(name, color=colour)
    return doc, doc.modelspace()


def polyline(msp: BaseLayout, points: Sequence[Point], layer: str) -> None:
    """One open polyline through ``points`` (LWPOLYLINE, or 2D POLYLINE in R12 drawings)."""
    if msp.doc is not None and msp.doc.dxfversion == "AC1009":
        msp.add_polyline2d(list(points), dxfattribs={"layer": layer})
    else:
        msp.add_lwpolyline(list(points), format="xy", dxfattribs={"layer": layer})


def line(msp: BaseLayout, a: Point, b: Point, layer: str) -> None:
    """One LINE from ``a`` to ``b``."""
    msp.add_line(a, b, dxfattribs={"layer": layer})


def notes(msp: BaseLayout, lines: Iterable[str], at: Point, height: float, layer: str = "NOTES") -> None:
    """A title as TEXT lines stacked downwards from ``at`` (never a frame of lines)."""
    x, y = at
    for i, text in enumerate(lines):
        msp.add_text(text, height=height, dxfattribs={"layer": layer, "insert": (x, y - 1.6 * height * i)})


def _toml_key(key: str) -> str:
    return key if re.fullmatch(r"[A-Za-z0-9_-]+", key) else json.dumps(key)


def _toml_value(value: object) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return repr(float(value))
    if isinstance(value, str):
        return json.dumps(value)  # ASCII JSON strings are valid TOML basic strings
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{ " + ", ".join(f"{_toml_key(k)} = {_toml_value(v)}" for k, v in value.items()) + " }"
    raise TypeError(f"no TOML form for {value!r}")


def loads_toml(
    header: Sequence[str],
    units: dict[str, str],
    tables: Sequence[tuple[str, dict[str, object]]],
    plain: Sequence[tuple[str, dict[str, object]]] = (),
) -> str:
    """The text of a loads file: comment lines, ``[units]``, plain tables and arrays of tables.

    ``tables`` holds (table name, entries) pairs, e.g. ("load", {"at": [0, 0], "fy": -1}),
    written in the order given as ``[[load]]`` blocks; ``plain`` ("checks", {...}) pairs
    are written as ``[checks]`` tables after ``[units]``.
    """
    out = [f"# {h}" if h else "#" for h in header]
    out += ["", "[units]"] + [f"{_toml_key(k)} = {_toml_value(v)}" for k, v in units.items()]
    for name, entry in plain:
        out += ["", f"[{name}]"] + [f"{_toml_key(k)} = {_toml_value(v)}" for k, v in entry.items()]
    for name, entry in tables:
        out += ["", f"[[{name}]]"] + [f"{_toml_key(k)} = {_toml_value(v)}" for k, v in entry.items()]
    return "\n".join(out) + "\n"


def pt(x: float, y: float) -> list[float]:
    """A loads-file point, rounded so the file reads cleanly."""
    return [round(x, 6), round(y, 6)]


# --------------------------------------------------------------------------- drawings


def farm_shed_truss(rev_b: bool = False) -> Sample:
    r"""Fink roof truss FT-1 of the Hollybrook Farm machinery shed (millimetres, R2018).

    ::

                                  A
                             .'  / \  '.
                         .'     /   \     '.
                  T1  .'       /     \       '.  T3
                   .\         /       \         /.
               .'     \      /         \      /     '.
          L0'----------B1--------------B2----------'R0
         (pin)                                        (roller)

    Span 9600, rise 2400 (slope 1 in 2). Rafters L0-T1-A and A-T3-R0 are polylines
    through their panel points, the ceiling tie L0-B1-B2-R0 is ONE polyline; webs
    B1-T1, B1-A, B2-A, B2-T3 are LINEs. Supports are CIRCLEs on SUPPORT-XY (L0) and
    SUPPORT-Y (R0). j = 7, m = 11, r = 3: m + r = 2j, statically determinate.
    Loads (purlins at the top joints, trusses at 1800 centres) and timber sections are
    in the loads file: cases "dead" and "snow", combination "dead+snow".

    ``rev_b``: revision B (``farm_shed_truss_rev_b``, the demo's revision compare),
    with four known edits: the panel point B2 moved 300 mm towards R0 (webs B2-A and
    B2-T3 and the tie pieces B1-B2 and B2-R0 moved), a counter-diagonal T1-B2 added
    (crossing B1-A: an X-braced panel), the pin moved to R0 and the roller to L0 (both
    supports changed), and the snow load at the apex A raised from 2.59 to 3.5 kN
    (drift against the shed's lean-to).
    """
    span, rise = 9600.0, 2400.0
    spacing_m = 1.8  # truss centres, m
    dead_kpa = 0.25  # sheeting + purlins, kN/m2 on slope (illustrative)
    snow_kpa = 0.60  # snow, kN/m2 on plan (illustrative)

    def rafter_point(t: float) -> Point:  # t = 0 eaves L0, 1 apex, 2 eaves R0
        return (span / 2 * t, rise * (t if t <= 1 else 2 - t))

    L0, T1, A, T3, R0 = (rafter_point(k / 2) for k in range(5))
    B1, B2 = (span / 3, 0.0), (2 * span / 3 + (300.0 if rev_b else 0.0), 0.0)

    doc, msp = new_drawing(
        "R2018",
        4,
        {"RAFTER": 1, "CEILING-TIE": 5, "WEB": 3, "SUPPORT-XY": 6, "SUPPORT-Y": 6, "NOTES": 8},
    )
    polyline(msp, [L0, T1, A], "RAFTER")
    polyline(msp, [A, T3, R0], "RAFTER")
    polyline(msp, [L0, B1, B2, R0], "CEILING-TIE")
    webs = [(B1, T1), (B1, A), (B2, A), (B2, T3)] + ([(T1, B2)] if rev_b else [])
    for a, b in webs:
        line(msp, a, b, "WEB")
    pin, roller = (R0, L0) if rev_b else (L0, R0)
    msp.add_circle(pin, 150.0, dxfattribs={"layer": "SUPPORT-XY"})
    msp.add_circle(roller, 150.0, dxfattribs={"layer": "SUPPORT-Y"})
    notes(
        msp,
        [
            f"{SITE} - MACHINERY SHED",
            "ROOF TRUSS FT-1 (FINK), SPAN 9600, RISE 2400" + (", REV B" if rev_b else ""),
            "TRUSSES AT 1800 CENTRES, C24 TIMBER 45 x 140 / 45 x 95",
            "DIMENSIONS IN MILLIMETRES",
        ],
        at=(0.0, -600.0),
        height=120.0,
    )

    # Purlin loads at the top joints: tributary slope length per joint (dead) and plan
    # width per joint (snow); the eaves joints take half a panel.
    top = [L0, T1, A, T3, R0]
    panel_slope_m = math.hypot(T1[0] - L0[0], T1[1] - L0[1]) / 1000.0
    panel_plan_m = (T1[0] - L0[0]) / 1000.0
    tables: list[tuple[str, dict[str, object]]] = []
    for case, per_panel in (
        ("dead", dead_kpa * spacing_m * panel_slope_m),
        ("snow", snow_kpa * spacing_m * panel_plan_m),
    ):
        for k, p in enumerate(top):
            share = 0.5 if k in (0, len(top) - 1) else 1.0
            fy = -round(share * per_panel, 2)
            if rev_b and case == "snow" and p == A:
                fy = -3.5  # revision B: drift at the apex
            tables.append(("load", {"at": pt(*p), "fy": fy, "case": case}))
    tables.append(("combination", {"name": "dead+snow", "factors": {"dead": 1.35, "snow": 1.5}}))
    for layer, area in (("RAFTER", "6300 mm2"), ("CEILING-TIE", "6300 mm2"), ("WEB", "4275 mm2")):
        tables.append(("section", {"layer": layer, "area": area, "E": "11 GPa"}))
    toml = loads_toml(
        [
            f"{SITE} - machinery shed, roof truss FT-1 ({'farm_shed_truss_rev_b' if rev_b else 'farm_shed_truss'}.dxf)."
            + (" Revision B: snow at the apex 3.5 kN (drift)." if rev_b else ""),
            "Purlin loads at the top joints; trusses at 1800 mm centres.",
            f"dead: sheeting + purlins {dead_kpa} kN/m2 on slope; snow: {snow_kpa} kN/m2 on plan.",
            "Illustrative values for the demo, not a design. Supports are drawn in the DXF.",
        ],
        {"force": "kN", "length": "mm"},
        tables,
        [
            (
                "report",
                {
                    "project": "Hollybrook Farm machinery shed",
                    "drawing_no": "HF-MS-104",
                    "revision": "B" if rev_b else "A",
                    "checked_by": "J. Varga",
                },
            )
        ],
    )
    return Sample("farm_shed_truss_rev_b" if rev_b else "farm_shed_truss", doc, toml)


def farm_shed_truss_rev_b() -> Sample:
    """Revision B of the farm shed truss (see :func:`farm_shed_truss`, ``rev_b``)."""
    return farm_shed_truss(rev_b=True)


def footbridge_truss() -> Sample:
    r"""Pratt girder of the Mill Stream footbridge (metres, R2004), 8 panels x 3 m, 2.4 m deep.

    ::

              T1----T2----T3----T4----T5----T6----T7
             /|\    |\    |\   /|    /|    /|    /|\
            / | \   | \   | \ / |   / |   / |   / | \
          /   |   \ |   \ |  X  | /   | /   | /   |   \
         /    |    \|    \|/   \|/    |/    |/    |    \
        B0----B1----B2----B3----B4----B5----B6----B7----B8
       (pin)        [WEB-PANEL]             [mirrored]   (roller)
         deck loads drawn at B0..B8 as vertical lines ending on the joints

    Bottom chord B0..B8: ONE LWPOLYLINE through all its panel points. Top chord with
    both end posts: ONE LWPOLYLINE B0-T1-T7-B8, so T2..T6 lie inside its long segment
    and the reader must split it there. Webs are LINEs on WEB, except the vertical +
    diagonal of the third panel from each end, drawn as the block WEB-PANEL (entities
    on layer 0, inserted on layer WEB): at B2 as drawn, at B6 mirrored (xscale -1).
    Panel B3-B4 is X-braced (counter-diagonal B3-T4 crosses T3-B4 with no joint):
    j = 16, m = 30, r = 3, one state of self-stress. Supports are POINTs; the deck
    load is drawn on LOAD-deck with a TEXT value beside each line; the loads file adds
    a "wind" case, combinations (one with the self-weight), steel hollow sections,
    member-check limits and a two-axle maintenance buggy on the bottom chord.
    """
    panels, panel, depth = 8, 3.0, 2.4
    deck_kn = 5.0 * panel * 1.2  # crowd 5 kN/m2 x 3 m panel x 1.2 m half deck width = 18 kN
    wind_kn = 1.2  # per top joint, acting in +x (illustrative)

    B = [(panel * i, 0.0) for i in range(panels + 1)]
    T = [(panel * i, depth) for i in range(panels + 1)]  # T[0] and T[8] are not joints
    mid = panels // 2

    doc, msp = new_drawing(
        "R2004",
        6,
        {
            "TOP-CHORD": 1,
            "BOTTOM-CHORD": 5,
            "WEB": 3,
            "SUPPORT-XY": 6,
            "SUPPORT-Y": 6,
            "LOAD-deck": 2,
            "NOTES": 8,
        },
    )
    polyline(msp, B, "BOTTOM-CHORD")
    polyline(msp, [B[0], T[1], T[panels - 1], B[panels]], "TOP-CHORD")

    block = doc.blocks.new("WEB-PANEL")  # vertical at the block origin + the diagonal of its panel
    block.add_line((0.0, 0.0), (0.0, depth), dxfattribs={"layer": "0"})
    block.add_line((0.0, depth), (panel, 0.0), dxfattribs={"layer": "0"})
    msp.add_blockref("WEB-PANEL", B[2], dxfattribs={"layer": "WEB"})
    msp.add_blockref("WEB-PANEL", B[panels - 2], dxfattribs={"layer": "WEB", "xscale": -1.0})
    block_verticals = {2, panels - 2}  # stations B2 and B6
    block_diagonals = {2, panels - 3}  # panels B2-B3 and B5-B6

    for i in range(1, panels):  # verticals
        if i not in block_verticals:
            line(msp, B[i], T[i], "WEB")
    for p in range(1, panels - 1):  # diagonals slope down towards mid-span (tension under gravity)
        top, bottom = (T[p], B[p + 1]) if p < mid else (T[p + 1], B[p])
        if p not in block_diagonals:
            line(msp, top, bottom, "WEB")
    line(msp, B[mid - 1], T[mid], "WEB")  # counter-diagonal: X-bracing in panel B3-B4

    msp.add_point(B[0], dxfattribs={"layer": "SUPPORT-XY"})
    msp.add_point(B[panels], dxfattribs={"layer": "SUPPORT-Y"})

    arrow = 0.8  # drawn load length, m; the arrow head is the end on the joint
    for i, (x, y) in enumerate(B):
        value = deck_kn / 2 if i in (0, panels) else deck_kn
        line(msp, (x, y + arrow), (x, y), "LOAD-deck")
        msp.add_text(f"{value:g} kN", height=0.15, dxfattribs={"layer": "LOAD-deck", "insert": (x + 0.1, 0.45)})

    notes(
        msp,
        [
            f"{SITE} - MILL STREAM FOOTBRIDGE",
            "MAIN GIRDER G1 (PRATT), 8 PANELS x 3.0 m, DEPTH 2.4 m",
            "DECK LOAD 5 kN/m2 ON 2.4 m DECK, HALF TO EACH GIRDER",
            "DIMENSIONS IN METRES",
        ],
        at=(0.0, -0.8),
        height=0.2,
    )
    # the sheet's title block: a block whose attributes hold the project, number and revision
    doc.layers.add("TITLE", color=8)
    title = doc.blocks.new("SHEET-TITLE")
    for k, (tag, prompt) in enumerate((("PROJECT", "project"), ("DWG_NO", "drawing no."), ("REV", "revision"))):
        title.add_text(prompt.upper(), height=0.12, dxfattribs={"layer": "0", "insert": (0.0, -0.45 * k)})
        title.add_attdef(tag, (1.6, -0.45 * k), height=0.15, dxfattribs={"layer": "0"})
    sheet_title = msp.add_blockref("SHEET-TITLE", (16.0, -0.8), dxfattribs={"layer": "TITLE"})
    sheet_title.add_auto_attribs({"PROJECT": "Mill Stream footbridge", "DWG_NO": "MS-FB-201", "REV": "C"})

    tables: list[tuple[str, dict[str, object]]] = [
        ("load", {"at": pt(*T[i]), "fx": wind_kn, "case": "wind"}) for i in range(1, panels)
    ]
    tables.append(("combination", {"name": "deck+wind", "factors": {"deck": 1.5, "wind": 0.9}}))
    tables.append(("combination", {"name": "dead+deck", "factors": {"self-weight": 1.35, "deck": 1.5}}))
    steel = {"E": "210 GPa", "strength": "355 MPa", "density": "7850 kg/m3"}
    tables.append(("section", {"name": "chord SHS", "layer": "*-CHORD", "shape": "square-hollow"}))
    tables[-1][1].update({"D": "150 mm", "t": "8 mm", **steel})
    tables.append(("section", {"name": "web SHS", "layer": "WEB", "shape": "square-hollow"}))
    tables[-1][1].update({"D": "90 mm", "t": "4 mm", **steel})
    tables.append(
        (
            "moving_load",
            {
                "name": "maintenance buggy",
                "from": pt(*B[0]),
                "to": pt(*B[panels]),
                "loads": ["8 kN", "12 kN"],
                "spacing": ["1.8 m"],
            },
        )
    )
    toml = loads_toml(
        [
            f"{SITE} - Mill Stream footbridge, main girder G1 (footbridge_truss.dxf).",
            "The deck case is drawn in the DXF (layer LOAD-deck); this file adds wind,",
            "steel hollow sections (checks, self-weight, deflection) and a maintenance buggy",
            "crossing on the bottom chord. Illustrative values for the demo, not a design.",
        ],
        {"force": "kN"},
        tables,
        [("report", {"checked_by": "J. Varga"}), ("checks", {"ratio": 1.0, "slenderness": 180})],
    )
    return Sample("footbridge_truss", doc, toml)


#: the drafting slips of drafting_slips.dxf; the test reads the numbers from here too
NEAR_MISS_FRACTION = 0.005  # gap as a fraction of the member it belongs to


def drafting_slips() -> Sample:
    r"""Yard canopy truss CT-2 with drafting slips (millimetres by default: R12, no units).

    ::

        T0-----T1-----T2-----T3-----T4-----T5-----T6     top chord: one 2D POLYLINE
        |\\     |\    /|      |     :|     /|     /|
        | \\    | \  / |      |    / |    / |    / |     : = the 6.4 mm gap at T4
        |  \\   |  \/  |      |   /  |   /  |   /  |
        |   \\  |  /\  |      |  /   |  /   |  /   |
        |    \\ | /  \ |      | /    | /  \ | /    |     \ near B5 = the stub
        B0-----B1-----B2=====B3=====B4-----B5-----B6     bottom chord: two LINEs
          twice    X    no diag   gap   stub             overlapping on B2-B4

    Six panels of 1000 x 800. The slips, one per place:

    - panel 0: diagonal T0-B1 drawn twice (the copy reversed)   -> duplicate-member
    - panel 1: counter-diagonal B1-T2 crosses T1-B2, no joint   -> unjoined-crossing
    - panel 2: no diagonal at all                               -> mechanism
    - panel 3: diagonal T4-B3 stops 0.5 % of its length short of T4 -> near-miss (+ dangling)
    - panel 4: an abandoned brace stub from B5 towards T4       -> dangling-member
    - bottom chord: LINE B0-B4 and LINE B2-B6 overlap on B2-B4  -> collinear-overlap (one chord)

    No supports, no loads and no units: all three defaults are assumed. Annotation
    (TEXT, a CIRCLE callout and a DIMENSION) sits on NOTES and is ignored.
    """
    panels, panel, depth = 6, 1000.0, 800.0
    B = [(panel * i, 0.0) for i in range(panels + 1)]
    T = [(panel * i, depth) for i in range(panels + 1)]

    doc, msp = new_drawing("R12", None, {"CHORD": 5, "WEB": 3, "NOTES": 8})
    polyline(msp, T, "CHORD")
    line(msp, B[0], B[4], "CHORD")  # the overlap: the two lines share B2-B4
    line(msp, B[2], B[panels], "CHORD")
    for i in range(panels + 1):
        line(msp, B[i], T[i], "WEB")

    def diagonal(p: int) -> tuple[Point, Point]:  # Pratt: slopes down towards mid-span
        return (T[p], B[p + 1]) if p < panels // 2 else (T[p + 1], B[p])

    for p in range(panels):
        if p == 2:
            continue  # missing diagonal
        top, bottom = diagonal(p)
        if p == 3:  # stop short of the top joint by a small fraction of the diagonal
            gap = NEAR_MISS_FRACTION * math.dist(top, bottom)
            ux, uy = ((t - b) / math.dist(top, bottom) for t, b in zip(top, bottom, strict=True))
            top = (top[0] - gap * ux, top[1] - gap * uy)
        line(msp, top, bottom, "WEB")
        if p == 0:
            line(msp, bottom, top, "WEB")  # drawn twice
    line(msp, B[1], T[2], "WEB")  # crosses T1-B2 with no joint
    stub = 0.25  # abandoned brace from B5 towards T4, a quarter of the way
    line(msp, B[5], (B[5][0] + stub * (T[4][0] - B[5][0]), B[5][1] + stub * (T[4][1] - B[5][1])), "WEB")

    notes(msp, [f"{SITE} - YARD CANOPY TRUSS CT-2", "CHECK PRINT - NOT FOR FABRICATION"], at=(0.0, 1300.0), height=80.0)
    callout = (panel * 2.5, depth / 2)
    msp.add_circle(callout, 120.0, dxfattribs={"layer": "NOTES"})
    msp.add_text("A", height=100.0, dxfattribs={"layer": "NOTES", "insert": (callout[0] - 35.0, callout[1] - 50.0)})
    dim = msp.add_linear_dim(base=(0.0, -400.0), p1=B[0], p2=B[panels], dxfattribs={"layer": "NOTES"})
    dim.render()
    return Sample("drafting_slips", doc, None)


def hoist_bracket() -> Sample:
    r"""Hay-loft hoist bracket HB-1 cantilevered from a barn post (inches, R2000).

    ::

        T0----------T1----------T2----------T3   <- hoist block hangs here
        | \         |   \       |       .'
        |   \       |       \   |   .'
        |     \     |           B2
        |       \   |       .'
        |         \ |   .'
        |           B1
        |       .'           top chord T0-T3 and bottom chord B0-T3 are
        |   .'               each ONE LINE, to be split at T1, T2 and B1, B2
        B0'

    72 in long, 36 in deep at the post; the bottom chord rises 1 in 2 to the tip.
    Post T0-B0 on POST; diagonals T0-B1 and T1-B2, verticals T1-B1 and T2-B2 on WEB.
    j = 7, m = 11, r = 3 (pin at T0, horizontal restraint at B0): determinate.
    Supports exist only in the loads file; forces in lbf; one section for every layer
    in in2 / ksi.
    """
    length, depth, panels = 72.0, 36.0, 3
    step = length / panels
    T = [(step * i, depth) for i in range(panels + 1)]
    B = [(step * i, depth / length * step * i) for i in range(panels + 1)]  # B[3] is the tip T3

    doc, msp = new_drawing("R2000", 1, {"CHORD": 5, "WEB": 3, "POST": 1, "NOTES": 8})
    line(msp, T[0], T[panels], "CHORD")
    line(msp, B[0], B[panels], "CHORD")
    line(msp, T[0], B[0], "POST")
    for i in range(1, panels):
        line(msp, T[i], B[i], "WEB")
        line(msp, T[i - 1], B[i], "WEB")
    notes(msp, [f"{SITE} - HAY LOFT HOIST BRACKET HB-1", "DIMENSIONS IN INCHES"], at=(0.0, -8.0), height=2.0)

    tables: list[tuple[str, dict[str, object]]] = [
        ("support", {"at": pt(*T[0]), "fix": "xy"}),
        ("support", {"at": pt(*B[0]), "fix": "x"}),
        ("load", {"at": pt(*T[panels]), "fy": -1500.0, "case": "hoist"}),
        ("load", {"at": pt(*T[panels]), "fx": 150.0, "fy": -150.0, "case": "swing"}),
        ("combination", {"name": "hoist+swing", "factors": {"hoist": 1.0, "swing": 1.0}}),
        ("section", {"layer": "*", "area": "1.5 in2", "E": "29000 ksi"}),
    ]
    toml = loads_toml(
        [
            f"{SITE} - hay loft hoist bracket HB-1 (hoist_bracket.dxf, drawn in inches).",
            "The drawing has no supports: the bolts to the barn post are given here.",
            "Illustrative values for the demo, not a design.",
        ],
        {"force": "lbf"},
        tables,
    )
    return Sample("hoist_bracket", doc, toml)


def save(doc: Drawing, path: Path) -> None:
    """``doc.saveas(path)`` with a CLASSES section whose order does not change between runs.

    ezdxf registers a CLASS for each entity type in use by iterating a set of type
    names, so the section's order follows the string hash seed of the process; with
    fixed meta data this is the only part of the file that changes between runs.
    Registering those classes first, in sorted order, fixes the order.
    """
    doc.commit_pending_changes()
    if doc.dxfversion > "AC1009":
        for name in sorted(doc.entitydb.dxf_types_in_use()):
            doc.classes.add_class(name)
    doc.saveas(path)


SAMPLES: tuple[Callable[[], Sample], ...] = (
    farm_shed_truss,
    farm_shed_truss_rev_b,
    footbridge_truss,
    drafting_slips,
    hoist_bracket,
)


def write_samples(outdir: Path) -> list[Path]:
    """Write every sample drawing (and loads file) into ``outdir``; return the paths written."""
    ezdxf.options.write_fixed_meta_data_for_testing = True
    outdir.mkdir(parents=True, exist_ok=True)
    written: list[Path] = []
    for make in SAMPLES:
        sample = make()
        dxf = outdir / f"{sample.name}.dxf"
        save(sample.doc, dxf)
        written.append(dxf)
        if sample.loads_toml is not None:
            toml = outdir / f"{sample.name}.toml"
            toml.write_text(sample.loads_toml, encoding="ascii", newline="\n")
            written.append(toml)
    return written


def main(argv: Sequence[str] | None = None) -> int:
    args = list(sys.argv[1:] if argv is None else argv)
    if len(args) > 1 or any(a in ("-h", "--help") for a in args):
        print(__doc__.split("Glossary:")[0].strip())
        return 0 if args and args[0] in ("-h", "--help") else 2
    outdir = Path(args[0]) if args else Path(__file__).resolve().parent
    for path in write_samples(outdir):
        print(path)
    return 0


if __name__ == "__main__":
    sys.exit(main())
