"""The envelope: per member the largest tension and compression over every solved case,
combination and moving load, with where each comes from; per support the extreme
reactions over the cases and combinations.

Glossary:
    source      a load case, a combination, or a moving load (its extremes alone, not
                added to any case: combine by hand where a code asks for it).
    tension     the largest positive force of a member over the sources (0.0 and no
                source when it is never in tension); ``compression`` the most negative.
    governing   a member's larger of |tension| and |compression|.

Forces in the force unit, tension positive; reactions acting on the structure.
Unsolved members of a case (NaN) take no part in it.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from .statics import CaseResult


@dataclass(frozen=True)
class Source:
    """What an envelope value came from: ``kind`` "case", "combination" or "moving",
    its ``name``, and for a moving load the front axle's station (drawing units) and
    the direction of travel (+1 from -> to, -1 back)."""

    kind: str
    name: str
    station: float | None = None
    direction: int | None = None


@dataclass(frozen=True)
class Envelope:
    """tension / compression (m,) force unit (NaN: never solved), with the index of
    their source in ``sources`` (-1: none); reactions per restrained joint:
    (joint, [rx_max, rx_min, ry_max, ry_min], [source index of each])."""

    sources: tuple[Source, ...]
    tension: np.ndarray
    tension_source: np.ndarray
    compression: np.ndarray
    compression_source: np.ndarray
    reactions: tuple[tuple[int, tuple[float, float, float, float], tuple[int, int, int, int]], ...]
    tension_station: np.ndarray
    compression_station: np.ndarray

    @property
    def governing(self) -> np.ndarray:
        """max(|tension|, |compression|) per member (NaN: never solved)."""
        return np.fmax(np.abs(self.tension), np.abs(self.compression))

    def top(self, k: int) -> list[int]:
        """The ``k`` members with the largest governing force, largest first."""
        g = np.nan_to_num(self.governing, nan=-1.0)
        order = np.argsort(-g, kind="stable")
        return [int(e) for e in order[:k] if g[e] > 0]


def envelope(cases: Sequence[CaseResult], moving: Sequence[object] = (), n_members: int | None = None) -> Envelope:
    """The envelope of ``cases`` (solved members only) and of the ``moving`` load
    results (``moving.MovingResult``)."""
    m = n_members if n_members is not None else (len(cases[0].forces) if cases else 0)
    tension, compression = np.full(m, np.nan), np.full(m, np.nan)
    t_src, c_src = np.full(m, -1, dtype=np.int64), np.full(m, -1, dtype=np.int64)
    t_at, c_at = np.full(m, np.nan), np.full(m, np.nan)
    sources: list[Source] = []

    def take(values: np.ndarray, k: int, t_station: np.ndarray | None, c_station: np.ndarray | None) -> None:
        ok = np.isfinite(values)
        first = ok & np.isnan(tension)
        tension[first], compression[first] = 0.0, 0.0
        up = ok & (values > tension)
        down = ok & (values < compression)
        tension[up], t_src[up] = values[up], k
        compression[down], c_src[down] = values[down], k
        t_at[up] = t_station[up] if t_station is not None else np.nan
        c_at[down] = c_station[down] if c_station is not None else np.nan

    for c in cases:
        k = len(sources)
        sources.append(Source("combination" if c.factors else "case", c.name))
        take(np.asarray(c.forces, dtype=float), k, None, None)
    for mv in moving:
        ext = mv.extremes  # type: ignore[attr-defined]
        k = len(sources)
        sources.append(Source("moving", mv.name))  # type: ignore[attr-defined]
        take(ext.tmax, k, ext.tmax_at, None)
        take(ext.cmin, k, None, ext.cmin_at)
    reactions = _reaction_extremes(cases)
    return Envelope(tuple(sources), tension, t_src, compression, c_src, reactions, t_at, c_at)


def _reaction_extremes(
    cases: Sequence[CaseResult],
) -> tuple[tuple[int, tuple[float, float, float, float], tuple[int, int, int, int]], ...]:
    best: dict[int, tuple[list[float], list[int]]] = {}
    for k, c in enumerate(cases):
        for j, rx, ry in c.reactions:
            vals, src = best.setdefault(int(j), ([-np.inf, np.inf, -np.inf, np.inf], [-1, -1, -1, -1]))
            for slot, v, better in (
                (0, rx, rx > vals[0]),
                (1, rx, rx < vals[1]),
                (2, ry, ry > vals[2]),
                (3, ry, ry < vals[3]),
            ):
                if better:
                    vals[slot], src[slot] = float(v), k
    return tuple(
        (j, (vals[0], vals[1], vals[2], vals[3]), (src[0], src[1], src[2], src[3]))
        for j, (vals, src) in sorted(best.items())
    )
