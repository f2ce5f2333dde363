"""The original drawing, rendered onto a reportlab canvas through ezdxf's drawing add-on.

Glossary:
    recording   what ezdxf's Frontend drew, kept by its Recorder: lines, paths,
                filled paths (text glyphs, hatches) and points, in drawing units.
    page map    the affine map drawing units -> page points: ``(xy - origin) * scale
                + offset``, applied in numpy (float64) before anything reaches reportlab,
                which writes only about 7 significant digits.
    greying     the original is drawn in light grey so our overlay reads on top of it:
                a colour's luminance L in [0, 1] becomes the grey ``lo + (hi - lo) * L``.

Flow: ``record_drawing(path)`` reads the DXF again and records it once;
``PageMap.fit(...)`` fits a box of the drawing into a page rectangle;
``ReportlabBackend(canvas, page_map)`` replays the recording onto a canvas
(``recording.player.replay(backend)``), every coordinate mapped to page points.

Heavy imports (ezdxf, its drawing add-on, reportlab) live inside the functions.
"""

from __future__ import annotations

import os
from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:
    from ..result import Result

#: entity types whose fills are area fills (drawn lighter than text glyph fills)
AREA_FILL_TYPES = frozenset({"HATCH", "MPOLYGON", "SOLID", "TRACE", "3DFACE", "WIPEOUT"})


@dataclass(frozen=True)
class PageMap:
    """Drawing units -> page points: ``(xy - origin) * scale + offset`` (no rotation).

    ``scale`` is in points per drawing unit.
    """

    origin: tuple[float, float]
    scale: float
    offset: tuple[float, float]

    @classmethod
    def fit(
        cls,
        box: tuple[float, float, float, float],
        rect: tuple[float, float, float, float],
        *,
        min_extent: float = 1e-12,
    ) -> PageMap:
        """Fit the drawing box (x0, y0, x1, y1) into the page rect (x, y, w, h), centred,
        aspect kept. A degenerate box (a point or a line) is fitted by its larger side."""
        x0, y0, x1, y1 = (float(v) for v in box)
        rx, ry, rw, rh = (float(v) for v in rect)
        w, h = max(x1 - x0, 0.0), max(y1 - y0, 0.0)
        big = max(w, h, min_extent)
        sx = rw / w if w > min_extent * big else np.inf
        sy = rh / h if h > min_extent * big else np.inf
        s = min(sx, sy)
        if not np.isfinite(s):  # a single point: any scale; centre it
            s = 1.0
        ox = rx + (rw - s * w) / 2
        oy = ry + (rh - s * h) / 2
        return cls((x0, y0), float(s), (float(ox), float(oy)))

    def apply(self, xy: Any) -> np.ndarray:
        """Map an (n, 2) array (or one point) of drawing coordinates to page points."""
        a = np.asarray(xy, dtype=np.float64)
        return (a - np.asarray(self.origin)) * self.scale + np.asarray(self.offset)

    def point(self, x: float, y: float) -> tuple[float, float]:
        return (
            (x - self.origin[0]) * self.scale + self.offset[0],
            (y - self.origin[1]) * self.scale + self.offset[1],
        )


@dataclass
class Recording:
    """One recorded rendering of a drawing's model space.

    box       (x0, y0, x1, y1) of everything recorded, drawing units (None if empty)
    types     top-level entity handle -> DXF type (tells text fills from area fills)
    skipped   what could not be drawn on a PDF (e.g. raster images), with counts
    """

    player: Any
    box: tuple[float, float, float, float] | None
    types: dict[str, str]
    n_records: int
    skipped: dict[str, int] = field(default_factory=dict)
    #: each record's box, for leaving out what a page does not show (render._record_boxes)
    record_boxes: Any = None


def read_document(path: str | os.PathLike[str], *, recover: bool = False) -> Any:
    """Read the DXF again: the recovery reader when the drawing needed it (or when the
    normal reader refuses it)."""
    import ezdxf
    from ezdxf import recover as ezrecover

    path = str(path)
    if not recover:
        try:
            return ezdxf.readfile(path)
        except (ezdxf.DXFStructureError, ValueError):  # damaged: as the check did, recover
            pass
    doc, _auditor = ezrecover.readfile(path)
    return doc


def checked_document(result: Result) -> Any:
    """The document the check read (``result.linework.document``): the reports draw and
    copy it, so a run opens and hashes the drawing once. A result made without one (a
    tool that built it by hand) reads the file again, and only if it is still the file
    that was checked (same SHA-256); so does one whose document lacks the line work
    the streaming reader read (``partial_document``). Raises OSError, ValueError or the DXF library's
    errors when that reading fails, InputError when the file changed."""
    doc = getattr(result.linework, "document", None)
    if doc is not None and not getattr(result.linework, "partial_document", False):
        return doc
    from ..errors import InputError
    from ..pipeline import file_sha256

    src = result.source.path
    if file_sha256(src) != result.source.sha256:
        raise InputError(f"{src}: the drawing changed after it was checked; run the check again")
    return read_document(src, recover=bool(result.source.recovered))


def record_drawing(
    doc: Any,
    *,
    max_entities: int = 200_000,
    layout: str = "Model",
) -> Recording:
    """Render the model space of ``doc`` (or the paper-space layout named ``layout``,
    without its VIEWPORT windows onto model space, in paper units: the coordinates the
    check read) once into a Recorder (white background, true colours, linetypes
    resolved, text as filled glyphs).

    Raises ``ValueError`` when the layout holds more than ``max_entities`` entities
    (the caller then draws the members only) or when ``layout`` is not in ``doc``.
    """
    from ezdxf.addons.drawing import Frontend, RenderContext
    from ezdxf.addons.drawing.config import (
        BackgroundPolicy,
        ColorPolicy,
        Configuration,
        ProxyGraphicPolicy,
    )
    from ezdxf.addons.drawing.recorder import Recorder

    msp = doc.modelspace() if layout == "Model" else doc.layouts.get(layout)
    if msp is None:
        raise ValueError(f"no layout {layout!r} in the drawing")
    n = len(msp)
    if n > max_entities:
        raise ValueError(f"{n} entities in the layout (more than {max_entities} are not rendered)")
    types = {e.dxf.handle: e.dxftype() for e in msp if e.dxf.handle}
    cfg = Configuration(
        background_policy=BackgroundPolicy.WHITE,
        color_policy=ColorPolicy.COLOR,
        proxy_graphic_policy=ProxyGraphicPolicy.SHOW,
        hatching_timeout=5.0,
    )
    rec = Recorder()
    Frontend(RenderContext(doc), rec, config=cfg).draw_layout(
        msp, finalize=True, filter_func=lambda e: e.dxftype() != "VIEWPORT"
    )
    player = rec.player()
    box = None
    if player.records:
        bb = player.bbox()
        if bb.has_data:
            box = (bb.extmin.x, bb.extmin.y, bb.extmax.x, bb.extmax.y)
    return Recording(player=player, box=box, types=types, n_records=len(player.records))


def _rgb(color: str) -> tuple[float, float, float]:
    h = color.lstrip("#")
    try:
        return int(h[0:2], 16) / 255, int(h[2:4], 16) / 255, int(h[4:6], 16) / 255
    except ValueError:
        return 0.0, 0.0, 0.0


def segment_ops(seg: np.ndarray) -> str:
    """PDF path operators for (n, 4) segments in page points (``x1 y1 m x2 y2 l``).

    Written here with 3 decimals rather than through reportlab's number formatting,
    which is slow in pure Python and keeps only about 7 significant digits."""
    return "\n".join(
        f"{a:.3f} {b:.3f} m {c:.3f} {d:.3f} l" for a, b, c, d in np.asarray(seg, dtype=float).reshape(-1, 4).tolist()
    )


def stroke_segments(canvas: Any, seg: np.ndarray) -> None:
    """Stroke many segments as one path with the canvas's current line style."""
    if len(seg):
        canvas.addLiteral("n\n" + segment_ops(seg) + "\nS")


class ReportlabBackend:
    """An ezdxf drawing backend that paints on a reportlab canvas in page points.

    Every coordinate goes through ``page_map`` (numpy, float64) and is written as PDF
    path operators with 3 decimals. Colours become greys between ``grey`` = (lo, hi)
    by luminance; area fills (hatches, solids) are drawn lighter still
    (``fill_grey``). Line weights (mm) are clamped to ``width_pt``. Raster images are
    skipped and counted in ``skipped``. Strokes of one style are batched into one path.
    """

    def __init__(
        self,
        canvas: Any,
        page_map: PageMap,
        *,
        types: dict[str, str] | None = None,
        grey: tuple[float, float] = (0.6, 0.9),
        fill_grey: tuple[float, float] = (0.82, 0.95),
        width_pt: tuple[float, float] = (0.2, 1.0),
        lineweight_scale: float = 0.5,
        hide: frozenset[str] = frozenset(),
    ) -> None:
        self.c = canvas
        #: top-level entity handles not drawn (the drawing's load texts on the pages of
        #: other cases: their values belong to one case only)
        self.hide = hide
        self.map = page_map
        self.types = types or {}
        self.grey = grey
        self.fill_grey = fill_grey
        self.width_pt = width_pt
        self.lineweight_scale = lineweight_scale
        self.skipped: dict[str, int] = {}
        self._key: tuple[Any, ...] | None = None
        self._strokes: list[str] = []
        self._o = np.asarray(page_map.origin, dtype=np.float64)
        self._off = np.asarray(page_map.offset, dtype=np.float64)

    # -- output ----------------------------------------------------------------------
    def _flush(self) -> None:
        if self._strokes:
            self.c.addLiteral("n\n" + "\n".join(self._strokes) + "\nS")
            self._strokes = []

    def _style(self, props: Any, *, area: bool = False) -> None:
        key = (props.color, props.lineweight, area)
        if key == self._key:
            return
        self._flush()
        self._key = key
        r, g, b = _rgb(props.color)
        lum = 0.3 * r + 0.59 * g + 0.11 * b
        lo, hi = self.fill_grey if area else self.grey
        v = lo + (hi - lo) * lum
        self.c.setStrokeGray(v)
        self.c.setFillGray(v)
        w = float(props.lineweight) * 72.0 / 25.4 * self.lineweight_scale
        self.c.setLineWidth(min(max(w, self.width_pt[0]), self.width_pt[1]))

    def _is_area(self, props: Any) -> bool:
        return self.types.get(props.handle, "") in AREA_FILL_TYPES

    def _xy(self, v: Any) -> np.ndarray:
        return (np.asarray(v, dtype=np.float64).reshape(-1, 2) - self._o) * self.map.scale + self._off

    def _path_ops(self, path: Any, out: list[str], *, close: bool = False) -> None:
        """Append the PDF operators of one (multi-)path, in page points."""
        verts = path.np_vertices()
        if len(verts) == 0:
            return
        v = self._xy(verts).tolist()
        codes = path.command_codes()
        cur = v[0]
        out.append(f"{cur[0]:.3f} {cur[1]:.3f} m")
        i = 1
        for code in codes:
            if code == 1:  # LINE_TO
                cur = v[i]
                out.append(f"{cur[0]:.3f} {cur[1]:.3f} l")
                i += 1
            elif code == 2:  # CURVE3_TO: ctrl, end -> cubic
                q, e = v[i], v[i + 1]
                c1x, c1y = cur[0] + (q[0] - cur[0]) * 2 / 3, cur[1] + (q[1] - cur[1]) * 2 / 3
                c2x, c2y = e[0] + (q[0] - e[0]) * 2 / 3, e[1] + (q[1] - e[1]) * 2 / 3
                out.append(f"{c1x:.3f} {c1y:.3f} {c2x:.3f} {c2y:.3f} {e[0]:.3f} {e[1]:.3f} c")
                cur = e
                i += 2
            elif code == 3:  # CURVE4_TO: ctrl1, ctrl2, end
                a, b, e = v[i], v[i + 1], v[i + 2]
                out.append(f"{a[0]:.3f} {a[1]:.3f} {b[0]:.3f} {b[1]:.3f} {e[0]:.3f} {e[1]:.3f} c")
                cur = e
                i += 3
            elif code == 4:  # MOVE_TO
                if close:
                    out.append("h")
                cur = v[i]
                out.append(f"{cur[0]:.3f} {cur[1]:.3f} m")
                i += 1
        if close:
            out.append("h")

    # -- BackendInterface ------------------------------------------------------------
    def configure(self, config: Any) -> None:
        self.config = config

    def set_background(self, color: Any) -> None:
        pass  # the page is white

    def enter_entity(self, entity: Any, properties: Any) -> None:
        pass

    def exit_entity(self, entity: Any) -> None:
        pass

    def draw_point(self, pos: Any, properties: Any) -> None:
        if properties.handle in self.hide:
            return
        self._style(properties)
        self._flush()
        x, y = self.map.point(pos.x, pos.y)
        self.c.addLiteral(f"{x - 0.4:.3f} {y - 0.4:.3f} 0.8 0.8 re f")

    def draw_line(self, start: Any, end: Any, properties: Any) -> None:
        if properties.handle in self.hide:
            return
        self._style(properties)
        x1, y1 = self.map.point(start.x, start.y)
        x2, y2 = self.map.point(end.x, end.y)
        self._strokes.append(f"{x1:.3f} {y1:.3f} m {x2:.3f} {y2:.3f} l")

    def draw_solid_lines(self, lines: Iterable[Any], properties: Any) -> None:
        if properties.handle in self.hide:
            return
        pts = [(s.x, s.y, e.x, e.y) for s, e in lines]
        if not pts:
            return
        self._style(properties)
        a = self._xy(np.asarray(pts, dtype=np.float64).reshape(-1, 2)).reshape(-1, 4)
        self._strokes.append(segment_ops(a))

    def draw_path(self, path: Any, properties: Any) -> None:
        if properties.handle in self.hide:
            return
        self._style(properties)
        self._path_ops(path, self._strokes)

    def draw_filled_paths(self, paths: Iterable[Any], properties: Any) -> None:
        if properties.handle in self.hide:
            return
        self._style(properties, area=self._is_area(properties))
        self._flush()
        ops: list[str] = []
        for p in paths:
            self._path_ops(p, ops, close=True)
        if ops:  # f* = even-odd fill: glyph holes stay open
            self.c.addLiteral("n\n" + "\n".join(ops) + "\nf*")

    def draw_filled_polygon(self, points: Any, properties: Any) -> None:
        if properties.handle in self.hide:
            return
        v = self._xy(points.np_vertices()).tolist()
        if len(v) < 3:
            return
        self._style(properties, area=self._is_area(properties))
        self._flush()
        body = " ".join(f"{x:.3f} {y:.3f} {'m' if k == 0 else 'l'}" for k, (x, y) in enumerate(v))
        self.c.addLiteral(f"n {body} h f")

    def draw_image(self, image_data: Any, properties: Any) -> None:
        self.skipped["raster image"] = self.skipped.get("raster image", 0) + 1

    def clear(self) -> None:
        pass

    def finalize(self) -> None:
        self._flush()


def draw_recording(
    canvas: Any,
    recording: Recording,
    page_map: PageMap,
    *,
    hide: frozenset[str] = frozenset(),
    window: tuple[float, float, float, float] | None = None,
    **style: Any,
) -> dict[str, int]:
    """Replay ``recording`` onto ``canvas`` through ``page_map``, leaving out the entities
    whose top-level handle is in ``hide``; returns what was skipped. With ``window``
    (x0, y0, x1, y1, page points: the box the output is clipped to) the records wholly
    outside it are left out too: a page zoomed to one part of a sheet of thousands
    would otherwise write every other part, unseen."""
    backend = ReportlabBackend(canvas, page_map, types=recording.types, hide=hide, **style)
    player = recording.player if window is None else _within_window(recording, page_map, window)
    canvas.saveState()
    canvas.setLineCap(1)
    canvas.setLineJoin(1)
    player.replay(backend)
    canvas.restoreState()
    return dict(backend.skipped)


#: a record is kept when its box comes within this many points of the window (line
#: widths and caps reach past a line's own box)
WINDOW_MARGIN = 12.0


def _record_boxes(recording: Recording) -> np.ndarray:
    """Each record's box (x0, y0, x1, y1, drawing units), NaN for a record without one
    (always kept); computed once per recording."""
    boxes = recording.record_boxes
    if boxes is None:
        rows = []
        for record in recording.player.records:
            b = record.bbox()
            rows.append((b.extmin.x, b.extmin.y, b.extmax.x, b.extmax.y) if b.has_data else (np.nan,) * 4)
        boxes = np.array(rows, dtype=np.float64).reshape(-1, 4)
        recording.record_boxes = boxes
    return boxes


def _within_window(recording: Recording, page_map: PageMap, window: tuple[float, float, float, float]) -> Any:
    """The recording's player, or a player of the records that meet ``window`` (sharing
    the records, the properties and the configuration; their order kept)."""
    boxes = _record_boxes(recording)
    if not len(boxes):
        return recording.player
    s = float(page_map.scale)
    (ox, oy), (fx, fy) = page_map.origin, page_map.offset
    m = WINDOW_MARGIN
    x0, y0 = (window[0] - m - fx) / s + ox, (window[1] - m - fy) / s + oy
    x1, y1 = (window[2] + m - fx) / s + ox, (window[3] + m - fy) / s + oy
    with np.errstate(invalid="ignore"):
        out = (boxes[:, 2] < x0) | (boxes[:, 0] > x1) | (boxes[:, 3] < y0) | (boxes[:, 1] > y1)
    if not out.any():
        return recording.player
    from ezdxf.addons.drawing.recorder import Player

    src = recording.player
    player = Player()
    player.config = src.config
    player.background = src.background
    player.properties = src.properties
    player.has_shared_recordings = True
    player.records = [r for r, o in zip(src.records, out.tolist(), strict=True) if not o]
    return player
