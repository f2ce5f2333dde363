"""Tests of the demo drawings written by samples/make_samples.py.

Glossary:
    joint     an end point of a member after snapping (here: coordinates rounded).
    member    one straight segment of a LINE or polyline on a member layer, split at
              joints lying on it.
    r         the number of restrained directions (reaction components).
    Maxwell   the count m + r - 2j, which equals s - k (self-stress states minus
              mechanisms; docs/methods.md, Maxwell's rule, closed-form identity).

These tests use only ezdxf, tomllib and numpy: they do not depend on the rest of
dxftruss, so they check the sample files themselves (intended layers, entity counts,
loads-file keys, and the statics counts the drawings were designed to have).
"""

from __future__ import annotations

import itertools
import math
import os
import subprocess
import sys
import tomllib
from collections import Counter
from pathlib import Path

import ezdxf
import numpy as np
import pytest

ROOT = Path(__file__).resolve().parents[1]
SCRIPT = ROOT / "samples" / "make_samples.py"
NAMES = ("farm_shed_truss", "footbridge_truss", "drafting_slips", "hoist_bracket")
WITH_LOADS = ("farm_shed_truss", "footbridge_truss", "hoist_bracket")
#: revised drawings for the revision compare, each with its loads file (tests/test_compare.py)
REVISIONS = ("farm_shed_truss_rev_b",)

#: rounding used to snap end points (decimals of the drawing unit); the samples are drawn
#: exactly, so any value between the drawing's float noise and its smallest gap works
SNAP_DECIMALS = 6
#: a joint closer than this to a member's interior splits it (drawing units)
ON_MEMBER_TOL = 1e-6


def run_generator(outdir: Path, hash_seed: str) -> None:
    env = dict(os.environ, PYTHONHASHSEED=hash_seed)
    subprocess.run([sys.executable, str(SCRIPT), str(outdir)], check=True, capture_output=True, env=env)


@pytest.fixture(scope="module")
def generated(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The samples generated twice, under different string hash seeds; returns the first folder."""
    first = tmp_path_factory.mktemp("samples_a")
    second = tmp_path_factory.mktemp("samples_b")
    run_generator(first, "1")
    run_generator(second, "2")
    return first


# --------------------------------------------------------------------------- geometry helpers


def member_segments(doc: ezdxf.document.Drawing) -> list[tuple[str, tuple[float, float], tuple[float, float]]]:
    """(layer, start, end) of every straight segment on a member layer, blocks expanded.

    Block content on layer 0 takes the layer of its INSERT (the layer-0 rule).
    """
    out: list[tuple[str, tuple[float, float], tuple[float, float]]] = []

    def visit(entities, inherited: str | None) -> None:
        for e in entities:
            layer = e.dxf.layer
            if inherited is not None and layer == "0":
                layer = inherited
            kind = e.dxftype()
            if kind == "INSERT":
                visit(e.virtual_entities(), layer)
                continue
            if layer.upper().startswith(("SUPPORT", "LOAD")):
                continue
            if kind == "LINE":
                pts = [e.dxf.start, e.dxf.end]
            elif kind == "LWPOLYLINE":
                pts = list(e.vertices_in_wcs())
            elif kind == "POLYLINE":
                pts = list(e.points_in_wcs())
            else:
                continue
            out.extend((layer, (a.x, a.y), (b.x, b.y)) for a, b in itertools.pairwise(pts))

    visit(doc.modelspace(), None)
    return out


def snap_and_split(
    segments: list[tuple[str, tuple[float, float], tuple[float, float]]],
) -> tuple[np.ndarray, list[tuple[int, int]]]:
    """Joints (rounded end points) and members (joint index pairs) after splitting
    every segment at the joints lying on its interior."""
    key = {}
    for _, a, b in segments:
        for p in (a, b):
            key.setdefault((round(p[0], SNAP_DECIMALS), round(p[1], SNAP_DECIMALS)), len(key))
    xy = np.array(list(key), dtype=float)
    members: list[tuple[int, int]] = []
    for _, a, b in segments:
        i = key[(round(a[0], SNAP_DECIMALS), round(a[1], SNAP_DECIMALS))]
        k = key[(round(b[0], SNAP_DECIMALS), round(b[1], SNAP_DECIMALS))]
        d = xy[k] - xy[i]
        t = (xy - xy[i]) @ d / (d @ d)
        off = np.abs((xy[:, 0] - xy[i, 0]) * d[1] - (xy[:, 1] - xy[i, 1]) * d[0]) / math.hypot(*d)
        inside = np.flatnonzero((off < ON_MEMBER_TOL) & (t > 1e-9) & (t < 1 - 1e-9))
        chain = [i, *inside[np.argsort(t[inside])].tolist(), k]
        members += list(itertools.pairwise(chain))
    return xy, members


def equilibrium_matrix(
    xy: np.ndarray, members: list[tuple[int, int]], restraints: list[tuple[int, tuple[float, float]]]
) -> np.ndarray:
    """A = [B, -R] of docs/methods.md, Notation (2j x (m + r)), dense."""
    j = len(xy)
    a = np.zeros((2 * j, len(members) + len(restraints)))
    for e, (i, k) in enumerate(members):
        u = (xy[k] - xy[i]) / np.linalg.norm(xy[k] - xy[i])
        a[2 * i : 2 * i + 2, e] = -u
        a[2 * k : 2 * k + 2, e] = u
    for q, (i, n) in enumerate(restraints):
        a[2 * i : 2 * i + 2, len(members) + q] = -np.asarray(n)
    return a


def joint_at(xy: np.ndarray, p) -> int:
    d = np.hypot(xy[:, 0] - p[0], xy[:, 1] - p[1])
    i = int(np.argmin(d))
    assert d[i] < ON_MEMBER_TOL, f"no joint at {p}"
    return i


def restraints_for(
    xy: np.ndarray, supports: list[tuple[tuple[float, float], str]]
) -> list[tuple[int, tuple[float, float]]]:
    out = []
    for p, fix in supports:
        i = joint_at(xy, p)
        if "x" in fix:
            out.append((i, (1.0, 0.0)))
        if "y" in fix:
            out.append((i, (0.0, 1.0)))
    return out


def drawn_supports(doc: ezdxf.document.Drawing) -> list[tuple[tuple[float, float], str]]:
    out = []
    for e in doc.modelspace():
        layer = e.dxf.layer.upper()
        if not layer.startswith("SUPPORT-"):
            continue
        p = e.dxf.center if e.dxftype() == "CIRCLE" else e.dxf.location
        out.append(((p.x, p.y), layer.removeprefix("SUPPORT-").lower()))
    return out


def proper_crossings(xy: np.ndarray, members: list[tuple[int, int]]) -> list[tuple[float, float]]:
    """Points where two members without a common joint cross at interior points."""
    found = []
    for e, (a, b) in enumerate(members):
        for c, d in members[e + 1 :]:
            if {a, b} & {c, d}:
                continue
            p, r, q, s = xy[a], xy[b] - xy[a], xy[c], xy[d] - xy[c]
            den = r[0] * s[1] - r[1] * s[0]
            if abs(den) < 1e-12:
                continue
            t = ((q - p)[0] * s[1] - (q - p)[1] * s[0]) / den
            u = ((q - p)[0] * r[1] - (q - p)[1] * r[0]) / den
            if 1e-9 < t < 1 - 1e-9 and 1e-9 < u < 1 - 1e-9:
                found.append(tuple(np.round(p + t * r, 9)))
    return found


def read(folder: Path, name: str) -> ezdxf.document.Drawing:
    return ezdxf.readfile(folder / f"{name}.dxf")


def load_toml(folder: Path, name: str) -> dict:
    with open(folder / f"{name}.toml", "rb") as f:
        return tomllib.load(f)


# --------------------------------------------------------------------------- files


def test_reruns_are_byte_identical(generated: Path) -> None:
    second = generated.parent / generated.name.replace("samples_a", "samples_b")
    files = sorted(p.name for p in generated.iterdir())
    assert files == sorted(p.name for p in second.iterdir())
    assert files == sorted([f"{n}.dxf" for n in NAMES + REVISIONS] + [f"{n}.toml" for n in WITH_LOADS + REVISIONS])
    for name in files:
        assert (generated / name).read_bytes() == (second / name).read_bytes(), name


def test_checked_in_samples_are_current(generated: Path) -> None:
    for p in sorted(generated.iterdir()):
        kept = ROOT / "samples" / p.name
        assert kept.exists(), f"run: python samples/make_samples.py (missing {kept.name})"
        assert kept.read_bytes() == p.read_bytes(), f"run: python samples/make_samples.py ({kept.name} is stale)"


# --------------------------------------------------------------------------- entity counts per layer

#: entities per (layer, type) in each sample's model space: "sample: LAYER TYPE count, ...",
#: an indented row goes on with the sample above
COUNT_TABLE = """
farm_shed_truss: RAFTER LWPOLYLINE 2, CEILING-TIE LWPOLYLINE 1, WEB LINE 4,
    SUPPORT-XY CIRCLE 1, SUPPORT-Y CIRCLE 1, NOTES TEXT 4
footbridge_truss: BOTTOM-CHORD LWPOLYLINE 1, TOP-CHORD LWPOLYLINE 1, WEB LINE 10, WEB INSERT 2,
    SUPPORT-XY POINT 1, SUPPORT-Y POINT 1, LOAD-deck LINE 9, LOAD-deck TEXT 9, NOTES TEXT 4,
    TITLE INSERT 1
drafting_slips: CHORD POLYLINE 1, CHORD LINE 2, WEB LINE 15, NOTES TEXT 3, NOTES CIRCLE 1, NOTES DIMENSION 1
hoist_bracket: CHORD LINE 2, POST LINE 1, WEB LINE 4, NOTES TEXT 2
"""


def _count_table(text: str) -> dict[str, dict[tuple[str, str], int]]:
    table: dict[str, dict[tuple[str, str], int]] = {}
    name = ""
    for row in text.strip().splitlines():
        if not row[0].isspace():
            name, _, row = row.partition(":")
            table[name] = {}
        for cell in filter(str.strip, row.split(",")):
            layer, kind, count = cell.split()
            table[name][(layer, kind)] = int(count)
    return table


EXPECTED_COUNTS = _count_table(COUNT_TABLE)

#: (DXF version, $INSUNITS as read back): 4 mm, 6 m, 1 in, 0 none (R12 stores no units)
EXPECTED_HEADER = {
    "farm_shed_truss": ("AC1032", 4),
    "footbridge_truss": ("AC1018", 6),
    "drafting_slips": ("AC1009", 0),
    "hoist_bracket": ("AC1015", 1),
}


@pytest.mark.parametrize("name", NAMES)
def test_entity_counts_per_layer(generated: Path, name: str) -> None:
    doc = read(generated, name)
    counts = Counter((e.dxf.layer, e.dxftype()) for e in doc.modelspace())
    assert dict(counts) == EXPECTED_COUNTS[name]
    assert (doc.dxfversion, doc.units) == EXPECTED_HEADER[name]
    assert len(doc.paperspace()) == 0


def test_drafting_slips_has_no_units_header(generated: Path) -> None:
    text = (generated / "drafting_slips.dxf").read_text(encoding="cp1252")
    assert "$INSUNITS" not in text and "$MEASUREMENT" not in text


def test_footbridge_block_uses_layer_zero_and_is_mirrored_once(generated: Path) -> None:
    doc = read(generated, "footbridge_truss")
    block = doc.blocks.get("WEB-PANEL")
    assert Counter((e.dxf.layer, e.dxftype()) for e in block) == {("0", "LINE"): 2}
    scales = sorted(e.dxf.xscale for e in doc.modelspace().query("INSERT") if e.dxf.name == "WEB-PANEL")
    assert scales == [-1.0, 1.0]


# ------------------------------------------------------------- loads files (docs/user-guide.md, The loads file)

ALLOWED = {
    "units": {"force", "length"},
    "support": {"at", "fix"},
    "load": {"at", "fx", "fy", "case"},
    "combination": {"name", "factors"},
    "section": {"layer", "area", "E", "shape", "D", "t", "strength", "density", "name"},
    "checks": {"ratio", "slenderness"},
    "moving_load": {"name", "from", "to", "loads", "spacing"},
    "report": {"project", "drawing_no", "revision", "checked_by", "date"},
}
AREA_UNITS = ("mm2", "cm2", "m2", "in2")
MODULUS_UNITS = ("MPa", "GPa", "N/mm2", "ksi")


@pytest.mark.parametrize("name", WITH_LOADS)
def test_loads_file_follows_spec(generated: Path, name: str) -> None:
    data = load_toml(generated, name)
    assert set(data) <= set(ALLOWED)
    assert data["units"]["force"] in ("kN", "N", "kip", "lbf")
    assert set(data["units"]) <= ALLOWED["units"]
    assert set(data.get("report", {})) <= ALLOWED["report"]
    assert all(isinstance(v, str) for v in data.get("report", {}).values())
    for table in ("support", "load", "combination", "section", "moving_load"):
        entries = data.get(table, [])
        assert isinstance(entries, list)  # arrays of tables: [[load]], not [load]
        for entry in entries:
            assert set(entry) <= ALLOWED[table], (table, entry)
    for entry in data.get("support", []) + data.get("load", []):
        x, y = entry["at"]
        assert all(isinstance(v, float) and math.isfinite(v) for v in (x, y))
    for entry in data.get("support", []):
        assert entry["fix"] in ("xy", "x", "y")
    cases = {entry.get("case", "main") for entry in data["load"]}
    msp = read(generated, name).modelspace()
    drawn_cases = {e.dxf.layer.split("-", 1)[1] for e in msp if e.dxf.layer.startswith("LOAD-")}
    if any("density" in entry for entry in data.get("section", [])):
        cases.add("self-weight")  # the self-weight case the densities make
    for combo in data.get("combination", []):
        assert set(combo["factors"]) <= cases | drawn_cases
        assert combo["name"] not in cases | drawn_cases
    for entry in data.get("section", []):
        if "shape" in entry:  # the area is computed from the shape's dimensions
            assert entry["shape"] in ("rectangle", "round-hollow", "square-hollow")
            continue
        value, unit = entry["area"].split()
        assert float(value) > 0 and unit in AREA_UNITS
        value, unit = entry["E"].split()
        assert float(value) > 0 and unit in MODULUS_UNITS


@pytest.mark.parametrize("name", WITH_LOADS)
def test_every_file_point_is_a_joint(generated: Path, name: str) -> None:
    xy, _ = snap_and_split(member_segments(read(generated, name)))
    data = load_toml(generated, name)
    for entry in data.get("support", []) + data["load"]:
        joint_at(xy, entry["at"])


def test_farm_shed_load_totals() -> None:
    """Totals of the purlin loads against the pressures stated in the file header.

    Closed-form derivation: dead 0.25 kN/m2 x 1.8 m x 2 x 5.3666 m rafter = 4.83 kN;
    snow 0.60 kN/m2 x 1.8 m x 9.6 m plan = 10.368 kN (each joint rounded to 0.01 kN).
    """
    data = load_toml(ROOT / "samples", "farm_shed_truss")
    total = Counter()
    for entry in data["load"]:
        total[entry["case"]] += entry["fy"]
    assert total["dead"] == pytest.approx(-0.25 * 1.8 * 2 * math.hypot(4.8, 2.4), abs=0.03)
    assert total["snow"] == pytest.approx(-0.60 * 1.8 * 9.6, abs=0.03)
    assert data["combination"] == [{"name": "dead+snow", "factors": {"dead": 1.35, "snow": 1.5}}]
    assert [s["layer"] for s in data["section"]] == ["RAFTER", "CEILING-TIE", "WEB"]


# --------------------------------------------------------------------------- statics counts


def test_farm_shed_maxwell_count_is_zero_and_rigid(generated: Path) -> None:
    """docs/methods.md, Maxwell's rule (Maxwell, closed form): m + r - 2j = 0 for the Fink truss
    (j = 7, m = 11, r = 3), and rank(A) = 2j, so s = k = 0: determinate and rigid."""
    doc = read(generated, "farm_shed_truss")
    segments = member_segments(doc)
    xy, members = snap_and_split(segments)
    assert len(members) == len(segments)  # every polyline vertex is a panel point: nothing to split
    restraints = restraints_for(xy, drawn_supports(doc))
    j, m, r = len(xy), len(members), len(restraints)
    assert (j, m, r) == (7, 11, 3)
    assert m + r - 2 * j == 0
    rank = np.linalg.matrix_rank(equilibrium_matrix(xy, members, restraints))
    assert rank == 2 * j == m + r
    assert proper_crossings(xy, members) == []
    # no joint with exactly two collinear members (a straight two-bar joint is a mechanism)
    supported = {i for i, _ in restraints}
    for i in range(j):
        ends = [k if a == i else a for a, k in members if i in (a, k)]
        assert len(ends) >= 2
        if len(ends) == 2 and i not in supported:
            u, v = (xy[e] - xy[i] for e in ends)
            assert abs(u[0] * v[1] - u[1] * v[0]) > 1e-6 * np.linalg.norm(u) * np.linalg.norm(v)


def test_footbridge_counts_after_blocks_and_splits(generated: Path) -> None:
    """Blocks expanded and the top chord split at T2..T6: j = 16, m = 30, r = 3, so
    m + r - 2j = 1; rank(A) = 2j gives k = 0, s = 1 (the X-braced panel;
    docs/methods.md, Maxwell's rule, closed form)."""
    doc = read(generated, "footbridge_truss")
    segments = member_segments(doc)
    xy, members = snap_and_split(segments)
    assert len(segments) == 25 and len(members) == 30  # the top chord's long segment splits into 6
    restraints = restraints_for(xy, drawn_supports(doc))
    j, m, r = len(xy), len(members), len(restraints)
    assert (j, m, r) == (16, 30, 3)
    rank = np.linalg.matrix_rank(equilibrium_matrix(xy, members, restraints))
    assert 2 * j - rank == 0  # no mechanism
    assert m + r - rank == 1  # one state of self-stress
    assert proper_crossings(xy, members) == [(10.5, 1.2)]
    # the mirrored block puts its diagonal T6-B5 where a Pratt diagonal belongs
    assert tuple(sorted((joint_at(xy, (18.0, 2.4)), joint_at(xy, (15.0, 0.0))))) in {tuple(sorted(e)) for e in members}


def test_footbridge_drawn_loads(generated: Path) -> None:
    """Each LOAD-deck line ends on a bottom-chord joint and points down at it; the
    nearest text gives its value. Total = 5 kN/m2 x 24 m x 1.2 m = 144 kN (closed form)."""
    doc = read(generated, "footbridge_truss")
    xy, _ = snap_and_split(member_segments(doc))
    lines = doc.modelspace().query('LINE[layer=="LOAD-deck"]')
    texts = doc.modelspace().query('TEXT[layer=="LOAD-deck"]')
    total = 0.0
    for ln in lines:
        head, tail = ln.dxf.end, ln.dxf.start
        i = joint_at(xy, (head.x, head.y))
        assert xy[i, 1] == 0.0 and tail.y > head.y and tail.x == head.x
        mid = (head + tail) / 2
        nearest = min(texts, key=lambda t: (t.dxf.insert - mid).magnitude)
        value, unit = nearest.dxf.text.split()
        assert unit == "kN"
        total += float(value)
    assert total == pytest.approx(144.0)


def test_hoist_bracket_counts_with_file_supports(generated: Path) -> None:
    """Chords split at the panel points: j = 7, m = 11, r = 3 from the loads file;
    Maxwell count 0 and rank(A) = 2j (closed form, docs/methods.md, Maxwell's rule)."""
    doc = read(generated, "hoist_bracket")
    xy, members = snap_and_split(member_segments(doc))
    data = load_toml(generated, "hoist_bracket")
    restraints = restraints_for(xy, [(tuple(s["at"]), s["fix"]) for s in data["support"]])
    j, m, r = len(xy), len(members), len(restraints)
    assert (j, m, r) == (7, 11, 3)
    assert np.linalg.matrix_rank(equilibrium_matrix(xy, members, restraints)) == 2 * j == m + r


# --------------------------------------------------------------------------- drafting slips


def test_drafting_slips_are_the_intended_ones(generated: Path) -> None:
    doc = read(generated, "drafting_slips")
    xy, members = snap_and_split(member_segments(doc))
    name = {}
    for i in range(7):
        name[joint_at(xy, (1000.0 * i, 0.0))] = f"B{i}"
        name[joint_at(xy, (1000.0 * i, 800.0))] = f"T{i}"
    pairs = Counter(tuple(sorted((name.get(a, a), name.get(b, b)), key=str)) for a, b in members)
    # duplicates: the diagonal drawn twice and the two bottom-chord members under the overlap
    assert sorted(p for p, n in pairs.items() if n > 1) == [("B1", "T0"), ("B2", "B3"), ("B3", "B4")]
    assert all(n == 2 for n in pairs.values() if n > 1)
    # one crossing without a joint, in panel 1
    assert proper_crossings(xy, members) == [(1500.0, 400.0)]
    # the missing diagonal: panel 2 (B2, B3, T2, T3) has no member across it
    assert not {("B2", "T3"), ("B3", "T2")} & set(pairs)
    # two free ends: the near miss (short of T4) and the stub
    degree = Counter(i for e in members for i in e)
    free = sorted(tuple(xy[i]) for i, n in degree.items() if n == 1)
    assert free == [(3995.0, 796.0), (4750.0, 200.0)]


def test_drafting_slips_gap_sits_between_the_default_tolerances(generated: Path) -> None:
    """docs/user-guide.md, Tolerances defaults: snap = 1e-6 x extent diagonal, near-miss radius = 2 % of
    the median member length. The gap must be a near miss: above the first, below the
    second; the stub's free end must be farther than the radius from everything."""
    doc = read(generated, "drafting_slips")
    xy, members = snap_and_split(member_segments(doc))
    extent = np.hypot(*(xy.max(axis=0) - xy.min(axis=0)))
    lengths = np.array([np.linalg.norm(xy[a] - xy[b]) for a, b in members])
    snap, radius = 1e-6 * extent, 0.02 * float(np.median(lengths))
    gap_end, stub_end = np.array([3995.0, 796.0]), np.array([4750.0, 200.0])
    others = np.array([p for p in xy if not (np.allclose(p, gap_end) or np.allclose(p, stub_end))])
    gap = np.min(np.hypot(*(others - gap_end).T))
    assert gap == pytest.approx(0.005 * math.hypot(1000.0, 800.0))  # 0.5 % of the diagonal
    assert snap < gap < radius

    def distance_to_segment(p: np.ndarray, a: np.ndarray, b: np.ndarray) -> float:
        t = np.clip((p - a) @ (b - a) / ((b - a) @ (b - a)), 0.0, 1.0)
        return float(np.linalg.norm(p - (a + t * (b - a))))

    stub_index = joint_at(xy, stub_end)
    clearance = min(distance_to_segment(stub_end, xy[a], xy[b]) for a, b in members if stub_index not in (a, b))
    assert clearance > radius


def test_drafting_slips_mechanisms_with_default_supports(generated: Path) -> None:
    """With the assumed pin (lowest, then leftmost joint: B0) and roller (lowest, then
    rightmost: B6), Maxwell's count is 0 yet s = k = 4 (docs/methods.md, Maxwell's rule: the count
    alone cannot tell). Closed-form counts:

    k = 4: panels 2 and 3 have no working diagonal. Block B0..T2 turning about the pin
    (1 freedom), block B4..T6 on its roller (2) and joints T3, B3 (4) make 7 freedoms
    against 5 distinct bars (T2-T3, T3-T4, B2-B3, B3-B4, T3-B3): 2 modes. Each free end
    (the gap short of T4, the stub) swings about its joint: 2 more.
    s = 4: each of the 3 duplicated members, and the X-braced panel 1.
    """
    doc = read(generated, "drafting_slips")
    xy, members = snap_and_split(member_segments(doc))
    low = np.flatnonzero(xy[:, 1] == xy[:, 1].min())
    pin, roller = low[np.argmin(xy[low, 0])], low[np.argmax(xy[low, 0])]
    assert tuple(xy[pin]) == (0.0, 0.0) and tuple(xy[roller]) == (6000.0, 0.0)
    restraints = [(int(pin), (1.0, 0.0)), (int(pin), (0.0, 1.0)), (int(roller), (0.0, 1.0))]
    rank = np.linalg.matrix_rank(equilibrium_matrix(xy, members, restraints))
    j, m, r = len(xy), len(members), len(restraints)
    assert (j, m, r) == (16, 29, 3)
    assert m + r - 2 * j == 0
    assert (2 * j - rank, m + r - rank) == (4, 4)
