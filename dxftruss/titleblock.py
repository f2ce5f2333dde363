"""The report's title block: project, drawing number, revision, checked by and date.

Each field comes from the first of these that gives it, and the report says which:
    option      the command line (``--project``, ``--drawing-no``, ``--revision``,
                ``--checked-by``, ``--check-date``) or ``Settings.report``
    loads file  the ``[report]`` table of the loads file
    drawing     an attribute (ATTRIB) of a block reference on the sheet whose tag is
                one of the recognised tags of the field (``TAGS``), e.g. a title block
                drawn as a block with PROJECT, DWG_NO and REV attributes
A field none of them gives is left empty ("not given"); the date then is the date of
the report. Tags are matched in any case, with spaces, dots and hyphens read as ``_``.
A tag that two block references give different values is not used (the report says
the values differ): which of them is the sheet's own title block is not clear.
"""

from __future__ import annotations

import datetime
import os
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

#: the fields in the order the title block shows them, with their printed names
FIELDS: tuple[tuple[str, str], ...] = (
    ("project", "project"),
    ("drawing_no", "drawing no."),
    ("revision", "revision"),
    ("checked_by", "checked by"),
    ("date", "date"),
)
FIELD_NAMES = tuple(k for k, _ in FIELDS)

#: the attribute tags read as each field (after upper-casing and writing " ", ".", "-" as "_")
TAGS: dict[str, tuple[str, ...]] = {
    "project": ("PROJECT", "PROJECT_NAME", "PROJECT_TITLE", "JOB", "JOB_NAME"),
    "drawing_no": ("DWG_NO", "DWGNO", "DRAWING_NO", "DRAWING_NUMBER", "DWG_NUMBER", "DRG_NO", "SHEET_NO"),
    "revision": ("REV", "REVISION", "REV_NO"),
    "checked_by": ("CHECKED", "CHECKED_BY", "CHK", "CHKD", "CHECKER"),
    "date": ("DATE", "CHECK_DATE", "CHECKED_DATE"),
}
_TAG_FIELD = {tag: name for name, tags in TAGS.items() for tag in tags}

#: longest value kept of one field (characters); a longer value is cut with an ellipsis
MAX_VALUE = 120


@dataclass(frozen=True)
class TitleField:
    """One field: its key, value ("" when not given) and where it came from ("option",
    "loads file", "drawing", "report date" or "not given"); ``note`` says why a drawn
    value was not used, when one was not."""

    key: str
    value: str
    source: str
    note: str = ""

    @property
    def label(self) -> str:
        return dict(FIELDS)[self.key]


@dataclass(frozen=True)
class TitleBlock:
    fields: tuple[TitleField, ...]

    def get(self, key: str) -> TitleField:
        return next(f for f in self.fields if f.key == key)

    def value(self, key: str) -> str:
        return self.get(key).value


def report_date() -> str:
    """The date of the report: ``SOURCE_DATE_EPOCH`` when that is set (reproducible
    builds), else today, as YYYY-MM-DD."""
    sde = os.environ.get("SOURCE_DATE_EPOCH", "")
    if sde.isdigit():
        return datetime.datetime.fromtimestamp(int(sde), tz=datetime.UTC).date().isoformat()
    return datetime.date.today().isoformat()


def _norm_tag(tag: str) -> str:
    return re.sub(r"[\s.\-]+", "_", tag.strip().upper())


def _clean(value: object) -> str:
    text = " ".join(str(value).split())
    return text if len(text) <= MAX_VALUE else text[: MAX_VALUE - 1] + "\u2026"


def drawn_values(document: Any) -> tuple[dict[str, str], dict[str, str]]:
    """The fields the sheet's block attributes give: ({field: value}, {field: note}).

    Every INSERT of model space and of the paper-space layouts is looked at; a field
    whose recognised tags give two different non-empty values is left out, with a note."""
    if document is None:
        return {}, {}
    found: dict[str, set[str]] = {}
    try:
        layouts = list(document.layouts)
    except Exception:  # noqa: BLE001 - a damaged document: no drawn title block
        return {}, {}
    for layout in layouts:
        try:
            inserts = list(layout.query("INSERT"))
        except Exception:  # noqa: BLE001
            continue
        for ins in inserts:
            for attrib in getattr(ins, "attribs", ()):
                try:
                    tag, text = str(attrib.dxf.tag), attrib.dxf.text
                except Exception:  # noqa: BLE001 - an attribute without tag or text
                    continue
                field = _TAG_FIELD.get(_norm_tag(tag))
                value = _clean(text)
                if field and value:
                    found.setdefault(field, set()).add(value)
    values: dict[str, str] = {}
    notes: dict[str, str] = {}
    for field, seen in found.items():
        if len(seen) == 1:
            values[field] = next(iter(seen))
        else:
            shown_values = ", ".join(repr(v) for v in sorted(seen)[:3])
            notes[field] = f"the drawing's attributes give {len(seen)} different values ({shown_values}); not used"
    return values, notes


def resolve(
    options: Mapping[str, str] | Iterable[tuple[str, str]],
    loads_file: Mapping[str, str] | Iterable[tuple[str, str]],
    document: Any,
    report_date: str,
) -> TitleBlock:
    """The title block from the options, the loads file's ``[report]`` table and the
    drawing's attributes, in that order of precedence (module docstring)."""
    opts = {k: _clean(v) for k, v in dict(options).items() if str(v).strip()}
    loads = {k: _clean(v) for k, v in dict(loads_file).items() if str(v).strip()}
    drawn, notes = drawn_values(document)
    out = []
    for key in FIELD_NAMES:
        note = notes.get(key, "")
        if key in opts:
            out.append(TitleField(key, opts[key], "option", note))
        elif key in loads:
            out.append(TitleField(key, loads[key], "loads file", note))
        elif key in drawn:
            out.append(TitleField(key, drawn[key], "drawing", note))
        elif key == "date":
            out.append(TitleField(key, report_date, "report date", note))
        else:
            out.append(TitleField(key, "", "not given", note))
    return TitleBlock(tuple(out))


_SOURCE_WORDS = {
    "option": "from the command line",
    "loads file": "from the loads file",
    "drawing": "from the drawing's attributes",
    "report date": "the date of the report",
    "not given": "not given",
}


def sources_text(tb: TitleBlock) -> str:
    """Where each field came from, in words (for the reports)."""
    parts = []
    for f in tb.fields:
        parts.append(f"{f.label} {_SOURCE_WORDS.get(f.source, f.source)}" + (f" ({f.note})" if f.note else ""))
    return "title block: " + "; ".join(parts)
