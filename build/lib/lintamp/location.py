"""Source locations carried by every card, element and finding."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True, slots=True, order=True)
class Location:
    """A place in a netlist file: 1-based line and column."""

    path: str
    line: int
    column: int = 1

    def __str__(self) -> str:
        return f"{self.path}:{self.line}:{self.column}"
