"""Names and text from a file, made safe to show and to write back.

Glossary:
    shown text     what reaches a terminal or a one-line error: every character that
                   could move the cursor, change colours, reorder the line or hide
                   itself is written visibly as a backslash escape (``\\x1b``,
                   ``\\u202e``), so a drawing cannot overwrite the verdict line.
    DXF name       a layer or block name the annotated DXF may carry: DXF forbids the
                   characters ``<>/\\":;?*|=`` and control characters in table names;
                   :func:`dxf_name` maps a name to a legal one (each forbidden character
                   becomes ``_``) and the report lists every name it changed.
    CSV cell       a cell of the cut-list CSV: shown text, and a cell starting with
                   ``=``, ``+``, ``-`` or ``@`` gets a leading ``'`` (:func:`csv_cell`)
                   so a spreadsheet shows it as text and never runs it as a formula.

One function per job; every printer in the command line and every report that writes
names from the drawing goes through them.
"""

from __future__ import annotations

import re
import unicodedata

#: characters that change how a line is shown without being printed themselves:
#: bidirectional embeddings, overrides and isolates, marks, and zero-width characters
_INVISIBLE = frozenset(
    "\u061c\u200b\u200c\u200d\u200e\u200f\u202a\u202b\u202c\u202d\u202e\u2060\u2066\u2067\u2068\u2069\ufeff"
)


def _escape_char(ch: str) -> str:
    o = ord(ch)
    if o < 0x100:
        return f"\\x{o:02x}"
    if o < 0x10000:
        return f"\\u{o:04x}"
    return f"\\U{o:08x}"


def _needs_escape(ch: str) -> bool:
    o = ord(ch)
    if o < 0x20 or 0x7F <= o < 0xA0:  # C0, DEL, C1 (ESC, CSI, CR, LF, BEL ...)
        return True
    if 0xD800 <= o < 0xE000:  # lone surrogates: bytes that were not valid UTF-8
        return True
    if ch in _INVISIBLE:
        return True
    cat = unicodedata.category(ch)
    return cat in ("Zl", "Zp", "Cs", "Co") or (cat == "Cf" and o != 0xAD)


def shown(text: object) -> str:
    """``text`` with every control, format and bidi character written as an escape.

    >>> shown("ROOF\\x1b[2J")
    'ROOF\\\\x1b[2J'
    """
    s = str(text)
    if s.isprintable() and not any(c in _INVISIBLE for c in s):
        return s
    out = []
    for ch in s:
        if _needs_escape(ch):
            if 0xDC80 <= ord(ch) <= 0xDCFF:  # surrogateescape of an undecodable byte
                out.append(f"\\x{ord(ch) - 0xDC00:02x}")
            else:
                out.append(_escape_char(ch))
        else:
            out.append(ch)
    return "".join(out)


def one_line(text: object, limit: int | None = None) -> str:
    """:func:`shown` with runs of white space as one space, optionally cut to ``limit``."""
    s = " ".join(str(text).split(" "))
    s = shown(s)
    s = re.sub(r" {2,}", " ", s).strip()
    if limit is not None and len(s) > limit:
        s = s[: limit - 3] + "..."
    return s


#: characters DXF forbids in table names (layers, blocks), besides control characters
DXF_FORBIDDEN = frozenset('<>/\\":;?*|=`')


def dxf_name(name: str) -> str:
    """A legal DXF table name for ``name``: forbidden and control characters become ``_``.

    A leading ``*`` is kept: it marks the anonymous blocks (``*Model_Space``, ``*U12``)."""
    head, rest = ("*", name[1:]) if name.startswith("*") else ("", name)
    if not any(c in DXF_FORBIDDEN or _needs_escape(c) for c in rest):
        return name
    s = "".join("_" if (c in DXF_FORBIDDEN or _needs_escape(c)) else c for c in rest)
    return (head + s) or "_"


def is_dxf_name(name: str) -> bool:
    """True if ``name`` needs no mapping to be written as a DXF table name."""
    return dxf_name(name) == name


def legal_names(names: list[str] | tuple[str, ...] | set[str], *, taken: set[str] | None = None) -> dict[str, str]:
    """``{name: legal name}`` for every name of ``names`` that DXF cannot store.

    Table names are case-insensitive in DXF, so a mapped name that would collide with
    another name (given or in ``taken``, any case) gets a numbered suffix ``-2``, ``-3``
    ... Deterministic: the names are mapped in sorted order."""
    used = {n.upper() for n in names if is_dxf_name(n)} | {n.upper() for n in (taken or ())}
    out: dict[str, str] = {}
    for n in sorted(set(names)):
        if is_dxf_name(n):
            continue
        base = dxf_name(n)
        new, k = base, 2
        while new.upper() in used:
            new = f"{base}-{k}"
            k += 1
        used.add(new.upper())
        out[n] = new
    return out


#: first characters that make a spreadsheet read a cell as a formula
CSV_FORMULA_START = frozenset("=+-@")


def csv_cell(value: object) -> str:
    """A CSV cell a spreadsheet shows as text: :func:`shown` of ``value`` (control and
    bidi characters as visible escapes, so a tab or carriage return cannot start a
    cell either), and a cell that then starts with ``=``, ``+``, ``-`` or ``@`` gets a
    leading ``'`` so it is never run as a formula. The cut list writes no negative
    numbers, so no number is changed by this.

    >>> csv_cell("=HYPERLINK(1)")
    "'=HYPERLINK(1)"
    """
    s = shown(value)
    return "'" + s if s[:1] in CSV_FORMULA_START else s
