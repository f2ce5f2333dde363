"""The command line: argument parsing, the only printing, and the exit codes.

Exit status: 0 no error findings; 1 error findings (a mechanism included);
2 the input could not be read, an option or the loads file is wrong, or an
internal error (reported in one line, never a traceback).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from . import __version__

EXIT_OK, EXIT_FINDINGS, EXIT_INPUT = 0, 1, 2

EPILOG = """\
examples:
  dxftruss check roof.dxf                       writes roof.check.pdf here, prints a summary
  dxftruss check roof.dxf --loads roof.toml --json roof.json --pdf roof.pdf --dxf roof.marked.dxf
  dxftruss check bridge.dxf --units m --snap 0.5mm --near-miss 20mm --layers "CHORD*" "WEB*"
  dxftruss check bridge.dxf --json -            JSON on standard output, summary on standard error

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
    c.add_argument("drawing", metavar="DRAWING.dxf", help="the DXF drawing to check (never modified)")
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
        "--layers", metavar="GLOB", nargs="+", action="extend", default=[], help="only these member layers, e.g. 'TRUSS*'"
    )
    c.add_argument("--page", choices=["A4", "A3", "letter", "tabloid"], default="A3", help="PDF page size (default A3)")
    c.add_argument("--quiet", action="store_true", help="print nothing but errors")
    return parser


def _err(msg: str) -> None:
    print(f"dxftruss: {msg}", file=sys.stderr)


def run_check(args: argparse.Namespace) -> int:
    from .errors import DxftrussError
    from .outputs import check_output_path, write_atomic
    from .pipeline import Settings, check

    drawing = args.drawing
    inputs = [drawing] + ([args.loads] if args.loads else [])
    pdf = args.pdf
    if not (args.pdf or args.dxf or args.json):
        pdf = Path(drawing).with_suffix("").name + ".check.pdf"
    try:
        for out, what in ((pdf, "PDF"), (args.dxf, "annotated DXF"), (args.json if args.json != "-" else None, "JSON")):
            if out:
                check_output_path(out, inputs, what)
        settings = Settings(
            snap=args.snap, near_miss=args.near_miss, units=args.units, layers=tuple(args.layers), loads=args.loads
        )
        result = check(drawing, settings)
        from .report.text import summary

        stream = sys.stderr if args.json == "-" else sys.stdout
        if not args.quiet:
            stream.write(summary(result))
        if args.json:
            from .report.json import to_json

            text = to_json(result)
            if args.json == "-":
                sys.stdout.write(text)
            else:
                write_atomic(args.json, lambda tmp: Path(tmp).write_text(text, encoding="utf-8"))
        if pdf:
            from .report.pdf import write_pdf

            write_atomic(pdf, lambda tmp: write_pdf(result, tmp, page=args.page))
        if args.dxf:
            from .report.dxf import write_dxf

            write_atomic(args.dxf, lambda tmp: write_dxf(result, tmp))
        if not args.quiet:
            written = [p for p in (args.json if args.json != "-" else None, pdf, args.dxf) if p]
            if written:
                stream.write("wrote " + ", ".join(written) + "\n")
    except DxftrussError as exc:
        _err(str(exc))
        return EXIT_INPUT
    except KeyboardInterrupt:
        _err("interrupted")
        return EXIT_INPUT
    except Exception as exc:  # the last line of defence: one line, never a traceback
        _err(f"{drawing}: internal error ({type(exc).__name__}: {exc}); please report it with the drawing")
        return EXIT_INPUT
    return EXIT_FINDINGS if result.has_errors else EXIT_OK


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command == "check":
        return run_check(args)
    parser.print_help()
    return EXIT_INPUT
