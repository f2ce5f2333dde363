"""Opening a DXF file and what the opening tells about it.

The strict reader first; the recovery reader only for a text file that looks like DXF
and that the strict reader refuses (binary DXF has no recovery). Before either, the
size limit and, for ASCII files, a raw count of records (group code 0 lines) against
the entity limit. The DXF library's warnings are collected, not printed. After the
walk, the audit and the warnings become the ``recovered-file`` finding, INSERTs the
recovery audit removed become one ``unsupported-geometry`` finding, and the header
gives the unit (``$INSUNITS``) and the names DXF cannot store.
"""

from __future__ import annotations

import logging
import re
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

from ..errors import InputError, LimitError
from ..findings import Code, Finding
from .boundary import _ENTITY_FAILURES, _one_line
from .stream import Streamed, read_streamed

#: how many auditor messages a recovered-file finding carries
_MAX_AUDIT_MESSAGES = 20


class _LogCollector(logging.Handler):
    """Collects the DXF library's warnings (repairs it made while loading) instead of
    letting Python print them: stages do not print."""

    def __init__(self) -> None:
        super().__init__(logging.WARNING)
        self.messages: list[str] = []

    def emit(self, record: logging.LogRecord) -> None:
        try:
            self.messages.append(_one_line(record.getMessage(), 200))
        except Exception:  # noqa: BLE001 - a broken log record must not break reading
            self.messages.append(_one_line(record.msg, 200))


@contextmanager
def _collect_library_warnings() -> Iterator[_LogCollector]:
    """Route the ``ezdxf`` logger into a collector for the duration (restored after)."""
    logger = logging.getLogger("ezdxf")
    collector = _LogCollector()
    propagate = logger.propagate
    logger.addHandler(collector)
    logger.propagate = False
    try:
        yield collector
    finally:
        logger.removeHandler(collector)
        logger.propagate = propagate


def _load(
    path: Path, *, max_bytes: int | None = None, max_records: int | None = None, stream: bool = False
) -> tuple[Any, Any, bool, Streamed | None]:
    """Open ``path`` with ezdxf: (doc, auditor, recovered, streamed). Raises InputError.

    With ``stream``, an ASCII file is first read with the streaming reader
    (``stream.py``): ``streamed`` then holds model space as the walk reads it and ``doc``
    is the library's document of the rest of the file; None when the stream left the
    file to the library reader (then ``doc`` is the whole file, as without ``stream``).

    ``auditor`` is the recovery reader's audit when it was needed, else None: a file
    the strict reader accepts is read as written and audited afterwards (the audit
    deletes entities it cannot repair, e.g. LINEs with a conflicting handle, which a
    CAD program would still show).

    This is the boundary to the DXF library: any exception it raises while loading a
    bad file (DXFStructureError, ValueError, IndexError, UnicodeError ... - verified to
    vary with the damage) is turned into one InputError line, so ``except Exception``
    is deliberate here and only here.
    """
    import ezdxf
    from ezdxf import recover
    from ezdxf.lldxf.validator import is_binary_dxf_file, is_dwg_file, is_dxf_file

    name = str(path)

    def why(exc: BaseException, limit: int = 200) -> str:
        return f"{type(exc).__name__}: {_one_line(str(exc).replace(name, 'file'), limit)}"

    if not path.exists():
        raise InputError(f"{name}: no such file")
    if path.is_dir():
        raise InputError(f"{name}: is a directory, not a DXF file")
    try:
        size = path.stat().st_size
        if size == 0:
            raise InputError(f"{name}: the file is empty")
        if max_bytes is not None and size > max_bytes:
            raise LimitError(
                f"{name}: the file is {size / 2**20:,.0f} MiB, more than the limit of {max_bytes / 2**20:,.0f} MiB; "
                "raise it with --max-file-size if the drawing is genuine"
            )
        if is_dwg_file(name):
            raise InputError(f"{name}: is a DWG file; dxftruss reads DXF only - save or export the drawing as DXF")
        binary = is_binary_dxf_file(name)
    except OSError as exc:
        raise InputError(f"{name}: cannot open the file ({_one_line(exc.strerror or exc)})") from None

    if max_records is not None and not binary:
        records = _count_records(path)
        if records > max_records:
            raise LimitError(
                f"{name}: the file holds {records:,} DXF records, more than the limit of {max_records:,} entities; "
                "entity limit reached before reading; raise max_entities if the drawing is genuine"
            )

    if binary:  # the recovery reader cannot read binary DXF (docs/methods.md, Library behaviour)
        try:
            doc = ezdxf.readfile(name)
        except Exception as exc:  # noqa: BLE001 - library boundary, see docstring
            raise InputError(f"{name}: damaged binary DXF, cannot be read ({why(exc)})") from None
        return doc, None, False, None

    if stream:
        streamed = read_streamed(path)
        if streamed is not None:
            return streamed.doc, None, False, streamed

    try:
        doc = ezdxf.readfile(name)
    except Exception as first:  # noqa: BLE001 - library boundary, see docstring
        head = _head(path)
        if head.startswith(b"AutoCAD Binary DXF"):
            raise InputError(f"{name}: damaged binary DXF (its header line is broken), cannot be read") from None
        # the recovery reader accepts almost any text, so only DXF-looking files go to it
        if not _SECTION_LINE.search(head) and not _is_dxf(name, is_dxf_file):
            raise InputError(f"{name}: not a DXF file (no DXF section found)") from None
        try:
            doc, auditor = recover.readfile(name)
        except Exception as second:  # noqa: BLE001 - library boundary, see docstring
            raise InputError(
                f"{name}: damaged beyond recovery ({why(first, 120)}; recovery reader: {why(second, 120)})"
            ) from None
        return doc, auditor, True, None
    return doc, None, False, None


def _audit_after_reading(doc: Any) -> tuple[Any, str | None]:
    """Run the DXF audit on a directly read document: (auditor, failure text)."""
    try:
        return doc.audit(), None
    except Exception as exc:  # noqa: BLE001 - library boundary, see _load
        return None, f"{type(exc).__name__}: {_one_line(exc, 200)}"


_SECTION_LINE = re.compile(rb"(?mi)^[ \t]*SECTION[ \t]*\r?$")

#: a group code 0 line (start of a record: entity, table entry, object) in ASCII DXF
_RECORD_START = re.compile(rb"\n[ \t]*0[ \t]*\r?\n[ \t]*[A-Za-z_]")


def _count_records(path: Path, chunk: int = 1 << 24) -> int:
    """Records (group code 0 lines) in an ASCII DXF, counted over the raw bytes before
    the DXF library builds any object: an upper bound of the entities the file holds,
    so a limit can refuse a huge drawing at once. About 0.3 s per 100 MB."""
    n = 0
    tail = b""
    try:
        with open(path, "rb") as fp:
            while True:
                block = fp.read(chunk)
                if not block:
                    break
                data = tail + block
                n += len(_RECORD_START.findall(data))
                # keep the last partial line(s) for the next block, counted once
                cut = data.rfind(b"\n", 0, max(0, len(data) - 16))
                if cut > 0:
                    n -= len(_RECORD_START.findall(data[cut:]))
                    tail = data[cut:]
                else:
                    tail = b""
    except OSError:
        return 0
    return n


def _is_dxf(name: str, is_dxf_file: Any) -> bool:
    try:
        return bool(is_dxf_file(name))
    except Exception:  # noqa: BLE001 - library boundary: a sniffing failure means "no"
        return False


def _head(path: Path, n: int = 65536) -> bytes:
    try:
        with open(path, "rb") as fp:
            return fp.read(n)
    except OSError:
        return b""


_REMOVED = re.compile(r"^(Removed|Deleted) entity")


def _audit_counts(auditor: Any) -> tuple[int, int, int, list[str]]:
    """(fixes, unfixed errors, entities removed, messages - removals first)."""
    fixes = list(getattr(auditor, "fixes", ()) or ())
    errors = list(getattr(auditor, "errors", ()) or ())
    texts = [_one_line(getattr(e, "message", e), 200) for e in fixes + errors]
    removed = [t for t in texts if _REMOVED.match(t)]
    others = [t for t in texts if not _REMOVED.match(t)]
    return len(fixes), len(errors), len(removed), (removed + others)[:_MAX_AUDIT_MESSAGES]


def _repair_finding(
    auditor: Any,
    log_messages: list[str],
    *,
    recovered: bool,
    audit_failure: str | None,
    origin_lines: int,
    msp_entities: int,
) -> Finding | None:
    """The ``recovered-file`` finding: what the recovery reader, the audit and the
    loader found or repaired, and whether the geometry may be wrong."""
    n_fixes, n_errors, n_removed, messages = _audit_counts(auditor)
    if not (recovered or n_fixes or log_messages or audit_failure):
        return None
    data: dict[str, Any] = {
        "fixes": n_fixes,
        "errors": n_errors,
        "messages": (messages + log_messages)[:_MAX_AUDIT_MESSAGES],
    }
    if recovered:
        data["removed_entities"] = n_removed
        msg = (
            f"the file is damaged and was read with the recovery reader ({n_fixes} fixes, {n_errors} unfixed "
            f"errors, {len(log_messages)} reader warnings"
            + (f", {n_removed} entities removed" if n_removed else "")
            + "); the geometry may be wrong: compare the result with the drawing"
        )
    else:
        msg = (
            f"the file has defects ({n_fixes} problems the DXF audit would repair, {n_errors} it cannot, "
            f"{len(log_messages)} reader warnings); the line work was read as written"
        )
        if audit_failure:
            data["audit_failure"] = audit_failure
            msg += f"; the DXF audit itself failed ({audit_failure})"
    if origin_lines:
        data["origin_lines"] = origin_lines
        msg += (
            f"; {origin_lines} LINE{'s' if origin_lines != 1 else ''} lie exactly at (0,0)-(0,0), typical of "
            "a cut-off file: the geometry may be wrong"
        )
    if recovered and msp_entities == 0:
        msg += "; no entities came back from model space (the file may be cut off)"
    return Finding(Code.RECOVERED_FILE, msg, data=data)


_REMOVED_INSERT = re.compile(r"INSERT\(#([0-9A-Fa-f]+)\)")


def _removed_block_references(auditor: Any) -> Finding | None:
    """INSERTs the audit deleted because their block is not defined (it leaves no
    entity behind, only the message), as one ``unsupported-geometry`` finding."""
    from ezdxf.audit import AuditError

    codes = {int(AuditError.UNDEFINED_BLOCK), int(AuditError.UNDEFINED_BLOCK_NAME)}
    handles = []
    for fix in getattr(auditor, "fixes", ()) or ():
        if getattr(fix, "code", None) in codes:
            m = _REMOVED_INSERT.search(str(getattr(fix, "message", "")))
            handles.append(m.group(1) if m else "")
    if not handles:
        return None
    n = len(handles)
    return Finding(
        Code.UNSUPPORTED_GEOMETRY,
        f"{n} block reference{'s' if n != 1 else ''} named a block that is not defined in the file "
        f"and {'were' if n != 1 else 'was'} removed on reading; {'their' if n != 1 else 'its'} content is missing",
        data={"reason": "missing-block", "count": n, "handles": handles[:20]},
    )


def _illegal_names(doc: Any, roles: dict[str, Any]) -> tuple[tuple[str, str, str], ...]:
    """Layer and block names the annotated DXF must write differently (see LineWork)."""
    from ..escape import legal_names

    try:
        layers = {str(layer.dxf.name) for layer in doc.layers} | set(roles)
        blocks = {str(br.dxf.name) for br in doc.block_records}
    except _ENTITY_FAILURES:
        return ()
    out = [("layer", a, b) for a, b in legal_names(layers).items()]
    out += [("block", a, b) for a, b in legal_names(blocks).items()]
    return tuple(out)


def _header_units(doc: Any) -> int | None:
    """The header's ``$INSUNITS`` code, None when the header has none (R12)."""
    try:
        if "$INSUNITS" not in doc.header:
            return None
        return int(doc.header["$INSUNITS"])
    except (TypeError, ValueError, AttributeError, KeyError):
        return None
