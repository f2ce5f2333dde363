"""Write the golden-case drawings next to this file: python tests/cases/make_cases.py

Each drawing has a hand-written <name>.expected.json beside it: what an engineer
derives for it without the program (counts from Calladine's identity, forces from
closed forms, findings from looking at the sketch). Members in the expected files are
named by their end coordinates, so ids do not matter.
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import ezdxf

HERE = Path(__file__).resolve().parent


def _doc(version: str, units: int | None):
    doc = ezdxf.new(version)
    if units is not None and version != "R12":
        doc.units = units
    return doc


def pratt_hanging_loads(path: Path) -> None:
    """docs/methods.md, check case C1 layout (n = 6, a = 4 m, h = 3 m), bottom chord drawn as one LINE
    (split at L1..L5), top chord as one LWPOLYLINE through the panel points, supports drawn as POINTs,
    loads drawn on LOAD-deck:
    each line's head is on a bottom joint L1..L5 and its tail 2 m above it, so the load
    points down; the label "10 kN" beside it is the magnitude.

    U0--U1--U2--U3--U4--U5--U6
    | \\ |  \\ | \\ | /  | /  | / |
    L0--L1--L2--L3--L4--L5--L6
    ^pin                    o roller
    """
    doc = _doc("R2013", 6)
    msp = doc.modelspace()
    a, h, n = 4.0, 3.0, 6
    msp.add_line((0.0, 0.0), (n * a, 0.0), dxfattribs={"layer": "CHORD"})  # one line through L1..L5
    msp.add_lwpolyline([(i * a, h) for i in range(n + 1)], dxfattribs={"layer": "CHORD"})
    for i in range(n + 1):
        msp.add_line((i * a, 0), (i * a, h), dxfattribs={"layer": "WEB"})
    for i in range(n):
        p, q = ((i * a, h), ((i + 1) * a, 0)) if i < n // 2 else ((i * a, 0), ((i + 1) * a, h))
        msp.add_line(p, q, dxfattribs={"layer": "WEB"})
    msp.add_point((0, 0), dxfattribs={"layer": "SUPPORT-XY"})
    msp.add_point((n * a, 0), dxfattribs={"layer": "SUPPORT-Y"})
    for i in range(1, n):
        # tail 2 m above the joint, head on it: the load points down along the vertical
        msp.add_line((i * a, 2.0), (i * a, 0.0), dxfattribs={"layer": "LOAD-deck"})
        msp.add_text("10 kN", dxfattribs={"layer": "LOAD-deck", "height": 0.2}).set_placement((i * a + 0.2, 1.0))
    doc.saveas(path)


def braced_square(path: Path) -> None:
    """docs/methods.md, check case C6: square of side 2 m with both diagonals (crossing, no joint at the
    centre), pin at A, roller at B, P = 10 kN at C along AC, given in the loads file.

    D----C
    | \\/ |
    | /\\ |
    A----B
    """
    doc = _doc("R2013", 6)
    msp = doc.modelspace()
    L = 2.0
    pts = [(0, 0), (L, 0), (L, L), (0, L)]
    msp.add_lwpolyline(pts, close=True, dxfattribs={"layer": "FRAME"})
    msp.add_line((0, 0), (L, L), dxfattribs={"layer": "BRACE"})
    msp.add_line((L, 0), (0, L), dxfattribs={"layer": "BRACE"})
    doc.saveas(path)
    p = 10.0 / math.sqrt(2)
    path.with_suffix(".toml").write_text(
        '[[support]]\nat = [0, 0]\nfix = "xy"\n\n[[support]]\nat = [2, 0]\nfix = "y"\n\n'
        f"[[load]]\nat = [2, 2]\nfx = {p!r}\nfy = {p!r}\n"
    )


def open_square_block(path: Path) -> None:
    """docs/methods.md, check case C7a drawn as a block inserted twice (rotated 90 degrees and scaled 2):
    each copy is an open square on a pin and a roller, so each part has one sway
    mechanism. Block content is on layer 0, so it takes the INSERT's layer."""
    doc = _doc("R2013", 4)
    blk = doc.blocks.new("FRAME-BAY")
    blk.add_lwpolyline([(0, 0), (1000, 0), (1000, 1000), (0, 1000)], close=True, dxfattribs={"layer": "0"})
    msp = doc.modelspace()
    msp.add_blockref("FRAME-BAY", (0, 0), dxfattribs={"layer": "FRAME"})
    msp.add_blockref("FRAME-BAY", (5000, 0), dxfattribs={"layer": "FRAME", "xscale": 2, "yscale": 2, "rotation": 90})
    for x, y, lay in ((0, 0, "SUPPORT-XY"), (1000, 0, "SUPPORT-Y"), (5000, 0, "SUPPORT-XY"), (5000, 2000, "SUPPORT-X")):
        msp.add_point((x, y), dxfattribs={"layer": lay})
    doc.saveas(path)


def main(out: Path = HERE) -> None:
    out.mkdir(parents=True, exist_ok=True)
    pratt_hanging_loads(out / "pratt_drawn_loads.dxf")
    braced_square(out / "braced_square.dxf")
    open_square_block(out / "open_square_block.dxf")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else HERE)
