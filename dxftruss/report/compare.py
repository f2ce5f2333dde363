"""The revision compare as JSON (schema ``dxftruss-compare/1``, docs/compare.schema.json,
described in docs/report-format.md, Revision compare) and as terminal text.

Numbers are rounded to 12 significant digits as in the check report; text from the
drawings is escaped for the terminal (``escape.one_line``) and written as JSON strings.
"""

from __future__ import annotations

import json
from typing import TYPE_CHECKING, Any

from ..compare import KINDS
from ..model import joint_id
from . import CAUTION, assumptions
from .json import _UNSAFE, _jsonable, _num

if TYPE_CHECKING:
    from ..compare import Comparison
    from ..result import Result

COMPARE_SCHEMA = "dxftruss-compare/1"
COMPARE_SCHEMA_VERSION = 1


def _source(r: Result) -> dict[str, Any]:
    return {
        "path": r.source.path,
        "sha256": r.source.sha256,
        "length_unit": r.source.length_unit,
        "loads": r.settings.loads,
        "snap": _num(r.tolerances.snap),
        "errors": r.n_errors,
        "assumptions": assumptions(r),
    }


def compare_dict(cmp: Comparison) -> dict[str, Any]:
    counts = dict.fromkeys(KINDS, 0)
    for c in cmp.changes:
        counts[c.kind] += 1
    th = cmp.threshold
    to, tn = cmp.old.truss, cmp.new.truss
    return {
        "schema": COMPARE_SCHEMA,
        "schema_version": COMPARE_SCHEMA_VERSION,
        "old": _source(cmp.old),
        "new": _source(cmp.new),
        "settings": {
            "tolerance": _num(cmp.tolerance),
            "force_unit": tn.force_unit,
            "force_change": th.written,
            "force_change_percent": _num(th.percent) if th.percent is not None else None,
            "force_limit": _num(cmp.force_limit),
        },
        "summary": counts,
        "unchanged": {"members": cmp.unchanged_members, "findings": cmp.unchanged_findings},
        "moved_joints": [
            {
                "old": joint_id(o),
                "new": joint_id(n),
                "from": [_num(to.xy[o, 0]), _num(to.xy[o, 1])],
                "to": [_num(tn.xy[n, 0]), _num(tn.xy[n, 1])],
            }
            for o, n in sorted(cmp.moved_joints.items())
        ],
        "changes": [
            {
                "number": c.number,
                "kind": c.kind,
                "what": c.what,
                "box": [_num(v) for v in c.box] if c.box is not None else None,
                "detail": _jsonable(c.data),
            }
            for c in cmp.changes
        ],
        "new_errors": len(cmp.new_errors),
        "caution": CAUTION,
    }


def compare_json(cmp: Comparison) -> str:
    text = json.dumps(compare_dict(cmp), ensure_ascii=False, allow_nan=False, indent=1) + "\n"
    return _UNSAFE.sub(lambda m: f"\\u{ord(m.group()):04x}", text)


#: most changes listed on the terminal (the PDF and JSON list them all)
TEXT_ROWS = 40


def compare_text(cmp: Comparison) -> str:
    from ..escape import one_line

    lines = [
        f"dxftruss compare: {one_line(cmp.old.source.path)} -> {one_line(cmp.new.source.path)}",
        (
            f"joints matched within {cmp.tolerance:.6g} {cmp.new.source.length_unit} (the larger snap tolerance); "
            f"force changes above {cmp.force_limit:.4g} {cmp.new.truss.force_unit} "
            f"(--force-change {cmp.threshold.written})"
        ),
    ]
    if not cmp.changes:
        lines.append("no changes")
    counts: dict[str, int] = {}
    for c in cmp.changes:
        counts[c.kind] = counts.get(c.kind, 0) + 1
    if counts:
        lines.append("changes: " + ", ".join(f"{n} {k}" for k, n in counts.items()))
    for c in cmp.changes[:TEXT_ROWS]:
        lines.append(f"  {c.number:>3}  {c.kind:<22} {one_line(c.what, 160)}")
    if len(cmp.changes) > TEXT_ROWS:
        lines.append(f"  ... and {len(cmp.changes) - TEXT_ROWS} more (the PDF and JSON list them all)")
    if cmp.new_errors:
        lines.append(f"{len(cmp.new_errors)} new error finding(s) in the new revision")
    for label, r in (("old", cmp.old), ("new", cmp.new)):
        lines.append(f"assumptions ({label}):")
        lines += [f"  - {one_line(a)}" for a in assumptions(r)]
    lines.append("caution: " + CAUTION)
    return "\n".join(lines) + "\n"
