"""The layer inventory as text for the terminal and as JSON (``dxftruss layers``;
the JSON shape is in docs/report-format.md, Layer inventory).

Everything from the file (path, layer names, layout names, case names in the uses)
goes through :func:`dxftruss.escape.shown`; the JSON is written with ASCII escapes.
"""

from __future__ import annotations

import json
from typing import Any

from ..escape import shown
from ..inventory import LayerEntry

#: the JSON shape's name (docs/report-format.md, Layer inventory)
LAYERS_SCHEMA = "dxftruss-layers/1"


def _counts_words(counts: dict[str, int]) -> str:
    if not counts:
        return "-"
    return ", ".join(f"{n} {shown(t)}" for t, n in sorted(counts.items(), key=lambda kv: (-kv[1], kv[0])))


def _where(linework: Any) -> str:
    return "model space" if linework.layout == "Model" else f"paper-space layout '{shown(linework.layout)}'"


def layers_text(path: str, linework: Any, entries: list[LayerEntry]) -> str:
    """The inventory as an aligned table, one layer a row, then each layer's reason."""
    rows = [("layer", "state", "entities", "use")]
    for e in entries:
        name = shown(e.name) + ("" if e.in_table else " (not in the layer table)")
        rows.append((name, e.state_words(), _counts_words(e.counts), e.use))
    widths = [max(len(r[k]) for r in rows) for k in range(3)]
    out = [f"dxftruss layers: {shown(path)} ({_where(linework)}; block content counted once per placement)"]
    for r in rows:
        out.append("  ".join(r[k].ljust(widths[k]) for k in range(3)) + "  " + r[3])
    out.append("")
    out.append("what check does with each layer:")
    for e in entries:
        out.append(f"  {shown(e.name)}: {e.use} - {shown(e.why)}")
    if not entries:
        out.append("  (the drawing has no layers)")
    return "\n".join(out) + "\n"


def layers_json(path: str, linework: Any, entries: list[LayerEntry]) -> str:
    """The inventory as JSON (ASCII only: every other character is a ``\\u`` escape)."""
    doc = {
        "schema": LAYERS_SCHEMA,
        "path": path,
        "layout": linework.layout,
        "counted": "entities of the layout read, block content once per placement on its effective layer",
        "layers": [e.as_dict() for e in entries],
    }
    return json.dumps(doc, indent=2, ensure_ascii=True) + "\n"
