"""Tests of dxftruss.audit.pebble: the (2,3) pebble game and its supported-part counts.

References used (named beside each check):
- docs/methods.md, pebble game (the game, supports as a ground body) and Check cases (pebble game
  counts for C1 and C6);
- Laman's theorem: a graph is generically rigid in the plane iff it contains 2n - 3
  independent edges; K4 (6 edges on 4 vertices) has one redundant edge (closed-form);
- the rank of the rigidity matrix at random coordinates (Asimow & Roth: generic rank is
  attained with probability one), computed with numpy as an independent reference;
- the plain game (no rigid-set shortcut) as a reference for the accelerated one.

Vertex numbering in the sketches: joints by position, as the model numbers them.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from dxftruss.audit.pebble import pebble_game, supported_pebble_game

PROPERTY = settings(derandomize=True, max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def rigidity_rank(xy: np.ndarray, edges: np.ndarray) -> int:
    """Rank of the planar rigidity matrix (rows = edges) at coordinates xy."""
    n = xy.shape[0]
    R = np.zeros((len(edges), 2 * n))
    for row, (u, v) in enumerate(edges):
        d = xy[u] - xy[v]
        R[row, 2 * u : 2 * u + 2] = d
        R[row, 2 * v : 2 * v + 2] = -d
    return int(np.linalg.matrix_rank(R)) if len(edges) else 0


def pratt_graph(n: int, *, drop: int | None = None, extra: int | None = None) -> tuple[int, np.ndarray]:
    """docs/methods.md, check case C1 Pratt layout as a graph: L_i = 2i, U_i = 2i + 1.

    U0--U1--U2--U3--U4--U5--U6
    | \\ |  \\ | \\ | /  | /  | / |
    L0--L1--L2--L3--L4--L5--L6
    """
    e = []
    for i in range(n):
        e += [(2 * i, 2 * i + 2), (2 * i + 1, 2 * i + 3)]
        diag = (2 * i + 1, 2 * i + 2) if i < n // 2 else (2 * i, 2 * i + 3)
        if i != drop:
            e.append(diag)
        if i == extra:
            e.append((2 * i, 2 * i + 3) if i < n // 2 else (2 * i + 1, 2 * i + 2))
    e += [(2 * i, 2 * i + 1) for i in range(n + 1)]
    return 2 * (n + 1), np.sort(np.array(e), axis=1)


# ---------------------------------------------------------------------------------------
# small graphs with known answers
# ---------------------------------------------------------------------------------------


def test_triangle_is_minimally_rigid():
    # Laman: 3 = 2*3 - 3 edges, all independent; 3 free pebbles = rigid-body motions.
    g = pebble_game(3, np.array([[0, 1], [1, 2], [0, 2]]))
    assert g.independent.all()
    assert g.free_pebbles == 3 and g.dof == 0


def test_k4_has_one_redundant_edge():
    # Laman: K4 has 6 edges, 2*4 - 3 = 5 independent, 1 redundant (closed-form).
    edges = np.array([[0, 1], [0, 2], [0, 3], [1, 2], [1, 3], [2, 3]])
    g = pebble_game(4, edges)
    assert g.n_independent == 5 and g.n_redundant == 1
    assert not g.independent[-1]  # the greedy basis keeps the first five
    assert g.dof == 0


def test_square_has_one_internal_dof_and_duplicates_are_redundant():
    # An open square (docs/methods.md, check case C7a without supports): 4 edges, 2*4 - 3 - 4 = 1 internal dof.
    edges = np.array([[0, 1], [1, 3], [2, 3], [0, 2], [0, 1]])
    g = pebble_game(4, edges)
    assert g.n_independent == 4 and g.dof == 1
    assert g.independent.tolist() == [True, True, True, True, False]  # a member drawn twice


def test_loop_is_never_independent():
    g = pebble_game(2, np.array([[1, 1], [0, 1]]))
    assert g.independent.tolist() == [False, True]


def test_edge_out_of_range_is_rejected():
    with pytest.raises(ValueError):
        pebble_game(2, np.array([[0, 2]]))


# ---------------------------------------------------------------------------------------
# docs/methods.md, Check cases pebble counts
# ---------------------------------------------------------------------------------------


def test_c1_pratt_pebble_counts():
    # docs/methods.md, check case C1 (Pratt n = 6, pin at L0, vertical roller at L6): "Pebble game: 33
    # independent, 0 redundant, internal dof 0" - 25 members + 3 restraints + 5 ground
    # edges (ground body of r + 1 = 4 vertices, 2*4 - 3 edges).
    j, ends = pratt_graph(6)
    res = supported_pebble_game(j, ends, np.array([0, 0, 12]))
    assert res.game.n_independent == 33
    assert res.game.n_redundant == 0
    assert res.game.dof == 0
    assert (res.rank, res.mechanisms, res.self_stress) == (28, 0, 0)  # docs/methods.md, Check cases (counts)
    assert res.n_ground_edges == 5


def test_c6_braced_square_pebble_counts():
    # docs/methods.md, check case C6: square A(0) B(2) C(3) D(1) numbered by position, four sides, both
    # diagonals, pin at A, vertical roller at B: "1 redundant, internal dof 0".
    ends = np.array([[0, 2], [2, 3], [1, 3], [0, 1], [0, 3], [1, 2]])
    res = supported_pebble_game(4, ends, np.array([0, 0, 2]))
    assert res.game.n_redundant == 1
    assert res.game.dof == 0
    assert (res.rank, res.mechanisms, res.self_stress) == (8, 0, 1)  # docs/methods.md, Check cases (counts)


def test_c7a_open_square_generic_mechanism():
    # docs/methods.md, check case C7a: "Pebble game: internal dof 1".
    ends = np.array([[0, 2], [2, 3], [1, 3], [0, 1]])
    res = supported_pebble_game(4, ends, np.array([0, 0, 2]))
    assert res.game.dof == 1
    assert (res.mechanisms, res.self_stress) == (1, 0)
    # the top joints C (3) and D (1) sway; A and B are held (docs/methods.md, check case C7a mode)
    assert res.rigid_with_ground().tolist() == [True, False, True, False]


def test_c7b_straight_joint_is_generically_rigid():
    # docs/methods.md, check case C7b: "Pebble game: internal dof 0, redundant 0" (the s = k = 1 is special geometry).
    res = supported_pebble_game(3, np.array([[0, 1], [1, 2]]), np.array([0, 0, 2, 2]))
    assert res.game.dof == 0 and res.game.n_redundant == 0
    assert (res.mechanisms, res.self_stress) == (0, 0)
    assert res.rigid_with_ground().all()


def test_planted_defect_long_pratt():
    # docs/methods.md, scale check: one diagonal removed, one crossing diagonal added elsewhere:
    # "1 redundant, 1 dof" although m + r = 2j.
    j, ends = pratt_graph(2000, drop=300, extra=1500)
    res = supported_pebble_game(j, ends, np.array([0, 0, j - 2]))
    assert len(ends) + 3 == 2 * j
    assert (res.mechanisms, res.self_stress) == (1, 1)
    assert res.game.n_redundant == 1 and res.game.dof == 1


def test_unsupported_part_counts_rigid_motions():
    # A free triangle: k = 2j - rank = 6 - 3 = 3 rigid-body motions, no ground body.
    res = supported_pebble_game(3, np.array([[0, 1], [1, 2], [0, 2]]), np.zeros(0, dtype=np.int64))
    assert (res.rank, res.mechanisms, res.self_stress, res.n_ground_edges) == (3, 3, 0, 0)
    assert not res.rigid_with_ground().any()


# ---------------------------------------------------------------------------------------
# properties
# ---------------------------------------------------------------------------------------


@st.composite
def graphs(draw, max_n: int = 9):
    n = draw(st.integers(2, max_n))
    pairs = [(u, v) for u in range(n) for v in range(u + 1, n)]
    chosen = draw(st.lists(st.sampled_from(pairs), min_size=1, max_size=min(len(pairs) + 3, 24)))
    return n, np.array(chosen, dtype=np.int64)


@PROPERTY
@given(graphs(), st.integers(0, 2**31 - 1))
def test_independent_count_is_generic_rank(graph, seed):
    # Laman / Asimow-Roth: the number of independent edges equals the rank of the
    # rigidity matrix at random coordinates; the kept edges alone have that rank too.
    n, edges = graph
    xy = np.random.default_rng(seed).standard_normal((n, 2))
    g = pebble_game(n, edges)
    assert g.n_independent == rigidity_rank(xy, edges)
    assert rigidity_rank(xy, edges[g.independent]) == g.n_independent
    assert g.free_pebbles == 2 * n - g.n_independent


@PROPERTY
@given(graphs(), st.randoms(use_true_random=False))
def test_shortcuts_do_not_change_the_result(graph, rnd):
    # The rigid-set and Henneberg shortcuts only skip work: the greedy basis (which
    # edges are kept, in insertion order) is that of the plain game.
    n, edges = graph
    order = list(range(len(edges)))
    rnd.shuffle(order)
    fast = pebble_game(n, edges, order=np.array(order))
    plain = pebble_game(n, edges, order=np.array(order), track_rigid_sets=False)
    assert fast.independent.tolist() == plain.independent.tolist()


@PROPERTY
@given(graphs(max_n=7), st.integers(0, 2**31 - 1))
def test_rigid_with_matches_the_motions(graph, seed):
    # Vertex w is rigid with edge (a, b) iff every infinitesimal motion that fixes a and b
    # fixes w, at random coordinates (null space of the rigidity matrix, numpy).
    n, edges = graph
    g = pebble_game(n, edges)
    a, b = (int(x) for x in edges[np.flatnonzero(g.independent)[0]])
    xy = np.random.default_rng(seed).standard_normal((n, 2))
    R = np.zeros((len(edges) + 4, 2 * n))
    for row, (u, v) in enumerate(edges):
        d = xy[u] - xy[v]
        R[row, 2 * u : 2 * u + 2] = d
        R[row, 2 * v : 2 * v + 2] = -d
    for i, dof in enumerate((2 * a, 2 * a + 1, 2 * b, 2 * b + 1)):  # pin a and b
        R[len(edges) + i, dof] = 1.0
    _, s, vt = np.linalg.svd(R)
    rank = int(np.sum(s > 1e-9 * s[0]))
    motions = vt[rank:].T.reshape(n, 2, -1)
    expected = np.abs(motions).max(axis=(1, 2)) < 1e-8 if motions.shape[2] else np.ones(n, bool)
    assert g.rigid_with(a, b).tolist() == expected.tolist()


@PROPERTY
@given(graphs(max_n=8), st.data())
def test_supported_counts_match_rank_with_pins(graph, data):
    # docs/methods.md, pebble game: ground body + one bar per restraint. With pins only (each fixes a joint
    # whatever the directions) the counts equal the rank of A at random coordinates.
    n, edges = graph
    pins = data.draw(st.lists(st.integers(0, n - 1), unique=True, max_size=3))
    xy = np.random.default_rng(data.draw(st.integers(0, 2**31 - 1))).standard_normal((n, 2))
    restraint_joints = np.repeat(np.array(pins, dtype=np.int64), 2)
    res = supported_pebble_game(n, edges, restraint_joints)
    A = np.zeros((2 * n, len(edges) + len(restraint_joints)))
    for col, (u, v) in enumerate(edges):
        d = (xy[v] - xy[u]) / np.linalg.norm(xy[v] - xy[u])
        A[2 * u : 2 * u + 2, col] = -d
        A[2 * v : 2 * v + 2, col] = d
    for q, jt in enumerate(restraint_joints):
        A[2 * jt + q % 2, len(edges) + q] = -1.0
    rank = int(np.linalg.matrix_rank(A))
    assert res.rank == rank
    assert res.mechanisms == 2 * n - rank
    assert res.self_stress == A.shape[1] - rank
    assert np.linalg.matrix_rank(A[:, res.independent]) == rank
