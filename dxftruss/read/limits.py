"""The safety limits counted while the walk expands block references: entities
(block content counted per placement before it is placed), MINSERT array cells
(counted before any cell is built) and member segments. Passing one stops reading
with a LimitError that names the limit and how to raise it."""

from __future__ import annotations

from ..errors import LimitError


class _Limits:
    def __init__(self, name: str, *, max_entities: int, max_array_cells: int, max_members: int | None) -> None:
        self.name = name
        self.max_entities = max_entities
        self.max_array_cells = max_array_cells
        self.max_members = max_members
        self.n_entities = 0
        self.n_cells = 0
        self.n_segments = 0

    def count_entities(self, n: int) -> None:
        self.n_entities += n
        if self.n_entities > self.max_entities:
            raise LimitError(
                f"{self.name}: the drawing expands to more than {self.max_entities:,} entities "
                f"(block references included): entity limit reached; raise max_entities if the drawing is genuine"
            )

    def count_segments(self, n: int) -> None:
        self.n_segments += n
        if self.max_members is not None and self.n_segments > self.max_members:
            raise LimitError(
                f"{self.name}: more than {self.max_members:,} line segments on member layers, more than the limit "
                f"of {self.max_members:,} members (reading stopped); raise it with --max-members if the drawing "
                "is genuine"
            )

    def count_cells(self, n: int) -> None:
        self.n_cells += n
        if self.n_cells > self.max_array_cells:
            raise LimitError(
                f"{self.name}: block arrays (MINSERT) expand to more than {self.max_array_cells:,} cells: "
                f"array cell limit reached; raise max_array_cells if the drawing is genuine"
            )
