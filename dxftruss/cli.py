"""The command line: argument parsing, the only printing, and the exit codes.

Exit status (check): 0 no error findings; 1 error findings (a mechanism included);
2 the input could not be read, an option or the loads file is wrong, a report could
not be written, standard output was closed early, or an internal error (reported in
one line, never a traceback); 130 after Ctrl-C, 143 after SIGTERM. ``compare``: 0
compared and no new error finding, 1 the new revision has error findings the old did
not, 2 and the signals as for check.
"""

from __future__ import annotations

import argparse
import contextlib
import os
import sys
from pathlib import Path

from . import __version__
from .startup import check_library_settings, open_standard_streams, silence_stdout

EXIT_OK, EXIT_FINDINGS, EXIT_INPUT = 0, 1, 2

EPILOG = """\
examples:
  dxftruss check roof.dxf                       writes roof.check.pdf here, prints a summary
  dxftruss check roof.dxf --loads roof.toml --json roof.json --pdf roof.pdf --dxf roof.marked.dxf
  dxftruss check bridge.dxf --units m --snap 0.5mm --near-miss 20mm --layers "CHORD*" --layers "WEB*"
  dxftruss check bridge.dxf --json -            JSON on standard output, summary on standard error
  dxftruss check drawings/ --json reports/      every *.dxf in a folder, one report each, both cores
  dxftruss check roof.dxf --csv roof.cutlist.csv  the cut list as CSV (also a PDF page and in the JSON)

drawing conventions:
  members   LINE, LWPOLYLINE and POLYLINE on any layer except SUPPORT* and LOAD*
  supports  POINT, CIRCLE or block reference on SUPPORT-XY, SUPPORT-X or SUPPORT-Y
  loads     LINE on LOAD or LOAD-<case> pointing at its joint, labelled by the nearest
            TEXT/MTEXT on the same layer ("12.5 kN")

layers and layouts:
  layers that are off, frozen or not plotted are not read; --layers NAME (exactly) reads one
  model space is read; a paper-space layout when model space has no line work (--layout NAME)
  dxftruss layers DRAWING lists every layer, what it holds and what check does with it

exit status: 0 no errors, 1 error findings (e.g. a mechanism), 2 unreadable input, bad options,
             an output that cannot be written; 130 Ctrl-C, 143 SIGTERM
outputs:  only regular files are replaced; a symbolic link's target is written, the link kept
"""


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="dxftruss",
        description="Check a truss drawn as DXF line work: joints, stability, determinacy, "
        "zero-force members, member forces and reactions.",
    )
    parser.add_argument("--version", action="version", version=f"dxftruss {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="{check,compare,layers}")
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
    c.add_argument(
        "--csv",
        metavar="OUT.csv",
        help="cut list as CSV: per part the members cut alike, with count, length and end angles",
    )
    add_model_options(c)
    c.add_argument("--quiet", action="store_true", help="print nothing but errors")
    lay = sub.add_parser(
        "layers",
        help="list a drawing's layers and what check does with each",
        description="List every layer of a drawing: its state, the entities on it by type (block content "
        "counted once per placement, on the layer it is shown on) and what 'dxftruss check' does with it.",
    )
    lay.add_argument("drawing", metavar="DRAWING.dxf", help="a DXF drawing (never modified)")
    lay.add_argument(
        "--layers",
        metavar="GLOB",
        action="append",
        default=[],
        help="the --layers globs check would be given: shows which layers they leave out",
    )
    lay.add_argument("--layout", metavar="NAME", help=LAYOUT_HELP)
    lay.add_argument("--json", action="store_true", help="JSON on standard output instead of the table")
    lay.add_argument(
        "--max-file-size",
        metavar="MB",
        type=float,
        default=256,
        help="refuse drawings larger on disk than MB mebibytes (default 256; 0: no limit)",
    )
    cmp = sub.add_parser(
        "compare",
        help="compare two revisions of a drawing",
        description="Check two revisions of a truss drawing and report what changed: members added, removed "
        "or moved, supports and loads changed, findings fixed and new, member forces changed.",
        epilog=COMPARE_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    cmp.add_argument("old", metavar="OLD.dxf", help="the earlier revision (never modified)")
    cmp.add_argument("new", metavar="NEW.dxf", help="the later revision (never modified)")
    cmp.add_argument(
        "--loads", metavar="FILE.toml", help="loads file for both revisions (or OLD only with --new-loads)"
    )
    cmp.add_argument("--new-loads", metavar="FILE.toml", help="loads file for NEW.dxf when it is not the --loads file")
    cmp.add_argument(
        "--pdf",
        metavar="OUT.pdf",
        help="NEW drawing with the changes in revision clouds and a table of changes "
        "(default: <NEW name>.compare.pdf here)",
    )
    cmp.add_argument(
        "--json", metavar="OUT.json", help="JSON comparison (docs/compare.schema.json); '-' for standard output"
    )
    cmp.add_argument(
        "--force-change",
        metavar="CHANGE",
        default="1%",
        help="report member forces that changed by more than this: a percentage of the largest force of "
        "both revisions, or a force, e.g. '0.5 kN' (default 1%%)",
    )
    add_model_options(cmp)
    cmp.add_argument("--quiet", action="store_true", help="print nothing but errors")
    return parser


COMPARE_EPILOG = """\
examples:
  dxftruss compare shed_a.dxf shed_b.dxf --loads shed_a.toml --new-loads shed_b.toml --pdf shed.compare.pdf
  dxftruss compare old.dxf new.dxf --snap 0.5mm --force-change "0.2 kN" --json changes.json

matching: a joint of NEW within the snap tolerance of a joint of OLD is the same joint; a member
          with one end moved is moved, one with both ends moved is removed and added
exit status: 0 compared, no new error findings; 1 NEW has error findings OLD did not;
             2 unreadable input, bad options, an output that cannot be written
"""


def add_model_options(c: argparse.ArgumentParser) -> None:
    """The options that say how a drawing is read and modelled (check and compare share them)."""
    c.add_argument(
        "--snap", metavar="LENGTH", help="join endpoints closer than this, e.g. 0.5mm (default 1e-6 of the extent)"
    )
    c.add_argument(
        "--near-miss",
        metavar="LENGTH",
        help="report gaps up to this, e.g. 20mm (default 2%% of the median member length)",
    )
    c.add_argument("--units", choices=["mm", "cm", "m", "in", "ft"], help="drawing unit (overrides the header)")
    c.add_argument(
        "--layers",
        metavar="GLOB",
        action="append",
        default=[],
        help="only members on layers matching GLOB, e.g. 'TRUSS*'; repeat for more globs "
        "(a hidden layer is read only when named exactly)",
    )
    c.add_argument("--layout", metavar="NAME", help=LAYOUT_HELP)
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
    c.add_argument(
        "--max-file-size",
        metavar="MB",
        type=float,
        default=256,
        help="refuse drawings larger on disk than MB mebibytes before reading them (default 256; 0: no limit)",
    )
    c.add_argument("--page", choices=["A4", "A3", "letter", "tabloid"], default="A3", help="PDF page size (default A3)")
    tb = c.add_argument_group("title block (over the loads file's [report] table and the drawing's attributes)")
    for flag, key, what in (
        ("--project", "project", "project name"),
        ("--drawing-no", "drawing_no", "drawing number"),
        ("--revision", "revision", "revision of the drawing checked"),
        ("--checked-by", "checked_by", "name or initials of the checker"),
        ("--check-date", "check_date", "date of the check (default: the loads file, the drawing, then today)"),
    ):
        tb.add_argument(flag, dest=key, metavar="TEXT", help=what)


LAYOUT_HELP = (
    "read this layout (any case; 'Model' is model space); default: model space, or a paper-space layout "
    "when model space holds no line work"
)


def _err(msg: str) -> None:
    """One line on standard error, whatever the message holds (control characters escaped)."""
    from .escape import one_line

    line = one_line(" ".join(str(msg).split()))
    with contextlib.suppress(OSError, ValueError, AttributeError):  # standard error closed: nothing to tell
        print(f"dxftruss: {line}", file=sys.stderr, flush=True)


class Interrupted(BaseException):
    """SIGTERM, raised like Ctrl-C's KeyboardInterrupt so that every cleanup runs."""


def _expand(drawings: list[str]) -> tuple[list[str], bool]:
    """Drawings named on the command line; a folder stands for its *.dxf files.
    The flag says whether output options name folders (several drawings, or a folder)."""
    from .errors import InputError

    out: list[str] = []
    many = len(drawings) > 1
    for d in drawings:
        p = Path(d)
        try:
            is_dir = p.is_dir()
        except OSError as exc:
            raise InputError(f"{d}: cannot open ({exc.strerror or exc})") from None
        if is_dir:
            many = True
            try:
                out += sorted(str(f) for f in p.iterdir() if f.suffix.lower() == ".dxf" and f.is_file())
            except OSError as exc:
                raise InputError(f"{d}: cannot list the folder ({exc.strerror or exc})") from None
        else:
            out.append(d)
    seen: set[str] = set()
    unique = []
    for d in out:  # the same drawing twice is checked once
        key = os.path.realpath(d)
        if key not in seen:
            seen.add(key)
            unique.append(d)
    return unique, many


Outs = tuple[str | None, str | None, str | None, str | None]


def _outputs(args: argparse.Namespace, drawing: str, many: bool, common: str = "") -> Outs:
    """(pdf, dxf, json, csv) paths for one drawing. With several drawings (or a folder) an
    output option names a folder that receives <name>.check.<ext>, below it in the
    drawing's folder relative to the drawings' common folder (out/a/roof.check.json,
    out/b/roof.check.json); with no output option the PDFs go here, laid out the same."""
    stem = Path(drawing).with_suffix("").name
    if not many:
        pdf = args.pdf or (None if (args.dxf or args.json or args.csv) else stem + ".check.pdf")
        return pdf, args.dxf, args.json, args.csv
    rel = os.path.relpath(os.path.dirname(os.path.abspath(drawing)), common) if common else "."

    def inside(folder: str | None, ext: str) -> str | None:
        if not folder:
            return None
        return os.path.normpath(os.path.join(folder, rel, f"{stem}.check.{ext}"))

    pdf = inside(args.pdf or (None if (args.dxf or args.json or args.csv) else "."), "pdf")
    return pdf, inside(args.dxf, "dxf"), inside(args.json, "json"), _cutlist_name(inside(args.csv, "csv"))


def _cutlist_name(path: str | None) -> str | None:
    """<name>.check.csv in a folder of outputs is named <name>.cutlist.csv."""
    return path[: -len(".check.csv")] + ".cutlist.csv" if path and path.endswith(".check.csv") else path


def _plan(args: argparse.Namespace, drawings: list[str], many: bool) -> dict[str, Outs]:
    """Every drawing's output paths, refused before any work if two of them (or one and
    an input) are the same file, however spelt."""
    from .errors import ConfigError
    from .outputs import check_output_path

    common = os.path.commonpath([os.path.dirname(os.path.abspath(d)) for d in drawings]) if many else ""
    inputs = list(drawings) + ([args.loads] if args.loads else [])
    plan: dict[str, Outs] = {}
    owner: dict[str, str] = {}
    for d in drawings:
        outs = _outputs(args, d, many, common)
        plan[d] = outs
        for out, what in zip(outs, ("PDF", "annotated DXF", "JSON", "CSV cut list"), strict=True):
            if not out or out == "-":
                continue
            if many:
                Path(out).parent.mkdir(parents=True, exist_ok=True)
            target = str(check_output_path(out, inputs, what))
            key = os.path.normcase(os.path.realpath(target))
            if key in owner:
                raise ConfigError(
                    f"{out}: named twice as an output (also as {owner[key]}); give each report its own file"
                )
            owner[key] = out
    return plan


def check_one(args: argparse.Namespace, drawing: str, outs: Outs, many: bool = False) -> tuple[int, str, dict]:
    """Check one drawing and write its reports. Returns (exit status, printed text, row).

    All of a drawing's reports are written to temporaries first and renamed together at
    the end, so an interrupt or a failure never leaves old and new reports mixed."""
    row: dict = {"drawing": drawing, "status": "error", "verdict": "-", "errors": "-", "warnings": "-"}
    text = ""
    staged = None
    try:
        from .errors import DxftrussError
    except Exception as exc:  # noqa: BLE001 - an import that fails (a broken install, a library's settings file)
        row["message"] = f"cannot start ({type(exc).__name__}: {exc})"
        return EXIT_INPUT, text, row
    try:
        if args.loads:  # a large loads file is parsed on the other core from now on
            from . import loads_background

            loads_background.start_early(args.loads)
        from .escape import one_line
        from .outputs import OutputSet, check_output_path
        from .pipeline import Settings

        pdf, dxf, json_out, csv_out = outs
        inputs = [drawing] + ([args.loads] if args.loads else [])
        for out, what in (
            (pdf, "PDF"),
            (dxf, "annotated DXF"),
            (json_out if json_out != "-" else None, "JSON"),
            (csv_out, "CSV cut list"),
        ):
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
            max_file_mb=args.max_file_size or None,
            layout=args.layout,
            report=_title_options(args),
            # the PDF and the annotated DXF draw and copy the whole document
            stream_line_work=not (pdf or dxf),
        )
        result = _check_with_progress(drawing, settings, show=not args.quiet and not many)
        from .report.text import summary

        if not args.quiet:
            color = not many and sys.stdout is not None and sys.stdout.isatty() and args.json != "-"
            text += summary(result, color=color)
        staged = OutputSet()
        js = None
        zones: dict[int, list[tuple[int, str]]] = {}
        if pdf:  # first: the JSON report says where the PDF marks each finding
            from .report.pdf import write_pdf

            def pdf_writer(tmp: str) -> None:
                zones.update(write_pdf(result, tmp, page=args.page))

            staged.stage(pdf, pdf_writer, "PDF")
        if json_out:
            from .outputs import write_text_chunked
            from .report.json import json_chunks

            js = json_chunks(result, zones if pdf else None)
            if json_out != "-":
                # names from the drawing may hold undecodable bytes: escape, never fail
                staged.stage(
                    json_out,
                    lambda tmp: write_text_chunked(tmp, js),
                    "JSON",
                )
        if dxf:
            from .report.dxf import write_dxf

            staged.stage(dxf, lambda tmp: write_dxf(result, tmp), "annotated DXF")
        if csv_out:
            from .report.cutlist import cut_list_csv

            table = cut_list_csv(result)
            staged.stage(
                csv_out,
                lambda tmp: Path(tmp).write_text(table, encoding="utf-8", errors="backslashreplace", newline=""),
                "CSV cut list",
            )
        written = staged.commit()
        if json_out == "-" and js is not None:
            sys.stdout.writelines(js)
            sys.stdout.flush()
        if written and not args.quiet:
            text += "wrote " + ", ".join(one_line(p) for p in written) + "\n"
        from .findings import Severity

        row.update(
            status="findings" if result.has_errors else "ok",
            verdict=", ".join(st.verdict.value for st in result.stability) or "-",
            errors=str(sum(f.severity is Severity.ERROR for f in result.findings)),
            warnings=str(sum(f.severity is Severity.WARNING for f in result.findings)),
        )
        return (EXIT_FINDINGS if result.has_errors else EXIT_OK), text, row
    except BaseException as exc:
        if staged is not None:
            staged.discard()
        if isinstance(exc, DxftrussError):
            row["message"] = str(exc)
            return EXIT_INPUT, text, row
        if isinstance(exc, BrokenPipeError) or not isinstance(exc, Exception):
            raise  # a closed standard output, Ctrl-C, SIGTERM: main() says it in one line
        if isinstance(exc, OSError) and not os.environ.get("DXFTRUSS_DEBUG"):
            name = exc.filename if exc.filename is not None else drawing
            row["message"] = f"{name}: {exc.strerror or exc}"
            return EXIT_INPUT, text, row
        if os.environ.get("DXFTRUSS_DEBUG"):
            raise
        # the last line of defence: one line, never a traceback
        row["message"] = f"{drawing}: internal error ({type(exc).__name__}: {exc}); please report it with the drawing"
        return EXIT_INPUT, text, row
    finally:
        if args.loads:  # a child the check never took (it stopped before the loads)
            from . import loads_background

            loads_background.forget_early()


def _title_options(args: argparse.Namespace) -> tuple[tuple[str, str], ...]:
    """The title-block fields given as options, as (field, value) pairs."""
    pairs = []
    for key, field in (
        ("project", "project"),
        ("drawing_no", "drawing_no"),
        ("revision", "revision"),
        ("checked_by", "checked_by"),
        ("check_date", "date"),
    ):
        value = getattr(args, key, None)
        if value is not None:
            pairs.append((field, value))
    return tuple(pairs)


def _check_with_progress(drawing: str, settings, *, show: bool):  # type: ignore[no-untyped-def]
    """check() with a one-line stage indicator on standard error when it is a terminal."""
    from .pipeline import check

    if not (show and sys.stderr.isatty()):
        return check(drawing, settings)
    from rich.console import Console

    con = Console(stderr=True)
    names = {
        "read": "snapping joints",
        "snap": "building the model",
        "model": "checking stability",
        "stability": "solving load cases",
        "statics": "writing reports",
    }
    with con.status("reading the drawing") as status:
        return check(drawing, settings, progress=lambda stage: status.update(names.get(stage, stage)))


def _worker_init(run_id: str) -> None:
    """A batch worker: Ctrl-C goes to the parent, which stops the workers itself;
    SIGTERM (the parent's stop) ends the worker at once, its temporaries named for
    the parent to remove."""
    import signal

    from . import outputs

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    outputs.RUN_ID = run_id


def _check_in_worker(args: argparse.Namespace, drawing: str, outs: Outs) -> tuple[int, str, dict]:
    return check_one(args, drawing, outs, True)


def run_check(args: argparse.Namespace) -> int:
    from .errors import DxftrussError

    try:
        if "ezdxf" not in sys.modules:
            check_library_settings()
        drawings, many = _expand(args.drawing)
        if not drawings:
            _err("no DXF drawings found in " + ", ".join(args.drawing))
            return EXIT_INPUT
        if many and args.json == "-":
            _err("--json - takes one drawing; give a folder for several")
            return EXIT_INPUT
        if many:
            for folder, opt in ((args.pdf, "--pdf"), (args.dxf, "--dxf"), (args.json, "--json"), (args.csv, "--csv")):
                if folder:
                    try:
                        Path(folder).mkdir(parents=True, exist_ok=True)
                    except OSError as exc:
                        why = "exists and is not a folder" if isinstance(exc, FileExistsError) else exc.strerror
                        _err(f"{folder}: cannot use it as the {opt} folder ({why})")
                        return EXIT_INPUT
        plan = _plan(args, drawings, many)
    except DxftrussError as exc:
        _err(str(exc))
        return EXIT_INPUT
    except OSError as exc:
        _err(f"{exc.filename if exc.filename is not None else ''}: {exc.strerror or exc}")
        return EXIT_INPUT
    if not many:
        d = drawings[0]
        code, text, row = check_one(args, d, plan[d], False)
        stream = sys.stderr if args.json == "-" else sys.stdout
        stream.write(text)
        stream.flush()
        if "message" in row:
            _err(row["message"])
        return code
    return _run_many(args, drawings, plan)


def _stop_pool(pool, plan: dict[str, Outs]) -> None:  # type: ignore[no-untyped-def]
    """Stop a batch at once: cancel what has not started, end the workers, and remove
    the temporaries they leave in the output folders."""
    import multiprocessing

    from .outputs import RUN_ID, remove_run_temporaries

    procs = list(getattr(pool, "_processes", {}).values()) or multiprocessing.active_children()
    pool.shutdown(wait=False, cancel_futures=True)
    for p in procs:
        with contextlib.suppress(Exception):  # already gone
            p.terminate()
    for p in procs:
        p.join(timeout=10)
    # the pool's manager thread closes its wake-up pipe as it ends; the interpreter's
    # exit hook writes to that pipe if the thread still runs, and the race prints a
    # traceback after our one line: wait for the thread first
    manager = getattr(pool, "_executor_manager_thread", None)
    if manager is not None:
        with contextlib.suppress(Exception):
            manager.join(timeout=10)
    folders = {Path(os.path.dirname(os.path.realpath(o))) for outs in plan.values() for o in outs if o and o != "-"}
    remove_run_temporaries(folders, RUN_ID)


def _run_many(args: argparse.Namespace, drawings: list[str], plan: dict[str, Outs]) -> int:
    """Several drawings: both cores, progress on standard error, a summary table."""
    from concurrent.futures import ProcessPoolExecutor, as_completed

    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn
    from rich.table import Table
    from rich.text import Text

    from .escape import one_line
    from .outputs import RUN_ID

    err_console = Console(stderr=True)
    results: dict[str, tuple[int, str, dict]] = {}
    workers = min(len(drawings), max(1, min(2, os.cpu_count() or 1)))
    with Progress(
        TextColumn("checking"),
        BarColumn(),
        MofNCompleteColumn(),
        TimeElapsedColumn(),
        console=err_console,
        transient=True,
        disable=args.quiet or not err_console.is_terminal,
    ) as progress:
        task = progress.add_task("check", total=len(drawings))
        pool = ProcessPoolExecutor(max_workers=workers, initializer=_worker_init, initargs=(RUN_ID,))
        try:
            futures = {pool.submit(_check_in_worker, args, d, plan[d]): d for d in drawings}
            for fut in as_completed(futures):
                d = futures[fut]
                try:
                    results[d] = fut.result()
                except Exception as exc:  # noqa: BLE001 - a worker that died (out of memory, killed)
                    row = {
                        "drawing": d,
                        "status": "error",
                        "verdict": "-",
                        "errors": "-",
                        "warnings": "-",
                        "message": f"{d}: the check stopped ({type(exc).__name__}: {exc})",
                    }
                    results[d] = (EXIT_INPUT, "", row)
                progress.advance(task)
        except BaseException:
            _stop_pool(pool, plan)
            raise
        pool.shutdown(wait=True)
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
        # cells as Text (file names could hold rich markup such as "[bold]"), escaped
        # (they could hold control characters)
        table.add_row(*(Text(one_line(row[c])) for c in ("drawing", "status", "verdict", "errors", "warnings")))
    if not args.quiet:
        Console(highlight=False).print(table)
    sys.stdout.flush()
    return worst


def run_layers(args: argparse.Namespace) -> int:
    """``dxftruss layers``: the inventory as a table or JSON on standard output."""
    from .errors import DxftrussError

    try:
        if "ezdxf" not in sys.modules:
            check_library_settings()
        from .inventory import layer_inventory
        from .read import read_drawing

        size = args.max_file_size
        linework = read_drawing(
            args.drawing,
            layers=tuple(args.layers),
            layout=args.layout,
            max_bytes=int(size * 2**20) if size else None,
        )
        entries = layer_inventory(linework, tuple(args.layers))
    except DxftrussError as exc:
        _err(str(exc))
        return EXIT_INPUT
    except OSError as exc:
        _err(f"{exc.filename if exc.filename is not None else args.drawing}: {exc.strerror or exc}")
        return EXIT_INPUT
    from .report.layers import layers_json, layers_text

    text = layers_json(args.drawing, linework, entries) if args.json else layers_text(args.drawing, linework, entries)
    sys.stdout.write(text)
    sys.stdout.flush()
    return EXIT_OK


def _settings(args: argparse.Namespace, loads: str | None):  # type: ignore[no-untyped-def]
    from .pipeline import Settings

    return Settings(
        snap=args.snap,
        near_miss=args.near_miss,
        units=args.units,
        layers=tuple(args.layers),
        loads=loads,
        max_parts=args.max_parts,
        max_members=args.max_members,
        max_file_mb=args.max_file_size or None,
        layout=args.layout,
    )


def run_compare(args: argparse.Namespace) -> int:
    """``dxftruss compare``: check both revisions, compare, write the PDF and JSON."""
    from .errors import DxftrussError

    staged = None
    try:
        if "ezdxf" not in sys.modules:
            check_library_settings()
        from .compare import compare, parse_force_change
        from .escape import one_line
        from .outputs import OutputSet, check_output_path
        from .pipeline import check

        new_loads = args.new_loads or args.loads
        inputs = [args.old, args.new] + [f for f in (args.loads, args.new_loads) if f]
        pdf = args.pdf or (None if args.json else Path(args.new).with_suffix("").name + ".compare.pdf")
        json_out = args.json
        for out, what in ((pdf, "PDF"), (json_out if json_out != "-" else None, "JSON")):
            if out:
                check_output_path(out, inputs, what)
        if pdf and json_out and json_out != "-" and os.path.realpath(pdf) == os.path.realpath(json_out):
            _err(f"{pdf}: named twice as an output; give each report its own file")
            return EXIT_INPUT
        old = check(args.old, _settings(args, args.loads))
        new = check(args.new, _settings(args, new_loads))
        threshold = parse_force_change(args.force_change, new.truss.force_unit)
        cmp = compare(old, new, threshold=threshold)
        from .report.compare import compare_json, compare_text

        staged = OutputSet()
        js = compare_json(cmp) if json_out else None
        if json_out and json_out != "-":
            text_js = js or ""
            staged.stage(
                json_out,
                lambda tmp: Path(tmp).write_text(text_js, encoding="utf-8", errors="backslashreplace"),
                "JSON",
            )
        if pdf:
            from .report.pdf.compare import write_compare_pdf

            staged.stage(pdf, lambda tmp: write_compare_pdf(cmp, tmp, page=args.page), "PDF")
        written = staged.commit()
        out_stream = sys.stderr if json_out == "-" else sys.stdout
        if not args.quiet:
            out_stream.write(compare_text(cmp))
            if written:
                out_stream.write("wrote " + ", ".join(one_line(p) for p in written) + "\n")
            out_stream.flush()
        if json_out == "-" and js is not None:
            sys.stdout.write(js)
            sys.stdout.flush()
        return EXIT_FINDINGS if cmp.new_errors else EXIT_OK
    except DxftrussError as exc:
        if staged is not None:
            staged.discard()
        _err(str(exc))
        return EXIT_INPUT
    except OSError as exc:
        if staged is not None:
            staged.discard()
        if isinstance(exc, BrokenPipeError):
            raise
        _err(f"{exc.filename if exc.filename is not None else args.new}: {exc.strerror or exc}")
        return EXIT_INPUT


def _run_guarded(args: argparse.Namespace) -> int:
    """run_check with the interrupts and a closed pipe turned into one line and an exit
    status: Ctrl-C 130, SIGTERM 143 (128 + the signal, the shell's convention), closed
    standard output 2; never a traceback, never a temporary left behind."""
    import signal

    from .outputs import remove_live_temporaries

    def on_term(signum, frame):  # type: ignore[no-untyped-def]
        raise Interrupted()

    try:
        previous = signal.signal(signal.SIGTERM, on_term)
    except ValueError:  # not the main thread (main() called from a tool)
        previous = None
    try:
        if args.command == "compare":
            return run_compare(args)
        return run_layers(args) if args.command == "layers" else run_check(args)
    except KeyboardInterrupt:
        remove_live_temporaries()
        _err("interrupted (Ctrl-C); no report was left half-written")
        return 130
    except Interrupted:
        remove_live_temporaries()
        _err("stopped (SIGTERM); no report was left half-written")
        return 143
    except BrokenPipeError:
        remove_live_temporaries()
        silence_stdout()
        _err("standard output was closed before everything was written")
        return EXIT_INPUT
    except Exception as exc:  # the last line of defence: one line, never a traceback
        if os.environ.get("DXFTRUSS_DEBUG"):
            raise
        remove_live_temporaries()
        if isinstance(exc, OSError):
            _err(f"{exc.filename if exc.filename is not None else 'dxftruss'}: {exc.strerror or exc}")
        else:
            _err(f"internal error ({type(exc).__name__}: {exc}); please report it")
        return EXIT_INPUT
    finally:
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)


def main(argv: list[str] | None = None) -> int:
    """The command line; every interrupt before the run is guarded is one line too."""
    try:
        return _main(argv)
    except KeyboardInterrupt:
        _err("interrupted (Ctrl-C)")
        return 130


def _main(argv: list[str] | None) -> int:
    import logging

    open_standard_streams()

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
    if args.command in ("check", "layers", "compare"):
        # the run's policy (no cyclic gc, one BLAS thread: dxftruss.pipeline.run_policy)
        # covers the reports too; check() sets the same policy for library use
        import gc

        from .policy import run_policy

        with run_policy():
            try:
                return _run_guarded(args)
            finally:
                # the process ends next: the collector need not walk the run's millions
                # of objects once more, neither when run_policy enables it again (every
                # object made during the run is still in its youngest generation: about
                # 0.4 s at 100k members) nor at exit (what is left is freed by the exit
                # itself). Frozen while it is still paused.
                gc.freeze()
    parser.print_help()
    return EXIT_INPUT
