"""DXF -> line work: straight segments with their source handle and layer, plus the
support and load marks, load labels and the drawing's unit.

Glossary:
    line work      the straight segments that may become members (LINE, LWPOLYLINE
                   and POLYLINE segments, also inside block references).
    member layer   any layer except the reserved ``SUPPORT*`` and ``LOAD*`` layers,
                   optionally narrowed by ``--layers`` globs.
    support mark   a POINT, CIRCLE or INSERT on SUPPORT-XY / SUPPORT-X / SUPPORT-Y.
    load mark      a LINE on LOAD or LOAD-<case>; its label is the nearest TEXT or
                   MTEXT on the same layer.

Coordinates are WCS x, y in drawing units (z is dropped; 3-D line work is reported).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .findings import Finding
from .model import Fix


@dataclass(frozen=True)
class SupportMark:
    x: float
    y: float
    fix: Fix
    handle: str
    layer: str


@dataclass(frozen=True)
class LoadMark:
    """A drawn load line; which end is the arrow head is decided when joints are known."""

    start: tuple[float, float]
    end: tuple[float, float]
    case: str
    handle: str
    layer: str


@dataclass(frozen=True)
class TextMark:
    x: float
    y: float
    text: str
    layer: str
    handle: str


@dataclass(frozen=True)
class LineWork:
    """What the reader gives the rest of the pipeline.

    segments  (n, 4) float array x1, y1, x2, y2 in drawing units (finite values only)
    handles   per segment the handle of the model-space entity it came from (for block
              content: the top-level INSERT's handle)
    layers    per segment the effective layer (layer "0" inside a block takes the
              INSERT's layer)
    """

    segments: np.ndarray
    handles: tuple[str, ...]
    layers: tuple[str, ...]
    supports: tuple[SupportMark, ...]
    loads: tuple[LoadMark, ...]
    texts: tuple[TextMark, ...]
    dxf_version: str
    length_unit: str | None
    findings: tuple[Finding, ...]
    recovered: bool = False
