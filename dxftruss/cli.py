"""The command line: argument parsing, the only printing, and the exit codes.

Exit status: 0 no error findings; 1 error findings (a mechanism included);
2 the input could not be read, an option or the loads file is wrong, or an
internal error (reported in one line, never a traceback).
"""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

from . import __version__

EXIT_OK, EXIT_FINDINGS, EXIT_INPUT = 0, 1, 2

EPILOG = """\
examples:
  dxftruss check roof.dxf                       writes roof.check.pdf here, prints a summary
  dxftruss check roof.dxf --loads roof.toml --json roof.json --pdf roof.pdf --dxf roof.marked.dxf
  dxftruss check bridge.dxf --units m --snap 0.5mm --near-miss 20mm --layers "CHORD*" --layers "WEB*"
  dxftruss check bridge.dxf --json -            JSON on standard output, summary on standard error
  dxftruss check drawings/ --json reports/      every *.dxf in a folder, one report each, both cores

drawing conventions:
  members   LINE, LWPOLYLINE and POLYLINE on any layer except SUPPORT* and LOAD*
  supports  POINT, CIRCLE or block reference on SUPPORT-XY, SUPPORT-X or SUPPORT-Y
  loads     LINE on LOAD or LOAD-<case> pointing at its joint, labelled by the nearest
            TEXT/MTEXT on the same layer ("12.5 kN")

exit status: 0 no errors, 1 error findings (e.g. a mechanism), 2 unreadable input or bad options
"""


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="dxftruss",
        description="Check a truss drawn as DXF line work: joints, stability, determinacy, "
        "zero-force members, member forces and reactions.",
    )
    parser.add_argument("--version", action="version", version=f"dxftruss {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="check")
    c = sub.add_parser(
        "check",
        help="check one drawing",
        description="Check a truss drawing and write the reports.",
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    c.add_argument(
        "drawing", metavar="DRAWING.dxf", nargs="+", help="DXF drawing(s) or folder(s) of them (never modified)"
    )
    c.add_argument("--loads", metavar="FILE.toml", help="loads file: supports, loads, combinations, sections")
    c.add_argument("--pdf", metavar="OUT.pdf", help="marked-up PDF (default: <drawing name>.check.pdf here)")
    c.add_argument("--dxf", metavar="OUT.dxf", help="annotated copy of the drawing with results on new layers")
    c.add_argument("--json", metavar="OUT.json", help="JSON report; '-' for standard output")
    c.add_argument("--snap", metavar="LENGTH", help="join endpoints closer than this, e.g. 0.5mm (default 1e-6 of the extent)")
    c.add_argument(
        "--near-miss", metavar="LENGTH", help="report gaps up to this, e.g. 20mm (default 2%% of the median member length)"
    )
    c.add_argument("--units", choices=["mm", "cm", "m", "in", "ft"], help="drawing unit (overrides the header)")
    c.add_argument(
        "--layers",
        metavar="GLOB",
        action="append",
        default=[],
        help="only members on layers matching GLOB, e.g. 'TRUSS*'; repeat for more globs",
    )
    c.add_argument(
        "--max-parts",
        metavar="N",
        type=int,
        default=5000,
        help="refuse drawings whose lines fall into more than N separate parts (default 5000)",
    )
    c.add_argument(
        "--max-members",
        metavar="N",
        type=int,
        default=250_000,
        help="refuse drawings with more than N members (default 250000)",
    )
    c.add_argument("--page", choices=["A4", "A3", "letter", "tabloid"], default="A3", help="PDF page size (default A3)")
    c.add_argument("--quiet", action="store_true", help="print nothing but errors")
    return parser


def _err(msg: str) -> None:
    """One line on standard error, whatever the message holds."""
    line = " ".join(str(msg).split())
    print(f"dxftruss: {line}", file=sys.stderr)


def _expand(drawings: list[str]) -> list[str]:
    """Drawings named on the command line; a folder stands for its *.dxf files."""
    out: list[str] = []
    for d in drawings:
        p = Path(d)
        if p.is_dir():
            out += sorted(str(f) for f in p.iterdir() if f.suffix.lower() == ".dxf" and f.is_file())
        else:
            out.append(d)
    return out


def _outputs(args: argparse.Namespace, drawing: str, many: bool) -> tuple[str | None, str | None, str | None]:
    """(pdf, dxf, json) paths for one drawing. With several drawings an output option
    names a folder that receives <name>.check.<ext>; with none, the PDF goes here."""
    stem = Path(drawing).with_suffix("").name
    if not many:
        pdf = args.pdf or (None if (args.dxf or args.json) else stem + ".check.pdf")
        return pdf, args.dxf, args.json
    def inside(folder: str | None, ext: str) -> str | None:
        return str(Path(folder) / f"{stem}.check.{ext}") if folder else None
    pdf = inside(args.pdf, "pdf") if args.pdf else (None if (args.dxf or args.json) else stem + ".check.pdf")
    return pdf, inside(args.dxf, "dxf"), inside(args.json, "json")


def check_one(args: argparse.Namespace, drawing: str, many: bool) -> tuple[int, str, dict]:
    """Check one drawing and write its reports. Returns (exit status, printed text, row)."""
    from .errors import DxftrussError
    from .outputs import check_output_path, write_atomic
    from .pipeline import Settings

    pdf, dxf, json_out = _outputs(args, drawing, many)
    inputs = [drawing] + ([args.loads] if args.loads else [])
    row: dict = {"drawing": drawing, "status": "error", "verdict": "-", "errors": "-", "warnings": "-"}
    text = ""
    try:
        for out, what in ((pdf, "PDF"), (dxf, "annotated DXF"), (json_out if json_out != "-" else None, "JSON")):
            if out:
                check_output_path(out, inputs, what)
        settings = Settings(
            snap=args.snap,
            near_miss=args.near_miss,
            units=args.units,
            layers=tuple(args.layers),
            loads=args.loads,
            max_parts=args.max_parts,
            max_members=args.max_members,
        )
        result = _check_with_progress(drawing, settings, show=not args.quiet and not many)
        from .report.text import summary

        if not args.quiet:
            text += summary(result, color=not many and sys.stdout.isatty() and args.json != "-")
        if json_out:
            from .report.json import to_json

            js = to_json(result)
            if json_out == "-":
                sys.stdout.write(js)
            else:
                # names from the drawing may hold undecodable bytes: escape, never fail
                write_atomic(
                    json_out, lambda tmp: Path(tmp).write_text(js, encoding="utf-8", errors="backslashreplace")
                )
        if pdf:
            from .report.pdf import write_pdf

            write_atomic(pdf, lambda tmp: write_pdf(result, tmp, page=args.page))
        if dxf:
            from .report.dxf import write_dxf

            write_atomic(dxf, lambda tmp: write_dxf(result, tmp))
        written = [p for p in (json_out if json_out != "-" else None, pdf, dxf) if p]
        if written and not args.quiet:
            text += "wrote " + ", ".join(written) + "\n"
        from .findings import Severity

        row.update(
            status="findings" if result.has_errors else "ok",
            verdict=", ".join(st.verdict.value for st in result.stability) or "-",
            errors=str(sum(f.severity is Severity.ERROR for f in result.findings)),
            warnings=str(sum(f.severity is Severity.WARNING for f in result.findings)),
        )
        return (EXIT_FINDINGS if result.has_errors else EXIT_OK), text, row
    except DxftrussError as exc:
        row["message"] = str(exc)
        return EXIT_INPUT, text, row
    except Exception as exc:  # the last line of defence: one line, never a traceback
        if os.environ.get("DXFTRUSS_DEBUG"):
            raise
        row["message"] = f"{drawing}: internal error ({type(exc).__name__}: {exc}); please report it with the drawing"
        return EXIT_INPUT, text, row


def _check_with_progress(drawing: str, settings, *, show: bool):  # type: ignore[no-untyped-def]
    """check() with a one-line stage indicator on standard error when it is a terminal."""
    from .pipeline import check

    if not (show and sys.stderr.isatty()):
        return check(drawing, settings)
    from rich.console import Console

    con = Console(stderr=True)
    names = {"read": "snapping joints", "snap": "building the model", "model": "checking stability",
             "stability": "solving load cases", "statics": "writing reports"}
    with con.status("reading the drawing") as status:
        return check(drawing, settings, progress=lambda stage: status.update(names.get(stage, stage)))


def _check_in_worker(args: argparse.Namespace, drawing: str) -> tuple[int, str, dict]:
    return check_one(args, drawing, True)


def run_check(args: argparse.Namespace) -> int:
    drawings = _expand(args.drawing)
    if not drawings:
        _err("no DXF drawings found in " + ", ".join(args.drawing))
        return EXIT_INPUT
    if len(drawings) == 1:
        code, text, row = check_one(args, drawings[0], False)
        stream = sys.stderr if args.json == "-" else sys.stdout
        stream.write(text)
        if "message" in row:
            _err(row["message"])
        return code
    if args.json == "-":
        _err("--json - takes one drawing; give a folder for several")
        return EXIT_INPUT
    for folder in (args.pdf, args.dxf, args.json):
        if folder:
            Path(folder).mkdir(parents=True, exist_ok=True)
    return _run_many(args, drawings)


def _run_many(args: argparse.Namespace, drawings: list[str]) -> int:
    """Several drawings: both cores, progress on standard error, a summary table."""
    from concurrent.futures import ProcessPoolExecutor

    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn
    from rich.table import Table
    from rich.text import Text

    err_console = Console(stderr=True)
    results: dict[str, tuple[int, str, dict]] = {}
    workers = min(len(drawings), max(1, min(2, os.cpu_count() or 1)))
    with Progress(
        TextColumn("checking"), BarColumn(), MofNCompleteColumn(), TimeElapsedColumn(),
        console=err_console, transient=True, disable=args.quiet or not err_console.is_terminal,
    ) as progress:
        task = progress.add_task("check", total=len(drawings))
        with ProcessPoolExecutor(max_workers=workers) as pool:
            futures = {pool.submit(_check_in_worker, args, d): d for d in drawings}
            from concurrent.futures import as_completed

            for fut in as_completed(futures):
                results[futures[fut]] = fut.result()
                progress.advance(task)
    worst = EXIT_OK
    table = Table(title=f"{len(drawings)} drawings", title_justify="left")
    for col in ("drawing", "status", "verdict", "errors", "warnings"):
        table.add_column(col)
    for d in drawings:
        code, text, row = results[d]
        worst = max(worst, code)
        if text and not args.quiet:
            sys.stdout.write(text + "\n")
        if "message" in row:
            _err(row["message"])
        # cells as Text: file names could hold rich markup such as "[bold]"
        table.add_row(*(Text(str(row[c])) for c in ("drawing", "status", "verdict", "errors", "warnings")))
    if not args.quiet:
        Console(highlight=False).print(table)
    return worst


def main(argv: list[str] | None = None) -> int:
    import logging

    # Each part's dense linear algebra is small: one BLAS thread is faster than two that
    # fight each other (measured: a 204 x 204 SVD 0.01 s vs 0.04-0.16 s on a busy 2-core
    # machine), and several drawings already run one process per core. The user's own
    # setting wins; this must happen before numpy is imported.
    for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
        os.environ.setdefault(var, "1")

    # the DXF library logs repairs to stderr; the reader reports them as findings instead
    ezdxf_log = logging.getLogger("ezdxf")
    ezdxf_log.addHandler(logging.NullHandler())
    ezdxf_log.propagate = False
    for stream in (sys.stdout, sys.stderr):  # file and layer names may not be valid UTF-8
        reconfigure = getattr(stream, "reconfigure", None)
        if reconfigure is not None:
            reconfigure(errors="backslashreplace")
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command == "check":
        # The DXF document and the model are millions of small objects that live until the
        # run ends; the cyclic garbage collector frees none of them but walks them again
        # at every threshold (measured at 100k members: about 1.5 s of 12 s CPU, for
        # +60 MB peak). Reference counting still frees everything that is dropped.
        import gc

        was_enabled = gc.isenabled()
        gc.disable()
        try:
            return run_check(args)
        finally:
            if was_enabled:  # main() may be called in-process (tests, tools)
                gc.enable()
    parser.print_help()
    return EXIT_INPUT
