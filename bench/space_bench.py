"""Benchmark: a space truss of about 50k members beside the planar 50k drawing.

Each part is a triangular space truss (a cantilevered prism): sections of three joints
1.5 m apart along x, an equilateral triangle of side 2.0 m; per bay three chords, three
face diagonals and the new section's triangle, nine bars joining a rigid triangle to the
one before it (an octahedron, rigid), so with the first section's three joints fixed in
x, y and z, m + r = 9 n + 9 = 3 j: statically determinate and stable. 1 kN acts
downward (world -Z) at each of the last section's joints. 249 parts of 22 bays (198
members each) on a grid give 49 302 members, the planar bench's 50k size.

Checked every run: the part count, every part determinate, no error finding, and the
vertical reactions summing to the total load (global equilibrium).

    .venv/bin/python bench/space_bench.py [--parts 249] [--bays 22] [--repeat 3]
"""

from __future__ import annotations

import argparse
import math
import statistics
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

BAY = 1.5
SIDE = 2.0


def section(x: float, oy: float, oz: float) -> list[tuple[float, float, float]]:
    r = SIDE / math.sqrt(3.0)
    return [
        (x, oy + r * math.cos(a), oz + r * math.sin(a))
        for a in (math.pi / 2, math.pi / 2 + 2 * math.pi / 3, math.pi / 2 + 4 * math.pi / 3)
    ]


def write(path: Path, parts: int, bays: int) -> tuple[Path, Path]:
    import ezdxf

    doc = ezdxf.new("R2018", units=6)
    msp = doc.modelspace()
    side = math.ceil(math.sqrt(parts))
    loads = ['[units]\nforce = "kN"\nlength = "m"\n']
    for k in range(parts):
        oy, oz = 6.0 * (k % side), 6.0 * (k // side)
        prev = section(0.0, oy, oz)
        for p in prev:
            loads.append(f'[[support]]\nat = [{p[0]!r}, {p[1]!r}, {p[2]!r}]\nfix = "xyz"\n')
        for b in range(1, bays + 1):
            cur = section(b * BAY, oy, oz)
            for i in range(3):
                msp.add_line(prev[i], cur[i], dxfattribs={"layer": "CHORD"})
                msp.add_line(prev[i], cur[(i + 1) % 3], dxfattribs={"layer": "DIAGONAL"})
                msp.add_line(cur[i], cur[(i + 1) % 3], dxfattribs={"layer": "FRAME"})
            prev = cur
        for p in prev:
            loads.append(f"[[load]]\nat = [{p[0]!r}, {p[1]!r}, {p[2]!r}]\nfz = -1.0\n")
    doc.saveas(path)
    toml = path.with_suffix(".toml")
    toml.write_text("".join(loads))
    return path, toml


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--parts", type=int, default=249)
    ap.add_argument("--bays", type=int, default=22)
    ap.add_argument("--repeat", type=int, default=3)
    a = ap.parse_args(argv)
    from dxftruss.pipeline import Settings, check

    out = ROOT / "bench" / "generated"
    out.mkdir(parents=True, exist_ok=True)
    dwg, toml = write(out / f"space_{a.parts}x{a.bays}.dxf", a.parts, a.bays)
    times, stages = [], {}
    for _ in range(a.repeat):
        t0 = time.perf_counter()
        res = check(dwg, Settings(loads=str(toml)))
        times.append(time.perf_counter() - t0)
        stages = res.timings
    sa = res.space
    assert sa is not None
    problems = []
    if len(sa.truss.parts) != a.parts:
        problems.append(f"{len(sa.truss.parts)} parts")
    if any(st.verdict != "determinate" for st in sa.stability):
        problems.append("a part is not determinate")
    if res.has_errors:
        problems.append("error findings")
    (case,) = sa.cases
    rz = sum(r[3] for r in case.reactions)
    if abs(rz - 3 * a.parts) > 1e-6 * 3 * a.parts:
        problems.append(f"vertical reactions {rz} != {3 * a.parts}")
    print(
        f"space truss: {sa.truss.n_members} members, {sa.truss.n_joints} joints, {len(sa.truss.parts)} parts; "
        f"check() median {statistics.median(times):.2f} s over {len(times)} run(s); "
        + ", ".join(f"{k} {v:.2f} s" for k, v in stages.items())
        + f"; result {'ok' if not problems else 'WRONG: ' + '; '.join(problems)}"
    )
    return 1 if problems else 0


if __name__ == "__main__":
    raise SystemExit(main())
