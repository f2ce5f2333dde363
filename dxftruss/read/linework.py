"""What the reader gives the rest of the pipeline: the line work and the marks found
beside it (support and load marks, load label texts). Plain frozen data, no DXF."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..findings import Finding
from ..model import Fix
from .layers import LayerState


@dataclass(frozen=True)
class SupportMark:
    x: float
    y: float
    fix: Fix
    handle: str
    layer: str
    #: for a support read from a block reference's name or attribute (any layer):
    #: the block name and the words that made it a support; "" otherwise
    block: str = ""
    why: str = ""
    #: the unit direction an inclined roller (``Fix.N``) restrains; None otherwise
    normal: tuple[float, float] | None = None
    #: world z of the mark (0 in a flat drawing; used when the line work lies in another plane)
    z: float = 0.0
    #: the world axes the mark's layer fixes ("xy", "xyz", "z" ...; "" for a block read
    #: as a support, which ``fix`` and ``normal`` say in the drawing plane)
    axes: str = ""


@dataclass(frozen=True)
class LoadMark:
    """A drawn load line; which end is the arrow head is decided when joints are known."""

    start: tuple[float, float]
    end: tuple[float, float]
    case: str
    handle: str
    layer: str
    #: world z of the start and the end (0 in a flat drawing)
    z: tuple[float, float] = (0.0, 0.0)


@dataclass(frozen=True)
class TextMark:
    x: float
    y: float
    text: str
    layer: str
    handle: str
    #: character height in drawing units (0 when unknown)
    height: float = 0.0
    #: world z of the insertion point (0 in a flat drawing)
    z: float = 0.0


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
    #: the header's ``$INSUNITS`` code as written (None when absent)
    header_units: int | None = None
    #: layer and block names DXF cannot store (control characters, ``<>/\":;?*|=``):
    #: (kind "layer" or "block", name as read, legal name the annotated DXF writes)
    renamed: tuple[tuple[str, str, str], ...] = ()
    #: the DXF library's document as read (ezdxf ``Drawing``): the reports draw and copy
    #: it instead of reading the file again. Not part of comparisons.
    document: Any = field(default=None, compare=False, repr=False)
    #: the document lacks the plain model-space line work the streaming reader read
    #: (``read_drawing(stream=True)``): the reports must not draw or copy it
    partial_document: bool = field(default=False, compare=False, repr=False)
    #: the layout read: "Model" for model space, else a paper-space layout's name
    #: (coordinates are then that layout's paper units)
    layout: str = "Model"
    #: the layer table as read (name, on, frozen, locked, plot), in table order
    layer_states: tuple[LayerState, ...] = ()
    #: effective layer -> entity type -> count of what the walk met in the layout read
    #: (block content once per placement; content of a reference on a frozen layer is
    #: not walked, the reference itself is counted)
    layer_counts: dict[str, dict[str, int]] = field(default_factory=dict, compare=False, repr=False)
    #: per segment the key naming the entity it came from: its handle in model space;
    #: inside blocks the top-level INSERT's handle, the nested INSERT handles and the
    #: entity's own handle in its block definition joined by "/" (``1A/2F/3C``); empty
    #: when not known (line work built in memory)
    keys: tuple[str, ...] = ()
    #: handle -> block name of every block reference whose content was read
    block_names: dict[str, str] = field(default_factory=dict, compare=False, repr=False)
    #: (n, 2) world z of each segment's two ends (None: not known, taken as 0)
    segment_z: Any = field(default=None, compare=False, repr=False)

    def entity_keys(self) -> tuple[str, ...]:
        """``keys``, or the handles where keys were not given."""
        return self.keys if len(self.keys) == len(self.handles) else self.handles
