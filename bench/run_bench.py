"""Time dxftruss on the synthetic Pratt-truss drawings of make_trusses.py, 1k to 100k members.

Usage::

    python bench/run_bench.py [--sizes 1k,10k,50k,100k] [--variants poly,lines]
                              [--repeat 3] [--quick] [--no-pdf] [--markdown]
                              [--best] [--pdf-all] [--job] [--long-pdf] [--many-parts]
                              [--budget 60] [--blas-threads N] [--timeout 900]
                              [--save FILE.json]

Glossary:
    bare read     a fresh interpreter that imports ezdxf and calls ``ezdxf.readfile`` on
                  the drawing, nothing else: the floor any DXF tool pays.
    stage times   ``Result.timings`` of ``dxftruss.pipeline.check`` (read, snap, model,
                  stability, statics) in a fresh interpreter that sets nothing itself:
                  ``check()`` sets the run's policy (one BLAS thread, no cyclic gc).
                  It reads with the streaming reader, as ``check --json`` does
                  (``Settings(stream_line_work=True)``).
    python        that interpreter's whole wall time (imports, check(), no report):
                  library use, to compare with ``end-to-end``.
    end-to-end    ``python -m dxftruss check FILE --loads L --json OUT --quiet``: the
                  whole process as a user runs it (interpreter start, imports, JSON).
    ratio         end-to-end wall time / bare-read wall time, both whole processes;
                  ``ratio cpu`` the same with user + system CPU seconds (less sensitive
                  to other work on the machine; BLAS threads add to it).
                  ``ratio*`` divides by the ``readfile`` call alone (stricter).
    bytecode      the package's bytecode is written before the first run (as an install
                  leaves it), so no timed run compiles dxftruss from source.
    peak memory   max resident set size of one child process, from ``os.wait4``'s
                  rusage (Linux reports KiB), the largest over the repeats.

Every measurement is a separate child process run ``--repeat`` times, fewer once its
runs took ``--budget`` seconds together; the table shows medians (peak memory: the
maximum) and, in ``runs``, how many stage-timing / end-to-end runs each median has.
Each drawing is also checked for correctness: every part determinate, no error finding,
and the largest tension / compression and the total reaction equal to the closed-form
values of make_trusses.expected_extremes.

``--quick`` means one repeat, sizes 1k and 10k unless ``--sizes`` is given, and no PDF.
The default run (all four sizes, both variants, 3 repeats, the PDF) took under 5 minutes
on the 2-core machine; the drawings are written once into bench/generated/ and reused while current.

``--best`` shows the fastest run of each measurement instead of the median; ``--pdf-all``
times ``check --pdf`` of every drawing of the table (columns ``pdf``, ``pdf ratio`` and
``pdf MB``); ``--job`` adds the job sheet (make_trusses.py --job: 2,000 trusses of 49
members, every second one a block reference) and the one long truss of the same member
count, and the target that the sheet checks within JOB_RATIO_MAX of the long truss.

``--many-parts`` adds the faulty sheets (make_trusses.generate_faulty_job: 500 and 2,000
Pratt trusses of 6 panels, each a little deeper than the last so none repeats another,
each without its last diagonal and with a loose bar): ``check --json`` and ``check --pdf``
of both, and the targets that 4x the parts take at most MANY_GROWTH_MAX x the time (a
step whose work grows with the number of parts, per part, shows as 16x) and that the
PDF of 2,000 parts peaks under MANY_PDF_MEMORY_MAX_MB.

Targets (printed at the end, held / missed / not measured):
    end-to-end <= 2.0 x bare read at 50k and 100k members (both variants);
    end-to-end time(100k) / time(10k) <= 12;
    peak memory <= 1.5 GB at 100k;
    ``check --pdf`` of the 50k drawing < 30 s (when dxftruss.report.pdf exists).
"""

from __future__ import annotations

import argparse
import json
import math
import os
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from dataclasses import asdict, dataclass, field
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))

import make_trusses  # noqa: E402 - found through the sys.path entry above

PY = sys.executable

#: targets of the brief
RATIO_MAX = 2.0
SCALING_MAX = 12.0
MEMORY_MAX_MB = 1536.0  # 1.5 GB in MiB
PDF_MAX_S = 30.0
LONG_PDF_RATIO_MAX = 10.0  # check --pdf of one long 100k-member truss / bare read
LONG_PDF_GROWTH_MAX = 2.2  # check --pdf time 100k / 50k of the long trusses
JSON_RATIO_MAX = 1.5  # check --json at 100k / bare read (the streaming reader's target)
JSON_MEMORY_MAX_MB = 350.0  # peak memory of check --json at 100k
JOB_RATIO_MAX = 1.5  # check --json of the job sheet / of one long truss of the same size
MANY_GROWTH_MAX = 4.4  # faulty sheets: time at 2,000 parts / at 500 (linear: at most 4)
MANY_PDF_MEMORY_MAX_MB = 600.0  # faulty sheet of 2,000 parts, check --pdf peak

#: relative tolerance of the closed-form force check
FORCE_RTOL = 1e-6

BARE_READ = r"""
import sys, time, json
t0 = time.perf_counter()
import ezdxf
t1 = time.perf_counter()
doc = ezdxf.readfile(sys.argv[1])
t2 = time.perf_counter()
n = len(doc.modelspace())
print(json.dumps({"import": t1 - t0, "readfile": t2 - t1, "entities": n}))
"""

STAGES = r"""
import os, sys, time, json, collections
# library use as a user would write it: no thread or gc settings of our own here -
# check() sets the run's policy itself (dxftruss.policy.run_policy)
t0 = time.perf_counter()
import numpy as np
from dxftruss.pipeline import Settings, check
from dxftruss.findings import Severity
t1 = time.perf_counter()
r = check(sys.argv[1], Settings(loads=sys.argv[2], stream_line_work=True))  # the path check --json takes
t2 = time.perf_counter()
out = {"import": t1 - t0, "check": t2 - t1, "timings": dict(r.timings),
       "joints": int(r.truss.n_joints), "members": int(r.truss.n_members),
       "parts": len(r.truss.parts),
       "verdicts": dict(collections.Counter(s.verdict.value for s in r.stability)),
       "errors": dict(collections.Counter(f.code.value for f in r.findings if f.severity is Severity.ERROR)),
       "warnings": dict(collections.Counter(f.code.value for f in r.findings if f.severity is Severity.WARNING)),
       "cases": []}
for c in r.cases:
    f = np.asarray(c.forces, dtype=float)
    out["cases"].append({"name": c.name, "max_tension": float(np.nanmax(f)), "max_compression": float(np.nanmin(f)),
                         "unsolved": int(np.isnan(f).sum()), "sum_ry": float(sum(ry for _, _, ry in c.reactions)),
                         "sum_rx": float(sum(rx for _, rx, _ in c.reactions)), "residual": float(c.residual)})
print(json.dumps(out))
"""


@dataclass
class Child:
    """One finished child process: wall seconds, peak RSS in MiB, exit status, output."""

    wall: float
    cpu: float  # user + system seconds of the child
    rss_mb: float
    status: int
    stdout: str
    stderr: str
    timed_out: bool = False


def run_child(args: list[str], *, timeout: float, cwd: Path = ROOT, env: dict[str, str] | None = None) -> Child:
    """Run ``args`` in a fresh process; wall time around start..exit and its own max RSS
    (os.wait4 returns the rusage of exactly this child and its waited-for children)."""
    with tempfile.TemporaryFile("w+") as out, tempfile.TemporaryFile("w+") as err:
        t0 = time.perf_counter()
        proc = subprocess.Popen(
            args,
            stdout=out,
            stderr=err,
            stdin=subprocess.DEVNULL,
            cwd=cwd,
            env=None if env is None else {**os.environ, **env},
        )
        killed = threading.Event()

        def kill() -> None:
            killed.set()
            proc.kill()

        timer = threading.Timer(timeout, kill)
        timer.start()
        try:
            _, status, usage = os.wait4(proc.pid, 0)
        finally:
            timer.cancel()
        wall = time.perf_counter() - t0
        proc.returncode = os.waitstatus_to_exitcode(status)
        out.seek(0)
        err.seek(0)
        cpu = usage.ru_utime + usage.ru_stime
        return Child(wall, cpu, usage.ru_maxrss / 1024.0, proc.returncode, out.read(), err.read(), killed.is_set())


@dataclass
class Row:
    """Medians of one drawing's measurements (seconds, MiB)."""

    size: str
    variant: str
    members: int
    file_mb: float
    read_proc: float | None = None  # bare read, whole process
    read_call: float | None = None  # bare read, the readfile call alone
    read_rss: float | None = None
    read_cpu: float | None = None  # bare read, whole process, CPU seconds
    stages: dict[str, float] = field(default_factory=dict)
    check: float | None = None  # check() call in the stage-timing child
    lib: float | None = None  # the stage-timing child's whole process: check() from Python
    e2e: float | None = None
    e2e_rss: float | None = None
    e2e_cpu: float | None = None
    e2e_status: int | None = None
    pdf: float | None = None  # check --pdf, whole process (--pdf-all)
    pdf_rss: float | None = None
    correct: str = "not run"
    runs: str = "-"  # successful runs of the stage-timing child / of end-to-end
    notes: list[str] = field(default_factory=list)
    parts_note: str = ""

    @property
    def ratio(self) -> float | None:
        return self.e2e / self.read_proc if self.e2e and self.read_proc else None

    @property
    def ratio_cpu(self) -> float | None:
        return self.e2e_cpu / self.read_cpu if self.e2e_cpu and self.read_cpu else None

    @property
    def ratio_call(self) -> float | None:
        return self.e2e / self.read_call if self.e2e and self.read_call else None

    @property
    def pdf_ratio(self) -> float | None:
        return self.pdf / self.read_proc if self.pdf and self.read_proc else None


#: how the runs of one measurement are summarised: "median", or "best" (--best)
SUMMARY = {"how": "median"}


def _median(xs: list[float]) -> float | None:
    """The median of the runs, or the fastest with --best."""
    if not xs:
        return None
    return min(xs) if SUMMARY["how"] == "best" else statistics.median(xs)


def _last_line(text: str) -> str:
    lines = [ln for ln in text.strip().splitlines() if ln.strip()]
    return lines[-1][:300] if lines else ""


def verify(stage_out: dict, drawing: make_trusses.Drawing) -> str:
    """'ok' when the result matches the closed-form answer, else what is wrong."""
    problems = []
    if stage_out["members"] != drawing.members:
        problems.append(f"{stage_out['members']} members, expected {drawing.members}")
    if stage_out["joints"] != drawing.joints:
        problems.append(f"{stage_out['joints']} joints, expected {drawing.joints}")
    if stage_out["verdicts"] != {"determinate": drawing.parts}:
        problems.append(f"verdicts {stage_out['verdicts']}")
    if stage_out["errors"]:
        problems.append(f"errors {stage_out['errors']}")
    tension, compression, reaction = make_trusses.expected_extremes(drawing.panels)
    cases = stage_out["cases"]
    if len(cases) != 1:
        problems.append(f"{len(cases)} cases, expected 1")
    for c in cases:
        total = 2 * reaction * drawing.parts
        for name, got, want in (
            ("max tension", c["max_tension"], tension),
            ("max compression", c["max_compression"], compression),
            ("sum of vertical reactions", c["sum_ry"], total),
        ):
            if not abs(got - want) <= FORCE_RTOL * abs(want):
                problems.append(f"{name} {got:.6g}, expected {want:.6g}")
        if c["unsolved"]:
            problems.append(f"{c['unsolved']} members unsolved")
    return "ok" if not problems else "; ".join(problems)


def repeated(
    args: list[str], repeat: int, budget: float, timeout: float, env: dict[str, str] | None
) -> tuple[list[Child], str]:
    """Run ``args`` up to ``repeat`` times, fewer when the runs so far took more than
    ``budget`` seconds together (the first run always happens). Returns the successful
    runs and, if one failed, why."""
    done: list[Child] = []
    spent = 0.0
    for _ in range(repeat):
        if done and spent > budget:
            break
        c = run_child(args, timeout=timeout, env=env)
        spent += c.wall
        if c.timed_out:
            return done, f"timed out after {timeout:g} s"
        if c.status not in (0, 1):
            return done, f"exit {c.status}: {_last_line(c.stderr)}"
        done.append(c)
    return done, ""


def measure(
    drawing: make_trusses.Drawing,
    repeat: int,
    timeout: float,
    budget: float,
    env: dict[str, str] | None = None,
    *,
    pdf_all: bool = False,
) -> Row:
    row = Row(drawing.size, drawing.variant, drawing.members, drawing.dxf.stat().st_size / 2**20)
    dxf, loads = str(drawing.dxf), str(drawing.loads)
    # bare read
    done, why = repeated([PY, "-c", BARE_READ, dxf], repeat, budget, timeout, env)
    if why:
        row.notes.append(f"bare read failed: {why}")
    row.read_proc = _median([c.wall for c in done])
    row.read_cpu = _median([c.cpu for c in done])
    row.read_call = _median([json.loads(c.stdout)["readfile"] for c in done])
    row.read_rss = max((c.rss_mb for c in done), default=None)
    # stage timings
    done, why = repeated([PY, "-c", STAGES, dxf, loads], repeat, budget, timeout, env)
    if why:
        row.notes.append(f"check() failed: {why}")
    stage_runs = [json.loads(c.stdout) for c in done]
    if stage_runs:
        names = list(stage_runs[0]["timings"])
        row.stages = {n: _median([r["timings"].get(n, float("nan")) for r in stage_runs]) or 0.0 for n in names}
        row.check = _median([r["check"] for r in stage_runs])
        row.lib = _median([c.wall for c in done])
        row.correct = verify(stage_runs[0], drawing)
    # end-to-end
    with tempfile.TemporaryDirectory() as tmp:
        out = str(Path(tmp) / "out.json")
        e2e, why = repeated(
            [PY, "-m", "dxftruss", "check", dxf, "--loads", loads, "--json", out, "--quiet"],
            repeat,
            budget,
            timeout,
            env,
        )
    if why:
        row.notes.append(f"end-to-end failed: {why}")
    row.e2e = _median([c.wall for c in e2e])
    row.e2e_cpu = _median([c.cpu for c in e2e])
    row.e2e_rss = max((c.rss_mb for c in e2e), default=None)
    row.e2e_status = e2e[-1].status if e2e else None
    row.runs = f"{len(stage_runs)}/{len(e2e)}"
    if pdf_all:
        pdfs = []
        for _ in range(repeat):
            p = measure_pdf(drawing, timeout, env)
            if not p["ok"]:
                row.notes.append(f"check --pdf failed: {p['note']}")
                break
            pdfs.append(p)
            if sum(q["wall"] for q in pdfs) > budget:
                break
        row.pdf = _median([p["wall"] for p in pdfs])
        row.pdf_rss = max((p["rss_mb"] for p in pdfs), default=None)
    return row


def measure_pdf(drawing: make_trusses.Drawing, timeout: float, env: dict[str, str] | None = None) -> dict:
    """One timed ``check --pdf`` of ``drawing`` (the PDF writer's cost included)."""
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "out.pdf"
        c = run_child(
            [
                PY,
                "-m",
                "dxftruss",
                "check",
                str(drawing.dxf),
                "--loads",
                str(drawing.loads),
                "--pdf",
                str(out),
                "--quiet",
            ],
            timeout=timeout,
            env=env,
        )
        size = out.stat().st_size / 2**20 if out.exists() else None
    ok = not c.timed_out and c.status in (0, 1) and size is not None
    note = "" if ok else ("timed out" if c.timed_out else f"exit {c.status}: {_last_line(c.stderr)}")
    return {"drawing": drawing.dxf.name, "wall": c.wall, "rss_mb": c.rss_mb, "pdf_mb": size, "ok": ok, "note": note}


# --------------------------------------------------------------------------- printing

STAGE_NAMES = ("read", "snap", "model", "stability", "statics")


def _f(x: float | None, fmt: str = "{:.2f}") -> str:
    return "-" if x is None or math.isnan(x) else fmt.format(x)


def table(rows: list[Row], markdown: bool) -> str:
    head = [
        "size",
        "variant",
        "members",
        "MB",
        "bare read",
        "readfile()",
        *STAGE_NAMES,
        "check()",
        "python",
        "end-to-end",
        "ratio",
        "ratio cpu",
        "ratio*",
        "peak MB",
        *(("pdf", "pdf ratio", "pdf MB") if any(r.pdf for r in rows) else ()),
        "runs",
        "result",
    ]
    body = []
    for r in rows:
        body.append(
            [
                r.size,
                r.variant,
                str(r.members),
                _f(r.file_mb, "{:.1f}"),
                _f(r.read_proc),
                _f(r.read_call),
                *(_f(r.stages.get(s)) for s in STAGE_NAMES),
                _f(r.check),
                _f(r.lib),
                _f(r.e2e),
                _f(r.ratio),
                _f(r.ratio_cpu),
                _f(r.ratio_call),
                _f(r.e2e_rss, "{:.0f}"),
                *((_f(r.pdf), _f(r.pdf_ratio), _f(r.pdf_rss, "{:.0f}")) if any(x.pdf for x in rows) else ()),
                r.runs,
                r.correct if r.correct == "ok" else "WRONG" if r.correct != "not run" else "-",
            ]
        )
    if markdown:
        lines = ["| " + " | ".join(head) + " |", "|" + "|".join("---" for _ in head) + "|"]
        lines += ["| " + " | ".join(b) + " |" for b in body]
        return "\n".join(lines)
    widths = [max(len(h), *(len(b[i]) for b in body)) if body else len(h) for i, h in enumerate(head)]
    fmt = "  ".join(f"{{:<{w}}}" if i < 2 else f"{{:>{w}}}" for i, w in enumerate(widths))
    return "\n".join([fmt.format(*head), fmt.format(*("-" * w for w in widths))] + [fmt.format(*b) for b in body])


def measure_long_pdf(repeat: int, timeout: float, env: dict[str, str] | None = None) -> dict[str, dict]:
    """``check --pdf`` of one long truss (chords as polylines, ``make_trusses.py --long``)
    at 50k and 100k members beside the bare read of the same file, medians of ``repeat``."""
    out: dict[str, dict] = {}
    for size in ("50k", "100k"):
        d = make_trusses.generate(size, "poly", panels=make_trusses.long_panels(size))
        reads = [run_child([PY, "-c", BARE_READ, str(d.dxf)], timeout=timeout, env=env) for _ in range(repeat)]
        pdfs = [measure_pdf(d, timeout, env) for _ in range(repeat)]
        ok = all(p["ok"] for p in pdfs) and not any(c.status or c.timed_out for c in reads)
        out[size] = {
            "drawing": d.dxf.name,
            "members": d.members,
            "read": _median([c.wall for c in reads]),
            "pdf": _median([p["wall"] for p in pdfs]),
            "ok": ok,
            "note": "; ".join(p["note"] for p in pdfs if p["note"]),
        }
        print(f"long {size}: bare read {out[size]['read']:.2f} s, check --pdf {out[size]['pdf']:.2f} s", flush=True)
    return out


def measure_many_parts(repeat: int, timeout: float, env: dict[str, str] | None = None) -> dict[int, dict]:
    """``check --json`` and ``check --pdf`` of the faulty sheets (make_trusses.MANY_PARTS
    small trusses, each a mechanism with a loose bar), whole processes, the fastest of
    ``repeat`` runs; exit status 1 (errors found) is the expected answer."""
    out: dict[int, dict] = {}
    for n in make_trusses.MANY_PARTS:
        d = make_trusses.generate_faulty_job(n)
        row: dict = {"drawing": d.dxf.name, "parts": n, "members": d.members, "ok": True, "note": ""}
        with tempfile.TemporaryDirectory() as tmp:
            for kind, flag in (("json", "--json"), ("pdf", "--pdf")):
                target = str(Path(tmp) / f"out.{kind}")
                args = [PY, "-m", "dxftruss", "check", str(d.dxf), "--loads", str(d.loads), flag, target, "--quiet"]
                runs = [run_child(args, timeout=timeout, env=env) for _ in range(repeat)]
                good = [c for c in runs if not c.timed_out and c.status == 1]
                if len(good) < len(runs):
                    bad = next(c for c in runs if c not in good)
                    row["ok"] = False
                    row["note"] += f"{kind}: exit {bad.status} {_last_line(bad.stderr)}; "
                row[kind] = min((c.wall for c in good), default=None)
                row[f"{kind}_rss"] = max((c.rss_mb for c in good), default=None)
        out[n] = row
        print(
            f"faulty sheet {n} parts ({d.members} members): check --json {_f(row['json'])} s, "
            f"check --pdf {_f(row['pdf'])} s (peak {_f(row['pdf_rss'], '{:.0f}')} MB)",
            flush=True,
        )
    return out


def many_parts_targets(many: dict[int, dict] | None) -> list[str]:
    """Work per part independent of the number of parts: times at 4x the parts within
    MANY_GROWTH_MAX x (a step quadratic in the parts gives 16x), and the PDF's memory."""
    small, big = make_trusses.MANY_PARTS
    if not many or big not in many:
        return [f"not measured  faulty sheets {big}/{small} parts: time growth <= {MANY_GROWTH_MAX:g} (--many-parts)"]
    a, b = many[small], many[big]
    out = []
    for kind in ("json", "pdf"):
        growth = b[kind] / a[kind] if a.get(kind) and b.get(kind) else None
        ok = a["ok"] and b["ok"] and growth is not None and growth <= MANY_GROWTH_MAX
        out.append(
            f"{'held  ' if ok else 'MISSED'}  faulty sheets check --{kind} time {big}/{small} parts "
            f"<= {MANY_GROWTH_MAX:g}: {_f(b[kind])} s / {_f(a[kind])} s = {_f(growth)}"
        )
    rss = b.get("pdf_rss")
    ok = rss is not None and rss <= MANY_PDF_MEMORY_MAX_MB
    out.append(
        f"{'held  ' if ok else 'MISSED'}  faulty sheet of {big} parts check --pdf peak <= "
        f"{MANY_PDF_MEMORY_MAX_MB:.0f} MB: {_f(rss, '{:.0f}')} MB"
    )
    return out


def long_pdf_targets(long: dict[str, dict] | None) -> list[str]:
    """The two targets of ``check --pdf`` on one long truss (bench/README.md)."""
    if not long or "100k" not in long:
        return [
            f"not measured  long truss check --pdf at 100k <= {LONG_PDF_RATIO_MAX:g}x bare read (--long-pdf)",
            f"not measured  long truss check --pdf time 100k/50k <= {LONG_PDF_GROWTH_MAX:g} (--long-pdf)",
        ]
    a, b = long["100k"], long.get("50k")
    ratio = a["pdf"] / a["read"] if a["read"] else None
    ok = a["ok"] and ratio is not None and ratio <= LONG_PDF_RATIO_MAX
    out = [
        f"{'held  ' if ok else 'MISSED'}  long truss check --pdf at 100k <= {LONG_PDF_RATIO_MAX:g}x bare read: "
        f"{a['pdf']:.1f} s / {a['read']:.2f} s = {_f(ratio)}x" + (f" ({a['note']})" if a["note"] else "")
    ]
    if b and b["pdf"]:
        growth = a["pdf"] / b["pdf"]
        ok = a["ok"] and b["ok"] and growth <= LONG_PDF_GROWTH_MAX
        out.append(
            f"{'held  ' if ok else 'MISSED'}  long truss check --pdf time 100k/50k <= {LONG_PDF_GROWTH_MAX:g}: "
            f"{a['pdf']:.1f} s / {b['pdf']:.1f} s = {growth:.2f}"
        )
    return out


def targets(rows: list[Row], pdf: dict | None, pdf_note: str) -> list[str]:
    """One line per target: 'held', 'MISSED' or 'not measured', with the numbers."""
    by = {(r.size, r.variant): r for r in rows}
    variants = sorted({r.variant for r in rows})
    out = []

    def verdict(ok: bool | None) -> str:
        return "not measured" if ok is None else ("held  " if ok else "MISSED")

    for size in ("50k", "100k"):
        vals = [(v, by[(size, v)].ratio, by[(size, v)].ratio_cpu) for v in variants if (size, v) in by]
        vals = [(v, x, c) for v, x, c in vals if x is not None]
        ok = all(x <= RATIO_MAX for _, x, _ in vals) if vals else None
        detail = ", ".join(f"{v} {x:.2f}x (cpu {_f(c)}x)" for v, x, c in vals)
        out.append(f"{verdict(ok)}  end-to-end <= {RATIO_MAX:g}x bare read at {size}: {detail}")
    vals = []
    for v in variants:
        a, b = by.get(("100k", v)), by.get(("10k", v))
        if a and b and a.e2e and b.e2e:
            vals.append((v, a.e2e / b.e2e))
    ok = all(x <= SCALING_MAX for _, x in vals) if vals else None
    out.append(f"{verdict(ok)}  time(100k)/time(10k) <= {SCALING_MAX:g}: " + ", ".join(f"{v} {x:.1f}" for v, x in vals))
    vals = [(v, by[("100k", v)].e2e_rss) for v in variants if ("100k", v) in by and by[("100k", v)].e2e_rss]
    ok = all(x <= MEMORY_MAX_MB for _, x in vals) if vals else None
    out.append(f"{verdict(ok)}  peak memory <= 1.5 GB at 100k: " + ", ".join(f"{v} {x:.0f} MB" for v, x in vals))
    if pdf is None:
        out.append(f"{verdict(None)}  check --pdf of 50k < {PDF_MAX_S:g} s: {pdf_note}")
    else:
        ok = pdf["ok"] and pdf["wall"] < PDF_MAX_S
        detail = (
            f"{pdf['drawing']} {pdf['wall']:.1f} s, peak {pdf['rss_mb']:.0f} MB"
            + (f", PDF {pdf['pdf_mb']:.1f} MB" if pdf["pdf_mb"] else "")
            + (f" ({pdf['note']})" if pdf["note"] else "")
        )
        out.append(f"{verdict(ok)}  check --pdf of 50k < {PDF_MAX_S:g} s: {detail}")
    vals = [(v, by[("100k", v)]) for v in variants if ("100k", v) in by]
    vals = [(v, r) for v, r in vals if r.ratio is not None and r.e2e_rss is not None]
    ok = all(r.ratio <= JSON_RATIO_MAX and r.e2e_rss <= JSON_MEMORY_MAX_MB for _, r in vals) if vals else None  # type: ignore[operator]
    out.append(
        f"{verdict(ok)}  check --json at 100k <= {JSON_RATIO_MAX:g}x bare read, peak <= {JSON_MEMORY_MAX_MB:.0f} MB: "
        + ", ".join(f"{v} {_f(r.ratio)}x (cpu {_f(r.ratio_cpu)}x), {r.e2e_rss:.0f} MB" for v, r in vals)
    )
    reach = [(v, r) for v, r in vals if r.ratio < 1.0]  # type: ignore[operator]
    if vals:
        out.append(
            f"{'held  ' if len(reach) == len(vals) else 'not yet'}  reach: check --json at 100k faster than bare read: "
            + ", ".join(f"{v} {_f(r.ratio)}x" for v, r in vals)
        )
    job, long = by.get(("job", "job")), by.get(("long", "poly"))
    if job and long and job.e2e and long.e2e:
        ratio = job.e2e / long.e2e
        ok = ratio <= JOB_RATIO_MAX and job.correct == "ok" and long.correct == "ok"
        out.append(
            f"{verdict(ok)}  job sheet within {JOB_RATIO_MAX:g}x of one truss of the same size: "
            f"{job.e2e:.2f} s ({job.members} members, {job.parts_note}) / {long.e2e:.2f} s ({long.members} members) "
            f"= {ratio:.2f}"
        )
    wrong = [f"{r.size}/{r.variant}: {r.correct}" for r in rows if r.correct not in ("ok", "not run")]
    if wrong:
        out.append("WRONG RESULTS (timings of a wrong answer mean little): " + " | ".join(wrong))
    return out


def _list(text: str, allowed: tuple[str, ...]) -> list[str]:
    items = [s.strip() for s in text.split(",") if s.strip()]
    bad = [s for s in items if s not in allowed]
    if bad:
        raise argparse.ArgumentTypeError(f"{', '.join(bad)}: choose from {', '.join(allowed)}")
    return items


def _said(row: Row) -> None:
    print(
        f" end-to-end {_f(row.e2e)} s, bare read {_f(row.read_proc)} s"
        + (f", check --pdf {_f(row.pdf)} s" if row.pdf else "")
        + f", result {row.correct}"
        + ("; " + "; ".join(row.notes) if row.notes else ""),
        flush=True,
    )


def _compile_package() -> None:
    """Write the package's bytecode first, as an install leaves it: a checkout run with
    PYTHONDONTWRITEBYTECODE (or read-only) would otherwise compile every module from
    source in every timed run, a cost an installed tool and the bare read's library
    (compiled when it was installed) do not pay."""
    import compileall

    compileall.compile_dir(str(ROOT / "dxftruss"), quiet=1)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description="Time dxftruss on synthetic truss drawings (1k-100k members).")
    ap.add_argument(
        "--sizes",
        type=lambda s: _list(s, tuple(make_trusses.SIZES)),
        default=None,
        help="comma-separated sizes (default 1k,10k,50k,100k; with --quick 1k,10k)",
    )
    ap.add_argument(
        "--variants",
        type=lambda s: _list(s, make_trusses.VARIANTS),
        default=list(make_trusses.DEFAULT_VARIANTS),
        help="comma-separated: poly, lines, split",
    )
    ap.add_argument("--repeat", type=int, default=None, help="runs of every child process (default 3; --quick 1)")
    ap.add_argument("--quick", action="store_true", help="one repeat, sizes 1k,10k, no PDF")
    ap.add_argument("--no-pdf", action="store_true", help="skip the timed check --pdf of the 50k drawing")
    ap.add_argument(
        "--long-pdf",
        action="store_true",
        help="also time check --pdf of one long truss at 50k and 100k members (make_trusses.py --long)",
    )
    ap.add_argument("--best", action="store_true", help="the fastest run of each measurement, not the median")
    ap.add_argument("--pdf-all", action="store_true", help="time check --pdf of every drawing of the table too")
    ap.add_argument(
        "--job",
        action="store_true",
        help="also the job sheet (2,000 small trusses, half block references) and one long truss of its size",
    )
    ap.add_argument(
        "--many-parts",
        action="store_true",
        help="also the faulty sheets of 500 and 2,000 small trusses (each a mechanism with a loose bar): "
        "check --json and --pdf, and that the time grows no faster than the parts",
    )
    ap.add_argument("--markdown", action="store_true", help="print the table as Markdown")
    ap.add_argument("--timeout", type=float, default=900.0, help="seconds before a child is killed (default 900)")
    ap.add_argument(
        "--budget",
        type=float,
        default=60.0,
        help="stop repeating a measurement once its runs took this many seconds (default 60)",
    )
    ap.add_argument(
        "--blas-threads",
        type=int,
        default=None,
        help="set OPENBLAS_NUM_THREADS / OMP_NUM_THREADS / MKL_NUM_THREADS in the children "
        "(default: inherit; dxftruss.cli sets 1 unless the environment says otherwise)",
    )
    ap.add_argument(
        "--save",
        type=Path,
        default=make_trusses.DEFAULT_OUTDIR / "results.json",
        help="write the raw results here (default bench/generated/results.json)",
    )
    args = ap.parse_args(argv)
    sizes = args.sizes or (["1k", "10k"] if args.quick else list(make_trusses.SIZES))
    repeat = args.repeat or (1 if args.quick else 3)
    env = None
    if args.blas_threads is not None:
        n = str(args.blas_threads)
        env = {"OPENBLAS_NUM_THREADS": n, "OMP_NUM_THREADS": n, "MKL_NUM_THREADS": n}

    if args.best:
        SUMMARY["how"] = "best"
    _compile_package()
    rows: list[Row] = []
    load0 = os.getloadavg()
    t_start = time.perf_counter()
    for size in sizes:
        for variant in args.variants:
            t0 = time.perf_counter()
            drawing = make_trusses.generate(size, variant)
            gen = time.perf_counter() - t0
            print(
                f"{size:>5} {variant:<6} {drawing.members} members ({drawing.parts} parts)"
                + (f", written in {gen:.1f} s" if gen > 0.5 else "")
                + " ...",
                end="",
                flush=True,
            )
            row = measure(drawing, repeat, args.timeout, args.budget, env, pdf_all=args.pdf_all)
            rows.append(row)
            _said(row)
    if args.job:
        t0 = time.perf_counter()
        job = make_trusses.generate_job()
        long = make_trusses.generate("100k", "poly", panels=make_trusses.job_long_panels())
        print(f"  job sheet and one long truss written in {time.perf_counter() - t0:.1f} s", flush=True)
        for drawing, size, variant in ((job, "job", "job"), (long, "long", "poly")):
            print(f"{size:>5} {variant:<6} {drawing.members} members ({drawing.parts} parts) ...", end="", flush=True)
            row = measure(drawing, repeat, args.timeout, args.budget, env, pdf_all=args.pdf_all)
            row.size, row.variant = size, variant
            if size == "job":
                row.parts_note = f"{drawing.parts} parts, every second a block reference"
            rows.append(row)
            _said(row)

    pdf: dict | None = None
    pdf_note = ""
    if args.quick or args.no_pdf:
        pdf_note = "skipped (--quick / --no-pdf)"
    elif (probe := run_child([PY, "-c", "import dxftruss.report.pdf"], timeout=args.timeout, env=env)).status:
        pdf_note = f"skipped: dxftruss.report.pdf is not importable yet ({_last_line(probe.stderr)})"
    else:
        drawing = make_trusses.generate("50k", "poly")
        print("50k poly: timing check --pdf once ...", end="", flush=True)
        pdf = measure_pdf(drawing, args.timeout, env)
        print(f" {pdf['wall']:.1f} s" + (f" ({pdf['note']})" if pdf["note"] else ""), flush=True)
    long_pdf = measure_long_pdf(repeat, args.timeout, env) if args.long_pdf and pdf is not None else None
    many = measure_many_parts(repeat, args.timeout, env) if args.many_parts else None

    print()
    print(
        f"dxftruss benchmark: up to {repeat} run(s) per child process (fewer once a measurement took "
        f"{args.budget:g} s; 'runs' = check()/end-to-end runs), {'best runs' if args.best else 'medians'} in seconds; "
        "peak MB = max RSS (MiB)" + (f"; BLAS threads {args.blas_threads}" if args.blas_threads is not None else "")
    )
    print(table(rows, args.markdown))
    print()
    print("ratio = end-to-end / bare read, wall time of whole processes; ratio cpu = the same with user+system")
    print("CPU seconds (steadier on a busy machine); ratio* = end-to-end wall / the readfile() call alone")
    print(
        f"load average at start {load0[0]:.2f}, at end {os.getloadavg()[0]:.2f} (2 cores: above ~1 the wall times "
        "include waiting for a CPU)"
    )
    for line in targets(rows, pdf, pdf_note) + long_pdf_targets(long_pdf) + many_parts_targets(many):
        print(line)
    for r in rows:
        for n in r.notes:
            print(f"note {r.size}/{r.variant}: {n}")
    print(f"total benchmark time {time.perf_counter() - t_start:.0f} s")
    if args.save:
        args.save.parent.mkdir(parents=True, exist_ok=True)
        rows_out = [asdict(r) | {"ratio": r.ratio, "ratio_cpu": r.ratio_cpu, "ratio_call": r.ratio_call} for r in rows]
        raw = {
            "repeat": repeat,
            "summary": SUMMARY["how"],
            "budget": args.budget,
            "blas_threads": args.blas_threads,
            "python": sys.version.split()[0],
            "loadavg": [load0[0], os.getloadavg()[0]],
            "rows": rows_out,
            "pdf": pdf,
            "pdf_note": pdf_note,
            "long_pdf": long_pdf,
            "many_parts": many,
        }
        args.save.write_text(json.dumps(raw, indent=1) + "\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
