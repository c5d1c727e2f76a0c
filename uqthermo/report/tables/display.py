"""The display table every report table is built as: already-formatted cells, a caption, notes.

Both templates (HTML and Markdown) and the Word file render :class:`DisplayTable` alike; the
helpers here write an output's unit after a number and in a caption.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from ..fields import text

__all__ = ["DisplayTable", "output_unit", "unit_suffix", "in_unit"]


@dataclass
class DisplayTable:
    """A table ready for rendering: every cell is a string.

    ``align`` holds per column "l" (left, no wrapping), "w" (left, wraps), "r"
    (right, numbers) or "c". ``notes`` are printed under the table.
    """

    key: str
    caption: str
    columns: list[str]
    align: list[str]
    rows: list[list[str]] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)

    def __bool__(self) -> bool:  # an empty table is not rendered
        return bool(self.rows)


def output_unit(output: Mapping) -> str:
    """The output's unit as the tables print it ("1" for a dimensionless output)."""
    return text(output.get("unit")) or "1"


def unit_suffix(unit: Any) -> str:
    """" kJ/mol" for a unit after a number; "" for a dimensionless output ("1" or none)."""
    u = text(unit)
    return "" if u in ("", "1") else f" {u}"


def in_unit(unit: Any) -> str:
    """Caption suffix: ", in kJ/mol" or ", dimensionless"."""
    u = text(unit)
    return ", dimensionless" if u in ("", "1") else f", in {u}"
