"""The paper sizes a sheet is laid out on: the one table every part of the package reads.

A4 and US Letter are the two printed sizes; ``map`` is the map alone (no header or notes), sized
to sit in a report. Sizes are in PostScript points (1/72 in), the unit of the Scene.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

PT_PER_MM = 72.0 / 25.4
MARGIN_PT = 10 * PT_PER_MM  # the page's margin on every side


@dataclass(frozen=True)
class PageSpec:
    """A sheet size and what it carries."""

    name: str
    width_pt: float
    height_pt: float
    unit: str  # the unit the SVG states its size in
    furniture: bool  # header and measurement notes (the map-only sheet omits them)


PAGES: Mapping[str, PageSpec] = MappingProxyType(
    {
        "a4": PageSpec("a4", 210 * PT_PER_MM, 297 * PT_PER_MM, "mm", True),  # ISO 216
        "letter": PageSpec("letter", 8.5 * 72, 11 * 72, "in", True),  # ANSI A, 8.5 x 11 in
        "map": PageSpec("map", 180 * PT_PER_MM, 240 * PT_PER_MM, "mm", False),
    }
)
PAGE_NAMES: tuple[str, ...] = tuple(PAGES)  # "a4", "letter", "map": for option lists
