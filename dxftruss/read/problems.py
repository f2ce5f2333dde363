"""What the walk found wrong or left unused, and the findings made from it.

The walk records problems as it places content (:class:`_Problems`), aggregated per
entity and top-level INSERT so a block placed a thousand times gives one finding with
a count. After the walk :func:`_findings` turns the records into findings, in a fixed
order: ``invalid-coordinate``, ``arc-segment``, ``unsupported-geometry`` for block
problems, the ``non-planar`` one, then ``ignored-entity`` per type.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from ..findings import Code, Finding
from .extract import _NOT_FINITE

if TYPE_CHECKING:
    from .place import _Batch


class _Problems:
    """The records; the limits that decide them (coordinate magnitude, block depth for
    the message, the flatness tolerance) as attributes."""

    def __init__(self, *, max_coordinate: float, max_block_depth: int, planar_tol: float) -> None:
        self.max_coordinate = max_coordinate
        self.max_block_depth = max_block_depth
        self.planar_tol = planar_tol
        self.ignored: dict[str, list[Any]] = {}  # type -> [count, set(layers)]
        self.block_problems: dict[tuple[str, str], list[Any]] = {}  # (reason, block) -> [count, handle, at]
        # (top-level handle, content scope, entity index, type) -> aggregated record
        self.arc_findings: dict[tuple[str, int, int, str], list[Any]] = {}
        self.invalid: dict[tuple[str, int, int, str], list[Any]] = {}
        self.tilted: list[str] = []

    def ok_point(self, p: np.ndarray) -> bool:
        return bool(np.all(np.abs(p) <= self.max_coordinate))

    def ignore(self, typ: str, layer: str, n: int) -> None:
        rec = self.ignored.setdefault(typ, [0, set()])
        rec[0] += n
        rec[1].add(layer)

    def bad_point(self, typ: str, handle: str, layer: str) -> None:
        rec = self.invalid.setdefault((handle, 0, -1, typ), [typ, layer, 0, _NOT_FINITE])
        rec[2] += 1

    def bad_entity(self, key: tuple[str, int, int, str], layer: str, why: str, n: int) -> None:
        """Line work entity skipped in ``n`` placements (``why`` "" : a coordinate)."""
        rec = self.invalid.setdefault(key, [key[3], layer, 0, why or _NOT_FINITE])
        rec[2] += n

    def arc(self, key: tuple[str, int, int, str], layer: str, narcs: int, at: np.ndarray, spline_fit: bool) -> None:
        """``narcs`` arc pieces of one entity; ``at`` (WCS) marks the first record."""
        rec = self.arc_findings.get(key)
        if rec is None:
            pt = (float(at[0]), float(at[1])) if self.ok_point(at) else None
            self.arc_findings[key] = [layer, narcs, pt, spline_fit]
        else:
            rec[1] += narcs

    def block_problem(
        self, reason: str, block: str, batch: _Batch | None, handle: str, at: np.ndarray | None, n: int
    ) -> None:
        rec = self.block_problems.get((reason, block))
        top = handle if batch is None else str(batch.handles[0])
        if rec is None:
            pt = None
            if at is not None and self.ok_point(at):
                pt = (float(at[0]), float(at[1]))
            self.block_problems[(reason, block)] = [n, top, pt]
        else:
            rec[0] += n


def _findings(p: _Problems, seg: np.ndarray, z: np.ndarray, handles: tuple[str, ...]) -> list[Finding]:
    """All findings of the walk; ``seg``, ``z``, ``handles`` are the final line work."""
    out = _invalid_coordinates(p) + _arc_segments(p) + _block_findings(p)
    planar = _planarity(p, seg, z, handles)
    if planar is not None:
        out.append(planar)
    return out + _ignored(p)


def _invalid_coordinates(p: _Problems) -> list[Finding]:
    out = []
    for (h, _, _, _), (t, layer, n, why) in p.invalid.items():
        if why == _NOT_FINITE:
            why = f"a coordinate is not finite or beyond {p.max_coordinate:g} drawing units"
        out.append(
            Finding(
                Code.INVALID_COORDINATE,
                f"{t} (handle {h}) on layer {layer!r}: {why}; it was skipped" + (f" ({n} placements)" if n > 1 else ""),
                data={"handle": h, "layer": layer, "type": t, "count": n},
            )
        )
    return out


def _arc_segments(p: _Problems) -> list[Finding]:
    out = []
    for (h, _, _, typ), (layer, narcs, at, spline_fit) in p.arc_findings.items():
        what = "a fitted curve" if spline_fit else f"{narcs} arc segment{'s' if narcs != 1 else ''}"
        out.append(
            Finding(
                Code.ARC_SEGMENT,
                f"{typ} (handle {h}) on layer {layer!r} has {what}; curved pieces are not used as members",
                at=at,
                data={"handle": h, "layer": layer, "arcs": narcs},
            )
        )
    return out


def _block_findings(p: _Problems) -> list[Finding]:
    out = []
    for (reason, block), (n, h, at) in p.block_problems.items():
        text = {
            "block-cycle": f"block {block!r} refers to itself through nested block references",
            "too-deep": f"block {block!r} is nested deeper than {p.max_block_depth} levels",
            "missing-block": f"block {block!r} is referenced but not defined",
            "xref": f"block {block!r} is an external reference (XREF); its content is not in this file",
            "unreadable-entity": f"entity {block} could not be read",
        }[reason]
        key = "entity" if reason == "unreadable-entity" else "block"
        out.append(
            Finding(
                Code.UNSUPPORTED_GEOMETRY,
                f"{text}; skipped ({n} placement{'s' if n != 1 else ''}, first via {h or 'model space'})",
                at=at,
                data={"reason": reason, key: block, "count": n, "handle": h},
            )
        )
    return out


def _planarity(p: _Problems, seg: np.ndarray, z: np.ndarray, handles: tuple[str, ...]) -> Finding | None:
    spread = 0.0
    z_min = z_max = 0.0
    at = None
    offenders: list[str] = []
    if len(z):
        z_min, z_max = float(z.min()), float(z.max())
        spread = z_max - z_min
        xy_extent = float(max(np.ptp(seg[:, [0, 2]]), np.ptp(seg[:, [1, 3]])))
        scale = max(xy_extent, float(np.abs(z).max()))
        if spread > p.planar_tol * scale:
            med = float(np.median(z))
            dev = np.abs(z - med).max(axis=1)
            far = np.flatnonzero(dev > p.planar_tol * scale)
            offenders = sorted({handles[i] for i in far[:1000]})[:20]
            worst = int(np.argmax(dev))
            at = (float(seg[worst, 0]), float(seg[worst, 1]))
        else:
            spread = 0.0
    if not spread and not p.tilted:
        return None
    parts = []
    if spread:
        parts.append(f"z of the line work ranges from {z_min:g} to {z_max:g} drawing units")
    if p.tilted:
        parts.append("some line work lies in a plane tilted out of the XY plane")
    return Finding(
        Code.UNSUPPORTED_GEOMETRY,
        "the line work is not flat: " + " and ".join(parts) + "; z is dropped and members are read in plan (x, y)",
        at=at,
        data={
            "reason": "non-planar",
            "z_min": z_min,
            "z_max": z_max,
            "handles": offenders or sorted(set(p.tilted))[:20],
        },
    )


def _ignored(p: _Problems) -> list[Finding]:
    out = []
    for typ in sorted(p.ignored):
        n, lays = p.ignored[typ]
        lays_sorted = sorted(lays)
        out.append(
            Finding(
                Code.IGNORED_ENTITY,
                f"{n} {typ} entit{'ies' if n != 1 else 'y'} not used "
                f"(layers: {', '.join(lays_sorted[:5])}{', ...' if len(lays_sorted) > 5 else ''})",
                data={"type": typ, "count": n, "layers": lays_sorted[:20]},
            )
        )
    return out
