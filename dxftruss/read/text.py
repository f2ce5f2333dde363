"""Text values: the plain text of a TEXT or MTEXT (formatting codes removed), read once
per entity however often its block is placed."""

from __future__ import annotations

from typing import Any


class _PlainTexts:
    """Plain text per entity, cached by the entity's identity. ``failures`` are the
    exceptions that mean the library could not interpret the text: the raw ``text``
    attribute is used instead."""

    def __init__(self, failures: tuple[type[BaseException], ...]) -> None:
        self.failures = failures
        self.cache: dict[int, str] = {}

    def get(self, e: Any) -> str:
        key = id(e)
        if key not in self.cache:
            try:
                text = e.plain_text(fast=False) if e.dxftype() == "MTEXT" else e.plain_text()
            except self.failures:
                text = str(e.dxf.get("text", ""))
            self.cache[key] = str(text)
        return self.cache[key]
