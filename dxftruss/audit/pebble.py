"""The (2,3) pebble game: generic rigidity counts of a planar bar framework.

Glossary:
    vertex        a joint (or a ground vertex standing for the supports).
    edge          a bar between two vertices (a member, a restraint, or a ground edge).
    pebble        each vertex starts with 2 pebbles, one per planar degree of freedom.
    independent   an edge accepted by the game: its row of the rigidity matrix is
                  independent of the rows accepted before it at generic coordinates.
    redundant     an edge the game rejects; each one is one generic state of self-stress.
    free pebbles  pebbles left on the vertices at the end: 2 n - (independent edges) =
                  the generic dimension of the infinitesimal motions (3 of them rigid for a
                  free framework of at least 2 vertices).
    rigid with    a vertex that moves with a given bar in every generic motion.

Method (Jacobs & Hendrickson 1997; Lee & Streinu 2008, the (k, l) = (2, 3) game;
docs/methods.md, pebble game): to insert edge (u, v), collect 2 pebbles on u and 2 on v. A pebble
is collected on u by searching, along directed edges out of u, for a vertex other than
u and v that holds a free pebble, then reversing the path (the pebble moves to u). The
search is an iterative breadth-first search (no Python recursion; shortest reversal
paths). With 4 pebbles the edge is independent: one pebble of u covers it and it is
directed u -> v. Otherwise the edge is redundant (it closes an over-braced region).

Laman's theorem (1970) makes the counts exact for generic coordinates; they are blind
to special geometry (collinear or parallel bars), which only ever lowers the rank.

Supports (docs/methods.md, pebble game): the ground is a rigid Laman body of r + 1 ground
vertices and restraint q is a bar from its joint to its own ground vertex. The body is
a triangle strip g(i-2)-g(i), g(i-1)-g(i) (2 (r + 1) - 3 edges, like a fan
but with bounded degree), inserted first so its edges are all independent. Then the
independent members and restraints are a generically independent set of columns of the
equilibrium matrix A = [B, -R], generic rank = their number, mechanisms = 2 j - rank =
free pebbles - 3, self-stress = m + r - rank. A ground bar has a generic direction,
while a drawn roller acts along its drawn direction: parallel rollers on one rigid body therefore
show as special geometry (k > k_gen), which they are.

Cost: worst case O(n E), since a failed search may visit a whole over-braced region.
Two shortcuts that never change the result keep trusses near linear: an end with at
most one bar takes the new edge with its own free pebble (Henneberg step, no search),
and an edge inside a vertex set already known to be rigid is rejected without a search
(``_RigidSets``). Measured (one core, pure Python): 50 000-member Pratt 0.06-0.15 s,
10 000-panel cross-braced truss with 10 000 redundant members 0.1-0.4 s, triangulated
grids of 50 000 edges 0.1-0.3 s; randomly diluted triangular lattices (floppy regions
everywhere, nothing like a truss drawing) 3-6 s at 40-50 000 edges.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass, field

import numpy as np

__all__ = ["PebbleGame", "SupportedPebbleGame", "pebble_game", "supported_pebble_game"]


@dataclass
class PebbleGame:
    """Outcome of the (2,3) pebble game on ``n_vertices`` vertices.

    independent   (E,) bool, True for edges the game accepted (in the caller's order)
    free_pebbles  pebbles left on the vertices: 2 n - (number of independent edges)

    The final directed pebble graph is kept so that :meth:`rigid_with` can answer
    rigid-cluster questions afterwards.
    """

    n_vertices: int
    independent: np.ndarray
    free_pebbles: int
    _out: list[list[int]] = field(repr=False)
    _pebbles: list[int] = field(repr=False)

    @property
    def n_independent(self) -> int:
        return int(np.count_nonzero(self.independent))

    @property
    def n_redundant(self) -> int:
        return int(self.independent.size - self.n_independent)

    @property
    def dof(self) -> int:
        """Internal (non-rigid) degrees of freedom of the free framework: free pebbles - 3.

        A single vertex has 2 free pebbles and no rotation, so its dof is 0.
        """
        if self.n_vertices == 0:
            return 0
        if self.n_vertices == 1:
            return self.free_pebbles - 2
        return self.free_pebbles - 3

    def rigid_with(self, a: int, b: int) -> np.ndarray:
        """Vertices rigidly connected to the independent edge (a, b), generically.

        Collects 3 pebbles on a and b (the most an edge's ends can hold), then every
        vertex that cannot reach a free pebble along directed edges without passing
        through a or b is rigid with them (Jacobs & Hendrickson's rigid-cluster test).
        One reverse breadth-first search from all free pebbles answers every vertex at
        once: O(n + E). The game's state is updated (pebbles may move), which keeps it
        a valid pebble game. Returns an (n_vertices,) bool mask including a and b.
        """
        a, b = int(a), int(b)
        out, peb = self._out, self._pebbles
        n = self.n_vertices
        seen = [0] * n
        parent = [0] * n
        stamp = [0]
        while peb[a] < 2 and _collect(a, b, out, peb, seen, parent, stamp) is None:
            pass
        while peb[b] < 2 and _collect(b, a, out, peb, seen, parent, stamp) is None:
            if peb[a] + peb[b] > 3:
                raise ValueError("rigid_with needs two vertices joined rigidly (e.g. the ends of an edge)")
        rev: list[list[int]] = [[] for _ in range(n)]
        for x in range(n):
            for y in out[x]:
                rev[y].append(x)
        floppy = [False] * n
        queue = deque(v for v in range(n) if peb[v] and v != a and v != b)
        for v in queue:
            floppy[v] = True
        while queue:
            y = queue.popleft()
            for x in rev[y]:
                if not floppy[x] and x != a and x != b:
                    floppy[x] = True
                    queue.append(x)
        return ~np.array(floppy, dtype=bool)


def _collect(
    root: int, block: int, out: list[list[int]], peb: list[int], seen: list[int], parent: list[int], stamp: list[int]
) -> list[int] | None:
    """Move one free pebble to ``root`` from a vertex reachable without entering ``block``.

    Returns None on success, else the vertices visited by the failed search (root first).
    """
    stamp[0] += 1
    st = stamp[0]
    seen[root] = st
    seen[block] = st
    queue = [root]
    i = 0
    while i < len(queue):
        x = queue[i]
        i += 1
        for y in out[x]:
            if seen[y] != st:
                seen[y] = st
                parent[y] = x
                if peb[y]:
                    peb[y] -= 1
                    while y != root:
                        x = parent[y]
                        out[x].remove(y)
                        out[y].append(x)
                        y = x
                    peb[root] += 1
                    return None
                queue.append(y)
    return queue


def _touches(out: list[list[int]], a: int, b: int) -> bool:
    """Whether an accepted edge joins a and b (in either direction)."""
    return b in out[a] or a in out[b]


class _RigidSets:
    """Vertex sets known to be rigid, used only to reject redundant edges early.

    Each vertex carries at most one set label (a union-find over set ids). Labelling
    starts at the first failed search (until then no edge was redundant, and a plain
    determinate truss never pays for it). Sets are seeded by single bars, grown by the
    Henneberg rule (a vertex with bars to two vertices of a rigid set is rigid with it),
    merged when two rigid sets share two vertices, and created by failed pebble searches
    (the vertices a failed search visits, plus the blocked end, span a tight Laman
    subgraph, hence a rigid set). Every claim is true of the edges accepted so far, and
    rigidity only grows as edges are added, so an edge with both ends in one set is
    redundant: skipping its pebble search changes no result, only the time (a failed
    search in a large over-braced region costs a visit of the whole region).
    """

    def __init__(self, n: int) -> None:
        self.active = False  # labels start with the first failed search (before it, no edge is redundant)
        self.label = [-1] * n
        self.parent: list[int] = []
        self.size: list[int] = []
        self.adj: list[list[int]] = [[] for _ in range(n)]

    def find(self, s: int) -> int:
        parent = self.parent
        root = s
        while parent[root] != root:
            root = parent[root]
        while parent[s] != root:
            parent[s], s = root, parent[s]
        return root

    def set_of(self, w: int) -> int:
        lab = self.label[w]
        return -1 if lab < 0 else self.find(lab)

    def _new(self) -> int:
        self.parent.append(len(self.parent))
        self.size.append(0)
        return len(self.parent) - 1

    def _move(self, w: int, target: int) -> None:
        old = self.set_of(w)
        if old >= 0:
            self.size[old] -= 1
        self.label[w] = target
        self.size[target] += 1

    def _grow(self, seeds: list[int], target: int) -> None:
        """Henneberg growth of ``target`` from the neighbours of ``seeds``."""
        adj, set_of = self.adj, self.set_of
        work = list(seeds)
        while work:
            x = work.pop()
            for z in adj[x]:
                sz = set_of(z)
                if sz == target:
                    continue
                if sz >= 0 and self.size[sz] >= self.size[target]:
                    continue
                hits = 0
                for y in adj[z]:
                    if set_of(y) == target:
                        hits += 1
                        if hits == 2:
                            break
                if hits == 2:
                    self._move(z, target)
                    work.append(z)

    def accepted(self, u: int, v: int) -> None:
        """Record an independent edge (u, v)."""
        self.adj[u].append(v)
        self.adj[v].append(u)
        if not self.active:
            return
        su, sv = self.set_of(u), self.set_of(v)
        if su < 0 and sv < 0:
            t = self._new()
            self._move(u, t)
            self._move(v, t)
            self._grow([u, v], t)
        elif su < 0 or (sv >= 0 and self.size[sv] >= self.size[su]):
            self._grow([v], sv)
        else:
            self._grow([u], su)

    def tight(self, vertices: list[int]) -> None:
        """Record a rigid vertex set (from a failed search)."""
        self.active = True
        set_of = self.set_of
        counts: dict[int, int] = {}
        for w in vertices:
            s = set_of(w)
            if s >= 0:
                counts[s] = counts.get(s, 0) + 1
        t = self._new()
        for s, c in counts.items():
            if c >= 2:
                self.parent[s] = t
                self.size[t] += self.size[s]
        for w in vertices:
            s = set_of(w)
            if s != t and (s < 0 or self.size[s] < self.size[t]):
                self._move(w, t)
        self._grow(vertices, t)


def pebble_game(
    n_vertices: int, edges: np.ndarray, *, order: np.ndarray | None = None, track_rigid_sets: bool = True
) -> PebbleGame:
    """Play the (2,3) pebble game; edges are inserted in ``order`` (default: as given).

    ``edges`` is an (E, 2) int array of vertex indices. A loop (u == u) is never
    independent. The counts do not depend on the order; which edges are marked
    redundant does (the first edges of an over-braced region are kept: the greedy
    basis of the rigidity matroid in insertion order). ``track_rigid_sets`` rejects
    edges inside known rigid sets without a search (same result, much faster on
    heavily over-braced parts; see ``_RigidSets``).
    """
    edges = np.asarray(edges, dtype=np.int64).reshape(-1, 2)
    n = int(n_vertices)
    if edges.size and (edges.min() < 0 or edges.max() >= n):
        raise ValueError("edge endpoint out of range")
    n_edges = edges.shape[0]
    seq = np.arange(n_edges) if order is None else np.asarray(order, dtype=np.int64)
    us = edges[:, 0].tolist()
    vs = edges[:, 1].tolist()
    out: list[list[int]] = [[] for _ in range(n)]
    peb = [2] * n
    seen = [0] * n
    parent = [0] * n
    stamp = [0]
    indep = np.zeros(n_edges, dtype=bool)
    deg = [0] * n
    sets = _RigidSets(n) if track_rigid_sets else None

    def accept(e: int, u: int, v: int) -> None:
        """Insert bar e as independent: spend one of u's pebbles, orient it u -> v."""
        peb[u] -= 1
        out[u].append(v)
        deg[u] += 1
        deg[v] += 1
        indep[e] = True
        if sets is not None:
            sets.accepted(u, v)

    for e in seq.tolist():
        u = us[e]
        v = vs[e]
        if u == v:
            continue
        if sets is not None and sets.active:
            su = sets.set_of(u)
            if su >= 0 and su == sets.set_of(v):
                continue
        # Henneberg shortcut: an end with at most one bar (to a vertex other than the
        # other end) keeps a free pebble, and the edge cannot close a tight set; cover
        # it with that pebble, no search needed (any orientation with pebbles +
        # out-degree = 2 on a (2,3)-sparse graph is a valid game state).
        if deg[v] <= 1 and peb[v] and not (deg[v] and _touches(out, v, u)):
            u, v = v, u
        if deg[u] <= 1 and peb[u] and not (deg[u] and _touches(out, u, v)):
            accept(e, u, v)
            continue
        failed = None
        while peb[u] < 2:
            failed = _collect(u, v, out, peb, seen, parent, stamp)
            if failed is not None:
                failed.append(v)
                break
        if failed is None:
            while peb[v] < 2:
                failed = _collect(v, u, out, peb, seen, parent, stamp)
                if failed is not None:
                    failed.append(u)
                    break
        if failed is not None:
            if sets is not None:
                sets.tight(failed)
            continue
        accept(e, u, v)
    return PebbleGame(n, indep, int(sum(peb)), out, peb)


@dataclass(frozen=True)
class SupportedPebbleGame:
    """Generic counts of a supported part (joints 0..j-1, ground vertices j..j+r).

    independent   (m + r,) bool: member columns then restraint columns of A that the
                  game kept (a generically independent set of columns)
    rank          generic rank of A = number of independent members and restraints
    mechanisms    k_gen = 2 j - rank;  self_stress  s_gen = m + r - rank
    game          the underlying game; its edges are the ground edges first, then the
                  members, then the restraints (its ``n_independent`` therefore counts
                  the ground edges too, as the check cases of docs/methods.md do)
    """

    n_joints: int
    n_members: int
    n_restraints: int
    independent: np.ndarray
    rank: int
    mechanisms: int
    self_stress: int
    n_ground_edges: int
    game: PebbleGame

    def rigid_with_ground(self) -> np.ndarray:
        """(j,) bool: joints that cannot move in any generic mechanism of the part.

        All False when there are no supports (every joint moves rigidly then).
        """
        if self.n_restraints == 0:
            return np.zeros(self.n_joints, dtype=bool)
        g0 = self.n_joints
        return self.game.rigid_with(g0, g0 + 1)[: self.n_joints]


def _ground_edges(first: int, count: int) -> np.ndarray:
    """A triangle strip on ground vertices first .. first + count - 1 (Laman, 2 count - 3 edges)."""
    if count < 2:
        return np.zeros((0, 2), dtype=np.int64)
    i = np.arange(2, count)
    strip = np.concatenate([np.array([[0, 1]]), np.column_stack([i - 2, i]), np.column_stack([i - 1, i])])
    strip = strip[np.lexsort((strip[:, 0], strip[:, 1]))]
    return strip + first


def supported_pebble_game(n_joints: int, member_ends: np.ndarray, restraint_joints: np.ndarray) -> SupportedPebbleGame:
    """Generic rank, mechanisms and self-stress of a supported planar part.

    ``member_ends`` (m, 2) local joint indices; ``restraint_joints`` (r,) the joint of
    each restraint column (direction is irrelevant to the generic count). Members are
    inserted in sweep order (by their larger joint index, joints being numbered by
    position), which keeps the pebble searches short; restraints go last.
    """
    ends = np.asarray(member_ends, dtype=np.int64).reshape(-1, 2)
    rj = np.asarray(restraint_joints, dtype=np.int64).reshape(-1)
    j, m, r = int(n_joints), ends.shape[0], rj.size
    n_ground = r + 1 if r else 0
    ground = _ground_edges(j, n_ground)
    restraint_edges = np.column_stack([rj, j + np.arange(r)]) if r else np.zeros((0, 2), dtype=np.int64)
    edges = np.concatenate([ground, ends, restraint_edges]).astype(np.int64)
    g = ground.shape[0]
    hi = ends.max(axis=1) if m else np.zeros(0, dtype=np.int64)
    lo = ends.min(axis=1) if m else np.zeros(0, dtype=np.int64)
    member_order = g + np.lexsort((lo, hi))
    order = np.concatenate([np.arange(g), member_order, g + m + np.arange(r)])
    game = pebble_game(j + n_ground, edges, order=order)
    independent = game.independent[g:].copy()
    rank = int(np.count_nonzero(independent))
    return SupportedPebbleGame(j, m, r, independent, rank, 2 * j - rank, m + r - rank, g, game)
