"""Small drawings built in memory with ezdxf for the tests (a scenario of our own)."""

from __future__ import annotations

from pathlib import Path

import ezdxf
import numpy as np


def pratt_segments(n: int = 6, a: float = 4.0, h: float = 3.0) -> list[tuple[float, float, float, float]]:
    """Pratt layout of docs/methods.md, check case C1: L0..Ln bottom, U0..Un top, diagonals slope down to mid-span.

    U0--U1--U2--U3--U4--U5--U6
    | \\ |  \\ | \\ | /  | /  | / |
    L0--L1--L2--L3--L4--L5--L6
    """
    segs = []
    for i in range(n):
        segs.append((i * a, 0.0, (i + 1) * a, 0.0))
        segs.append((i * a, h, (i + 1) * a, h))
        if i < n // 2:
            segs.append((i * a, h, (i + 1) * a, 0.0))
        else:
            segs.append((i * a, 0.0, (i + 1) * a, h))
    segs += [(i * a, 0.0, i * a, h) for i in range(n + 1)]
    return segs


def write_drawing(
    path: Path,
    segments,
    *,
    layer: str = "TRUSS",
    supports=(),  # (x, y, "XY"|"X"|"Y")
    loads=(),  # (x_tail, y_tail, x_head, y_head, "label", layer)
    units: int = 6,
    version: str = "R2013",
) -> Path:
    doc = ezdxf.new(version, units=units) if version != "R12" else ezdxf.new("R12")
    if version != "R12":
        doc.units = units
    msp = doc.modelspace()
    for x1, y1, x2, y2 in segments:
        msp.add_line((x1, y1), (x2, y2), dxfattribs={"layer": layer})
    for x, y, fix in supports:
        msp.add_point((x, y), dxfattribs={"layer": f"SUPPORT-{fix}"})
    for xt, yt, xh, yh, label, lay in loads:
        msp.add_line((xt, yt), (xh, yh), dxfattribs={"layer": lay})
        if label is not None:
            msp.add_text(label, dxfattribs={"layer": lay, "height": 0.2}).set_placement((xt + 0.1, yt))
    doc.saveas(path)
    return path


def transform(segments, *, angle: float = 0.0, shift=(0.0, 0.0), mirror: bool = False):
    s = np.asarray(segments, float).reshape(-1, 2)
    if mirror:
        s[:, 0] = -s[:, 0]
    c, si = np.cos(angle), np.sin(angle)
    s = s @ np.array([[c, si], [-si, c]]) + shift
    return [tuple(r) for r in s.reshape(-1, 4)]
