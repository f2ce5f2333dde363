"""The boundary to the DXF library's entity data: what an accessor may raise on
malformed data, the one-line form of a message, and vectors as plain tuples.

Every other reader module catches :data:`_ENTITY_FAILURES` (plus ezdxf's DXFError where
it reads entities) rather than ``Exception``; only the loader (``loading._load``) catches
everything, at the door.
"""

from __future__ import annotations

from typing import Any

#: exceptions an entity accessor may raise on malformed data (recovered files)
_ENTITY_FAILURES: tuple[type[BaseException], ...] = (
    ValueError,
    TypeError,
    AttributeError,
    IndexError,
    KeyError,
    ArithmeticError,
)


def _one_line(text: object, limit: int = 300) -> str:
    s = " ".join(str(text).split())
    return s if len(s) <= limit else s[: limit - 3] + "..."


def _xyz(v: Any) -> tuple[float, float, float]:
    return (float(v[0]), float(v[1]), float(v[2]))
