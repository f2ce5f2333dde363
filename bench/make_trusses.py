r"""Write the synthetic benchmark drawings: rows of long-span Pratt trusses, 1k to 100k members.

Usage::

    python bench/make_trusses.py [--sizes 1k,10k,50k,100k] [--variants poly,lines] [--long] [--job]
                                 [--panels 50] [--outdir bench/generated] [--force]

Glossary:
    part          one truss of the drawing; parts share no joint, so each is analysed alone.
    panel         the bay between two neighbouring verticals of a part.
    panel point   a joint of a chord where a vertical (and perhaps a diagonal) meets it.
    variant       how the same line work is drawn:
                  ``poly``  each chord of a part is ONE LWPOLYLINE through all its panel
                            points (the reader must split it into members); verticals
                            and diagonals are LINEs, written part by part;
                  ``lines`` every member is its own LINE, the entity order shuffled and
                            each line's direction flipped at random (fixed seed);
                  ``split`` (not in the default run) each chord is ONE two-point LINE
                            from end to end, so the snap stage must split it at every
                            panel point (T-junctions); webs are LINEs.

The truss (the same in every part)::

    T0----T1----T2----T3--- ... ---T47---T48---T49---T50
    |  \   |  \   |  \  |            |  /   |  /   |  /  |
    |    \ |    \ |    \|            |/     |/     |/    |
    B0----B1----B2----B3--- ... ---B47---B48---B49---B50
   pin                                                 roller

A Pratt truss with verticals: ``P`` panels (default 50) of 3.0 m, depth 5.0 m, so span
150 m and span/depth 30 (a long-span roof or bridge girder, slender but not absurd;
diagonals at 59 degrees). Diagonals run from the top chord down towards mid-span (tension
under gravity). Joints j = 2 (P + 1), members m = 4 P + 1, reactions r = 3 (pin + roller):
m + r = 2 j, and the truss is a simple truss (built by adding one joint on two bars at a
time), so every part is statically determinate and stable. ``verify_part`` checks this
with the rank of the equilibrium matrix each time the drawings are written.

To reach 100k members without a 10 km span, the drawing holds many such parts side by
side, laid out on a near-square grid with a 10 m gap between them; the member count of a
size is rounded to a whole number of parts (1k -> 5 parts, 1005 members; 100k -> 498
parts, 100098 members with the default 50 panels).

Loads file (docs/user-guide.md, The loads file, units m and kN), per part: a pin (``xy``) at B0, a roller
(``y``) at B_P, and a 12 kN downward load at every interior bottom panel point
(case ``deck``). Output is deterministic: ezdxf's fixed meta data, a fixed random seed,
coordinates computed from integers; a ``.meta.json`` beside each drawing records the
parameters so the benchmark can tell a stale drawing from a current one.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import math
import random
import sys
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

Point = tuple[float, float]

HERE = Path(__file__).resolve().parent
DEFAULT_OUTDIR = HERE / "generated"
SIZES: dict[str, int] = {"1k": 1_000, "10k": 10_000, "50k": 50_000, "100k": 100_000}
VARIANTS = ("poly", "lines", "split")
DEFAULT_VARIANTS = ("poly", "lines")

PANEL = 3.0  # panel width, m
DEPTH = 5.0  # truss depth (chord centre lines), m
GAP = 10.0  # clear gap between neighbouring parts, m
PANELS = 50  # panels per part
LOAD_KN = 12.0  # downward load at each interior bottom panel point, kN
SEED = 20240611  # fixed seed of the ``lines`` variant's shuffle and flips

LAYERS = {"CHORD-TOP": 1, "CHORD-BOTTOM": 5, "WEB": 3}


@dataclass(frozen=True)
class PartGeometry:
    """One part in its own coordinates: joints (n, 2) in m and members as joint pairs.

    ``top[i]`` / ``bottom[i]`` are the joint indices of panel points T_i / B_i.
    ``layer[k]`` is the layer of member ``k``.
    """

    xy: np.ndarray
    members: tuple[tuple[int, int], ...]
    layer: tuple[str, ...]
    top: tuple[int, ...]
    bottom: tuple[int, ...]


def pratt_part(panels: int, *, panel: float = PANEL, depth: float = DEPTH) -> PartGeometry:
    """A Pratt truss with verticals, ``panels`` panels, origin at B0 (see module sketch)."""
    if panels < 2 or panels % 2:
        raise ValueError("panels must be an even number >= 2")
    bottom = tuple(range(panels + 1))
    top = tuple(range(panels + 1, 2 * panels + 2))
    xy = np.zeros((2 * panels + 2, 2))
    xy[list(bottom), 0] = np.arange(panels + 1) * panel
    xy[list(top), 0] = np.arange(panels + 1) * panel
    xy[list(top), 1] = depth
    members: list[tuple[int, int]] = []
    layer: list[str] = []
    for i in range(panels):
        members += [(bottom[i], bottom[i + 1]), (top[i], top[i + 1])]
        layer += ["CHORD-BOTTOM", "CHORD-TOP"]
    for i in range(panels + 1):
        members.append((bottom[i], top[i]))
        layer.append("WEB")
    half = panels // 2
    for i in range(panels):  # diagonals fall from the top chord towards mid-span
        members.append((top[i], bottom[i + 1]) if i < half else (top[i + 1], bottom[i]))
        layer.append("WEB")
    return PartGeometry(xy, tuple(members), tuple(layer), top, bottom)


def verify_part(part: PartGeometry, *, dense_joints: int = 1500, sigma_ratio: float = 1e-9) -> None:
    """Raise AssertionError unless the part with a pin at B0 and a roller at B_P is
    statically determinate and stable: A = [B, -R] square and of full rank.

    Up to ``dense_joints`` joints the singular values are computed (sigma_min / sigma_max
    must exceed ``sigma_ratio``); larger parts (only with ``--panels``) are checked with a
    sparse LU factorisation, which fails on a singular matrix.
    """
    import scipy.sparse as sp
    import scipy.sparse.linalg as spla

    n = len(part.xy)
    m = len(part.members)
    ij = np.asarray(part.members)
    d = part.xy[ij[:, 1]] - part.xy[ij[:, 0]]
    u = d / np.hypot(d[:, 0], d[:, 1])[:, None]
    # joint equilibrium: a bar in tension pulls joint i towards j and j towards i
    cols = np.arange(m)
    rows = np.concatenate([2 * ij[:, 0], 2 * ij[:, 0] + 1, 2 * ij[:, 1], 2 * ij[:, 1] + 1])
    vals = np.concatenate([u[:, 0], u[:, 1], -u[:, 0], -u[:, 1]])
    b0, bp = part.bottom[0], part.bottom[-1]
    rows = np.concatenate([rows, [2 * b0, 2 * b0 + 1, 2 * bp + 1]])  # pin x, y; roller y
    cols = np.concatenate([cols, cols, cols, cols, [m, m + 1, m + 2]])
    vals = np.concatenate([vals, [1.0, 1.0, 1.0]])
    a = sp.csc_matrix((vals, (rows, cols)), shape=(2 * n, m + 3))
    assert a.shape[0] == a.shape[1], f"m + r = {m + 3} but 2 j = {2 * n}"
    if n <= dense_joints:
        s = np.linalg.svd(a.toarray(), compute_uv=False)
        assert s[-1] > sigma_ratio * s[0], f"the part is (nearly) a mechanism: sigma_min/sigma_max = {s[-1] / s[0]:.3g}"
    else:
        spla.splu(a)  # RuntimeError "Factor is exactly singular" for a mechanism


def expected_extremes(
    panels: int, *, panel: float = PANEL, depth: float = DEPTH, load: float = LOAD_KN
) -> tuple[float, float, float]:
    """(largest tension, largest compression, each support reaction) of one part in kN,
    tension positive, by the method of sections (closed-form derivation).

    With loads ``load`` at B_1 .. B_(P-1), each support carries R = load (P - 1) / 2 and the
    bending moment at panel point k is M_k = R x_k - sum_(i<k) load (x_k - x_i). In the left
    half the diagonal of panel i runs T_i -> B_(i+1): moments about B_(i+1) give the top
    chord -M_(i+1)/depth, moments about T_i give the bottom chord +M_i/depth (mirrored in
    the right half). Chords carry the extremes: diagonals carry the shear/sin(angle),
    at most R/sin(59 deg) = 1.17 R, far below the chords for any span/depth above 2.
    """
    r = load * (panels - 1) / 2.0
    # sum over i = 1 .. k-1 of (x_k - x_i) = panel ((k - 1) k - (k - 1) k / 2) = panel (k - 1) k / 2
    moment = [r * k * panel - load * panel * (k - 1) * k / 2.0 if k else 0.0 for k in range(panels + 1)]
    half = panels // 2
    compression = -max(moment[i + 1] for i in range(half)) / depth
    tension = max(moment[i] for i in range(half)) / depth
    return tension, compression, r


def part_origins(n_parts: int, panels: int) -> list[Point]:
    """Lower-left corners (B0) of ``n_parts`` parts on a near-square grid, row by row."""
    cell_w, cell_h = panels * PANEL + GAP, DEPTH + GAP
    cols = max(1, round(math.sqrt(n_parts * cell_h / cell_w)))
    return [((k % cols) * cell_w, (k // cols) * cell_h) for k in range(n_parts)]


def parts_for(size: str, panels: int) -> int:
    per_part = 4 * panels + 1
    return max(1, round(SIZES[size] / per_part))


def long_panels(size: str) -> int:
    """Panels of one part reaching ``size`` members alone (even, so mid-span is a joint):
    the "one long truss" drawings, e.g. 10k -> 2500 panels, 10 001 members, 7.5 km span."""
    return max(2, 2 * round(SIZES[size] / 8))


def _pt(x: float, y: float) -> Point:
    # sums of multiples of 3.0, 5.0 and 10.0 are exact in binary floating point; the
    # rounding only guards the printed form against a future change of PANEL
    return (round(x, 9), round(y, 9))


def _fix_class_order(doc: object) -> None:
    """Register the CLASSES of the entity types in use in sorted order. ezdxf 1.4.5 adds
    them from a set when saving, so without this the CLASSES section (and the file's
    bytes) depend on the string hash seed of the process."""
    for name in sorted(doc.entitydb.dxf_types_in_use()):  # type: ignore[attr-defined]
        doc.classes.add_class(name)  # type: ignore[attr-defined]


def write_drawing(path: Path, variant: str, n_parts: int, panels: int) -> int:
    """Write the DXF of ``n_parts`` parts in ``variant``. Returns the member count."""
    import ezdxf

    ezdxf.options.write_fixed_meta_data_for_testing = True  # byte-identical files
    doc = ezdxf.new("R2018", setup=False, units=6)  # $INSUNITS 6 = metres
    for name, colour in LAYERS.items():
        doc.layers.add(name, color=colour)
    msp = doc.modelspace()
    part = pratt_part(panels)
    n_chord = 2 * panels
    rng = random.Random(SEED)
    pending: list[tuple[Point, Point, str]] = []
    for ox, oy in part_origins(n_parts, panels):
        pts = [_pt(ox + x, oy + y) for x, y in part.xy.tolist()]
        if variant == "poly":
            msp.add_lwpolyline([pts[i] for i in part.bottom], format="xy", dxfattribs={"layer": "CHORD-BOTTOM"})
            msp.add_lwpolyline([pts[i] for i in part.top], format="xy", dxfattribs={"layer": "CHORD-TOP"})
        elif variant == "split":
            for chord, name in ((part.bottom, "CHORD-BOTTOM"), (part.top, "CHORD-TOP")):
                msp.add_line(pts[chord[0]], pts[chord[-1]], dxfattribs={"layer": name})
        for k, (i, j) in enumerate(part.members):
            if variant in ("poly", "split") and k < n_chord:
                continue  # chords drawn above
            if variant == "lines":
                pending.append((pts[i], pts[j], part.layer[k]))
            else:
                msp.add_line(pts[i], pts[j], dxfattribs={"layer": part.layer[k]})
    if variant == "lines":
        rng.shuffle(pending)
        for a, b, name in pending:
            if rng.random() < 0.5:
                a, b = b, a
            msp.add_line(a, b, dxfattribs={"layer": name})
    _fix_class_order(doc)
    doc.saveas(path)
    return n_parts * len(part.members)


#: the job sheet: this many small trusses of JOB_PANELS panels (49 members each), every
#: second one a block reference (INSERT) of one block holding the truss
JOB_PARTS = 2000
JOB_PANELS = 12
JOB_BLOCK = "PRATT-12"


def job_long_panels() -> int:
    """Panels of the one long truss with (nearly) the job sheet's member count:
    4 P + 1 = 98 001 for the sheet's 98 000."""
    return 2 * round(JOB_PARTS * (4 * JOB_PANELS + 1) / 8)


def write_job(path: Path, n_parts: int, panels: int) -> int:
    """The job sheet: ``n_parts`` trusses on the grid of ``part_origins``; the even ones
    drawn as LINEs, the odd ones as INSERTs of one block holding the same truss (its
    base point at B0). Returns the member count."""
    import ezdxf

    ezdxf.options.write_fixed_meta_data_for_testing = True
    doc = ezdxf.new("R2018", setup=False, units=6)
    for name, colour in LAYERS.items():
        doc.layers.add(name, color=colour)
    doc.layers.add("TRUSSES", color=7)
    part = pratt_part(panels)
    block = doc.blocks.new(JOB_BLOCK)
    for k, (i, j) in enumerate(part.members):
        block.add_line(_pt(*part.xy[i]), _pt(*part.xy[j]), dxfattribs={"layer": part.layer[k]})
    msp = doc.modelspace()
    for n, (ox, oy) in enumerate(part_origins(n_parts, panels)):
        if n % 2:
            msp.add_blockref(JOB_BLOCK, (ox, oy), dxfattribs={"layer": "TRUSSES"})
            continue
        pts = [_pt(ox + x, oy + y) for x, y in part.xy.tolist()]
        for k, (i, j) in enumerate(part.members):
            msp.add_line(pts[i], pts[j], dxfattribs={"layer": part.layer[k]})
    _fix_class_order(doc)
    doc.saveas(path)
    return n_parts * len(part.members)


def generate_job(*, outdir: Path = DEFAULT_OUTDIR, force: bool = False) -> Drawing:
    """Write (or reuse) the job sheet ``job_sheet.dxf`` and its loads file."""
    outdir.mkdir(parents=True, exist_ok=True)
    dxf, loads, meta_path = outdir / "job_sheet.dxf", outdir / "job_sheet.toml", outdir / "job_sheet.meta.json"
    meta = {
        "generator": _generator_hash(),
        "size": "job",
        "variant": "job",
        "parts": JOB_PARTS,
        "panels": JOB_PANELS,
        "members": JOB_PARTS * (4 * JOB_PANELS + 1),
        "joints": JOB_PARTS * (2 * JOB_PANELS + 2),
    }
    if not _current(meta, dxf, loads, meta_path, force=force):
        verify_part(pratt_part(JOB_PANELS))
        assert write_job(dxf, JOB_PARTS, JOB_PANELS) == meta["members"]
        loads.write_text(loads_text(JOB_PARTS, JOB_PANELS), encoding="utf-8")
        meta_path.write_text(json.dumps(meta, indent=1) + "\n", encoding="utf-8")
    return Drawing("job", "job", dxf, loads, JOB_PARTS, JOB_PANELS, int(meta["members"]), int(meta["joints"]))


#: sheets of many small trusses, each with two modelling errors (run_bench.py --many-parts):
#: its last diagonal left out (a mechanism, so every part gets its next steps) and a loose
#: bar at its first bottom joint; the same sheet at two sizes shows whether the work per
#: part grows with the number of parts
MANY_PARTS = (500, 2000)
MANY_PANELS = 6
#: the loose bar: from B0 down and to the left, drawing units (m)
LOOSE_BAR = (-0.7, -0.4)


def write_faulty_job(path: Path, n_parts: int, panels: int) -> int:
    """``n_parts`` trusses on the grid of ``part_origins``, as LINEs, each without its last
    diagonal and with a loose bar at B0 (so 4 P + 1 lines a part, as the whole truss has
    members). Returns that count."""
    import ezdxf

    ezdxf.options.write_fixed_meta_data_for_testing = True
    doc = ezdxf.new("R2018", setup=False, units=6)
    for name, colour in LAYERS.items():
        doc.layers.add(name, color=colour)
    msp = doc.modelspace()
    for n, (ox, oy) in enumerate(part_origins(n_parts, panels)):
        # each part a little deeper than the last: no two are repeats of each other, so
        # every part is analysed (and given its next steps) on its own
        part = pratt_part(panels, depth=DEPTH * (1 + n / (4 * n_parts)))
        kept = list(enumerate(part.members))[:-1]
        pts = [_pt(ox + x, oy + y) for x, y in part.xy.tolist()]
        for k, (i, j) in kept:
            msp.add_line(pts[i], pts[j], dxfattribs={"layer": part.layer[k]})
        b0 = pts[part.bottom[0]]
        msp.add_line(b0, _pt(b0[0] + LOOSE_BAR[0], b0[1] + LOOSE_BAR[1]), dxfattribs={"layer": "WEB"})
    _fix_class_order(doc)
    doc.saveas(path)
    return n_parts * len(part.members)


def generate_faulty_job(n_parts: int, *, outdir: Path = DEFAULT_OUTDIR, force: bool = False) -> Drawing:
    """Write (or reuse) ``faulty_sheet_N.dxf`` and its loads file (pin and roller per part,
    the deck loads): every part a mechanism with a loose bar."""
    outdir.mkdir(parents=True, exist_ok=True)
    stem = outdir / f"faulty_sheet_{n_parts}"
    dxf, loads, meta_path = stem.with_suffix(".dxf"), stem.with_suffix(".toml"), stem.with_suffix(".meta.json")
    meta = {
        "generator": _generator_hash(),
        "size": f"faulty {n_parts}",
        "variant": "faulty",
        "parts": n_parts,
        "panels": MANY_PANELS,
        "members": n_parts * (4 * MANY_PANELS + 1),
        "joints": n_parts * (2 * MANY_PANELS + 3),
    }
    if not _current(meta, dxf, loads, meta_path, force=force):
        assert write_faulty_job(dxf, n_parts, MANY_PANELS) == meta["members"]
        loads.write_text(loads_text(n_parts, MANY_PANELS), encoding="utf-8")
        meta_path.write_text(json.dumps(meta, indent=1) + "\n", encoding="utf-8")
    return Drawing(
        str(meta["size"]), "faulty", dxf, loads, n_parts, MANY_PANELS, int(meta["members"]), int(meta["joints"])
    )


def loads_text(n_parts: int, panels: int) -> str:
    """The loads file: pin + roller per part and the deck loads at the bottom panel points."""
    part = pratt_part(panels)
    out = [
        f"# Benchmark loads for {n_parts} Pratt trusses of {panels} panels (bench/make_trusses.py).",
        "# Per part: pin at the left bottom joint, roller at the right, 12 kN at each interior",
        "# bottom panel point. Synthetic values for timing, not a design.",
        "",
        "[units]",
        'force = "kN"',
        'length = "m"',
    ]

    def xy(p: Point) -> str:
        return f"[{p[0]!r}, {p[1]!r}]"

    for ox, oy in part_origins(n_parts, panels):
        pts = [_pt(ox + x, oy + y) for x, y in part.xy.tolist()]
        out += ["", "[[support]]", f"at = {xy(pts[part.bottom[0]])}", 'fix = "xy"']
        out += ["", "[[support]]", f"at = {xy(pts[part.bottom[-1]])}", 'fix = "y"']
        for i in part.bottom[1:-1]:
            out += ["", "[[load]]", f"at = {xy(pts[i])}", f"fy = {-LOAD_KN!r}", 'case = "deck"']
    return "\n".join(out) + "\n"


@dataclass(frozen=True)
class Drawing:
    """One generated benchmark drawing and its loads file."""

    size: str
    variant: str
    dxf: Path
    loads: Path
    parts: int
    panels: int
    members: int
    joints: int


def _current(meta: dict, dxf: Path, loads: Path, meta_path: Path, *, force: bool) -> bool:
    """Whether the drawing and loads file on disk were written for ``meta`` (same sizes,
    same generator), so they can be reused."""
    return (
        not force
        and dxf.is_file()
        and loads.is_file()
        and meta_path.is_file()
        and json.loads(meta_path.read_text()) == meta
    )


def _generator_hash() -> str:
    return hashlib.sha256(Path(__file__).read_bytes()).hexdigest()[:16]


def generate(
    size: str, variant: str, *, outdir: Path = DEFAULT_OUTDIR, panels: int = PANELS, force: bool = False
) -> Drawing:
    """Write (or reuse, when its recorded parameters match) one drawing and its loads file."""
    if size not in SIZES:
        raise ValueError(f"unknown size {size!r}; choose from {', '.join(SIZES)}")
    if variant not in VARIANTS:
        raise ValueError(f"unknown variant {variant!r}; choose from {', '.join(VARIANTS)}")
    outdir.mkdir(parents=True, exist_ok=True)
    n_parts = parts_for(size, panels)
    stem = f"pratt_{size}_{variant}" + ("" if panels == PANELS else f"_p{panels}")
    dxf, loads, meta_path = outdir / f"{stem}.dxf", outdir / f"{stem}.toml", outdir / f"{stem}.meta.json"
    meta = {
        "generator": _generator_hash(),
        "size": size,
        "variant": variant,
        "parts": n_parts,
        "panels": panels,
        "members": n_parts * (4 * panels + 1),
        "joints": n_parts * (2 * panels + 2),
    }
    if not _current(meta, dxf, loads, meta_path, force=force):
        verify_part(pratt_part(panels))
        members = write_drawing(dxf, variant, n_parts, panels)
        assert members == meta["members"]
        loads.write_text(loads_text(n_parts, panels), encoding="utf-8")
        meta_path.write_text(json.dumps(meta, indent=1) + "\n", encoding="utf-8")
    return Drawing(size, variant, dxf, loads, n_parts, panels, int(meta["members"]), int(meta["joints"]))


def _split_list(text: str, allowed: Sequence[str]) -> list[str]:
    items = [s.strip() for s in text.split(",") if s.strip()]
    for s in items:
        if s not in allowed:
            raise argparse.ArgumentTypeError(f"{s!r} is not one of {', '.join(allowed)}")
    return items


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument(
        "--sizes",
        type=lambda s: _split_list(s, tuple(SIZES)),
        default=list(SIZES),
        help="comma-separated sizes (default 1k,10k,50k,100k)",
    )
    ap.add_argument(
        "--variants",
        type=lambda s: _split_list(s, VARIANTS),
        default=list(DEFAULT_VARIANTS),
        help="comma-separated variants: poly, lines, split (default poly,lines)",
    )
    ap.add_argument("--panels", type=int, default=PANELS, help=f"panels per part, even (default {PANELS})")
    ap.add_argument(
        "--long",
        action="store_true",
        help="one long truss per size instead of a grid of parts (panels = members / 4, even)",
    )
    ap.add_argument(
        "--job",
        action="store_true",
        help=f"also write the job sheet ({JOB_PARTS} trusses of {JOB_PANELS} panels, every second one a block "
        "reference) and the one long truss of the same member count",
    )
    ap.add_argument("--outdir", type=Path, default=DEFAULT_OUTDIR, help="output folder (default bench/generated)")
    ap.add_argument("--force", action="store_true", help="rewrite drawings even when current")
    args = ap.parse_args(argv)
    for size in args.sizes:
        for variant in args.variants:
            panels = long_panels(size) if args.long else args.panels
            d = generate(size, variant, outdir=args.outdir, panels=panels, force=args.force)
            print(f"{d.dxf}  {d.members} members, {d.joints} joints, {d.parts} parts of {d.panels} panels")
    if args.job:
        for d in (
            generate_job(outdir=args.outdir, force=args.force),
            generate("100k", "poly", outdir=args.outdir, panels=job_long_panels(), force=args.force),
        ):
            print(f"{d.dxf}  {d.members} members, {d.joints} joints, {d.parts} parts of {d.panels} panels")
    return 0


if __name__ == "__main__":
    sys.exit(main())
