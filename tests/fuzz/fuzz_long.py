"""Long fuzz run: mutated drawings and loads files through ``dxftruss.cli.main`` in-process.

Glossary:
    input     one mutated file, a pure function of (--seed, its number): the same
              number always gives the same bytes, so any crash can be replayed alone
              with ``--replay N``.
    crash     a broken guarantee: an exception escaping main, an "internal error"
              line, a hang (alarm), an exit status outside {0, 1, 2}, a modified input,
              a report that is not strict JSON, several stderr lines on exit 2, or a
              temporary file left behind (see tests/fuzz/mutators.run_main).

Usage:
    python tests/fuzz/fuzz_long.py --count 10000 --seconds 600
    python tests/fuzz/fuzz_long.py --replay 4711           # rerun one input, print details

Each crashing input is saved under /tmp/dxftruss-fuzz-crashes/ (``<n>.dxf`` plus
``<n>.txt`` with the ops, stderr and traceback; ``<n>.toml`` for loads-file inputs).
A hang inside C code cannot be interrupted by the alarm; faulthandler then prints all
tracebacks and ends the run, and ``in-progress.*`` in that folder is the input.
Runs in one process with ``signal.alarm`` (POSIX); no subprocess per input.
"""

from __future__ import annotations

import argparse
import collections
import random
import sys
import tempfile
import time
import warnings
from pathlib import Path

if __package__ in (None, ""):  # run as a script: make ``tests`` importable
    sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from tests.fuzz import mutators as mu

CRASH_DIR = Path("/tmp/dxftruss-fuzz-crashes")


def make_input(base_seed: int, n: int, loads_fraction: float) -> tuple[bytes, bytes | None, str]:
    """(drawing bytes, loads bytes or None, description) of input number ``n``."""
    rng = random.Random(base_seed * 1_000_003 + n)
    if rng.random() < loads_fraction:
        text, what = mu.bad_loads(rng)
        return mu.seed("r2013"), text, f"loads file: {what}"
    data, name, ops = mu.random_input(rng)
    return data, None, f"{name}: {', '.join(ops)}"


def run_one(
    folder: Path, drawing: bytes, loads: bytes | None, timeout: int, debug: bool = False, memory_gb: float = 3.0
) -> mu.Outcome:
    path = folder / "drawing.dxf"
    path.write_bytes(drawing)
    lpath = None
    if loads is not None:
        lpath = folder / "loads.toml"
        lpath.write_bytes(loads)
    memory = int(memory_gb * (1 << 30)) if memory_gb > 0 else None
    out = mu.run_main(path, loads=lpath, timeout=timeout, debug=debug, memory=memory)
    if loads is not None and not out.problems:  # a wrong loads file: exit 2 naming the file
        if out.code != 2:
            out.problems.append(f"bad loads file accepted (exit {out.code})")
        elif str(lpath) not in out.stderr:
            out.problems.append("loads-file error does not name the file: " + out.stderr.strip()[:200])
    return out


def mark_in_progress(n: int, seed: int, drawing: bytes, loads: bytes | None, desc: str) -> None:
    """Keep the current input on disk: a hang in C code ends the process (faulthandler),
    and this is then the only record of which input did it."""
    CRASH_DIR.mkdir(parents=True, exist_ok=True)
    (CRASH_DIR / "in-progress.dxf").write_bytes(drawing)
    if loads is not None:
        (CRASH_DIR / "in-progress.toml").write_bytes(loads)
    (CRASH_DIR / "in-progress.txt").write_text(f"input {n} (seed {seed}): {desc}\n", encoding="utf-8")


def save_crash(n: int, drawing: bytes, loads: bytes | None, desc: str, out: mu.Outcome) -> Path:
    CRASH_DIR.mkdir(parents=True, exist_ok=True)
    (CRASH_DIR / f"{n}.dxf").write_bytes(drawing)
    if loads is not None:
        (CRASH_DIR / f"{n}.toml").write_bytes(loads)
    info = [
        f"input {n}: {desc}",
        f"exit code: {out.code}",
        "problems:",
        *[f"  {p}" for p in out.problems],
        "stderr:",
        out.stderr,
        "traceback:",
        out.trace,
    ]
    (CRASH_DIR / f"{n}.txt").write_text("\n".join(info), encoding="utf-8", errors="backslashreplace")
    return CRASH_DIR / f"{n}.txt"


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--count", type=int, default=10_000, help="stop after this many inputs")
    ap.add_argument("--seconds", type=float, default=600.0, help="stop after this much time")
    ap.add_argument("--seed", type=int, default=0, help="base seed (input n is a function of seed and n)")
    ap.add_argument("--start", type=int, default=0, help="first input number")
    ap.add_argument("--timeout", type=int, default=30, help="alarm per input, seconds")
    ap.add_argument("--loads-fraction", type=float, default=0.1, help="share of inputs that are bad loads files")
    ap.add_argument("--replay", type=int, help="run only input number N (internal errors with traceback)")
    ap.add_argument("--save", metavar="FILE", help="with --replay: also write the drawing to FILE")
    ap.add_argument(
        "--memory-gb", type=float, default=3.0, help="extra address space per input (0: no cap); a bomb is a crash"
    )
    ap.add_argument("--keep", action="store_true", help="keep the crash files of earlier runs")
    ap.add_argument("--every", type=int, default=1000, help="progress line every N inputs")
    args = ap.parse_args(argv)
    mu.configure_stdio_for_unicode()
    warnings.simplefilter("ignore")

    if args.replay is None and CRASH_DIR.exists() and not args.keep:
        for f in CRASH_DIR.iterdir():  # crashes of an earlier run would be mistaken for this one's
            if f.suffix in (".dxf", ".txt", ".toml"):
                f.unlink()
    with tempfile.TemporaryDirectory(prefix="dxftruss-fuzz-") as tmp:
        folder = Path(tmp)
        if args.replay is not None:
            drawing, loads, desc = make_input(args.seed, args.replay, args.loads_fraction)
            out = run_one(folder, drawing, loads, args.timeout, debug=True, memory_gb=args.memory_gb)
            if args.save:
                Path(args.save).write_bytes(drawing)
            print(f"input {args.replay}: {desc}\nexit {out.code} in {out.seconds:.3f} s\nproblems: {out.problems}")
            print("warnings:", out.warnings)
            print("stderr:", out.stderr)
            print(out.trace)
            return 1 if out.problems else 0

        t0 = time.perf_counter()
        by_code: collections.Counter[str] = collections.Counter()
        crashes: dict[str, list[int]] = {}
        first_saved: dict[str, Path] = {}
        warn_kinds: collections.Counter[str] = collections.Counter()
        slowest: list[tuple[float, int, str]] = []
        n = args.start
        done = 0
        while done < args.count and time.perf_counter() - t0 < args.seconds:
            drawing, loads, desc = make_input(args.seed, n, args.loads_fraction)
            mark_in_progress(n, args.seed, drawing, loads, desc)
            out = run_one(folder, drawing, loads, args.timeout, memory_gb=args.memory_gb)
            by_code[str(out.code) if out.code is not None else "none"] += 1
            for w in out.warnings:
                warn_kinds[w] += 1
            slowest = sorted([*slowest, (out.seconds, n, desc)], reverse=True)[:5]
            if out.problems:
                sig = mu.signature(out)
                crashes.setdefault(sig, []).append(n)
                path = save_crash(n, drawing, loads, desc, out)
                first_saved.setdefault(sig, path)
            n += 1
            done += 1
            if args.every and done % args.every == 0:
                rate = done / (time.perf_counter() - t0)
                print(f"  {done} inputs, {sum(map(len, crashes.values()))} crashes, {rate:.1f}/s", flush=True)
        elapsed = time.perf_counter() - t0
        for f in CRASH_DIR.glob("in-progress.*"):
            f.unlink()

    print(f"inputs: {done} (numbers {args.start}..{n - 1}, seed {args.seed})")
    print(f"elapsed: {elapsed:.1f} s ({done / elapsed if elapsed else 0:.1f} inputs/s)")
    print("outcomes by exit code: " + ", ".join(f"{k}: {v}" for k, v in sorted(by_code.items())))
    total = sum(map(len, crashes.values()))
    print(f"crashes: {total} ({len(crashes)} distinct)")
    for sig, ns in sorted(crashes.items(), key=lambda kv: -len(kv[1])):
        print(f"  {len(ns):>5} x {sig}")
        print(f"        first input {ns[0]} ({first_saved[sig]}); replay: --seed {args.seed} --replay {ns[0]}")
    if warn_kinds:
        print("warnings printed by the program (not crashes):")
        for w, k in warn_kinds.most_common(10):
            print(f"  {k:>5} x {w}")
    print("slowest inputs: " + "; ".join(f"{s:.2f} s #{i} ({d})" for s, i, d in slowest))
    return 1 if total else 0


if __name__ == "__main__":
    raise SystemExit(main())
