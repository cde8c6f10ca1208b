"""The ankle pressure strip: one framed box per leg, under its ankle, with ABI, TBI and grade.

Both legs get a box as soon as any ankle or toe pressure was measured. Each box is as tall as
the fuller of the two needs; it is centred under the leg as drawn on the map (``legs``, given
once the map is drawn) and kept to its half of the page.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

from diagram.anatomy import Side
from diagram.assess.results import Assessment
from diagram.drawing.scene import Box, Group, Item, Rect, Region, Text, Weight, make_id
from diagram.drawing.sheet.cells import CELL_PAD_PT, Entry, cell_lines, line_height, set_cell
from diagram.drawing.sheet.tables import pressure_entries
from diagram.drawing.style import BandStyle, Style
from diagram.drawing.textmetrics import line_extents

PRESSURE_BOX_MAX_PT = 250.0


def has_pressures(assessment: Assessment) -> bool:
    """Return True when any ankle or toe pressure was measured (both legs then get a box)."""
    pressures = assessment.study.pressures
    return any(
        v is not None
        for side in (Side.RIGHT, Side.LEFT)
        for v in (pressures.limb(side).pt, pressures.limb(side).dp, pressures.limb(side).toe)
    )


def box_width(width: float) -> float:
    """Return the width of one leg's box: up to half the ``width``, less a gap."""
    return min(PRESSURE_BOX_MAX_PT, width / 2 - 4)


def box_height(entries: Sequence[Entry], width: float, style: Style) -> float:
    """Return the height ``draw_box`` needs for ``entries`` at ``width``."""
    lines = cell_lines(tuple(entries), width - 2 * CELL_PAD_PT, style)
    return (lines + 1) * line_height(style) + 2 * CELL_PAD_PT


def draw_box(
    base: str,
    title: str,
    entries: Sequence[Entry],
    box: Box,
    style: Style,
    bands: Mapping[str, BandStyle],
) -> list[Item]:
    """Return a framed box with a bold title line and its entries, set inside ``box``."""
    lh = line_height(style)
    asc, _ = line_extents(style.table_pt)
    x, y = box.x + CELL_PAD_PT, box.y + CELL_PAD_PT
    items: list[Item] = [
        Rect(
            f"{base}-frame",
            box.x,
            box.y,
            box.w,
            box.h,
            fill=style.box_fill,
            stroke=style.rule_ink,
            stroke_width=0.5,
        ),
        Text(f"{base}-title", x, y + asc, title, style.table_pt, Weight.BOLD, fill=style.text_ink),
    ]
    cell, _ = set_cell(
        f"{base}-line", tuple(entries), x, y + lh, box.w - 2 * CELL_PAD_PT, style, bands
    )
    return [Group(base, (*items, *cell), role="pressure-box")]


def _clamp(v: float, lo: float, hi: float) -> float:
    return lo if hi < lo else min(max(v, lo), hi)


@dataclass(frozen=True)
class PressureStrip:
    """The strip of pressure boxes; ``legs`` and ``map_box`` say where the legs were drawn."""

    assessment: Assessment
    style: Style
    bands: Mapping[str, BandStyle]
    legs: Mapping[str, Box] = field(default_factory=dict)
    map_box: Box | None = None

    def height(self, width: float) -> float:
        """Return the strip's height at ``width`` (0 without pressures)."""
        if not has_pressures(self.assessment):
            return 0.0
        w = box_width(width)
        return max(
            box_height(pressure_entries(self.assessment.indices.get(side)), w, self.style)
            for side in (Side.RIGHT, Side.LEFT)
        )

    def draw(self, box: Box) -> list[Item]:
        """Return each leg's box, under its ankle, in ``box``."""
        return self.place(box)[0]

    def place(self, box: Box) -> tuple[list[Item], tuple[Region, ...]]:
        """Return each leg's box, under its ankle, in ``box``, and the region of each."""
        if not box.h:
            return [], ()
        x0, x1 = box.x, box.right
        width = box_width(x1 - x0)
        mid = (x0 + x1) / 2
        items: list[Item] = []
        regions = []
        for side in (Side.RIGHT, Side.LEFT):
            leg = self.legs.get(side.value)
            if leg:
                centre = leg.x + leg.w / 2
            else:
                whole = self.map_box or box
                centre = whole.x + whole.w * (0.25 if side is Side.RIGHT else 0.75)
            lo, hi = (x0, mid - 4) if side is Side.RIGHT else (mid + 4, x1)
            x = _clamp(centre - width / 2, lo, hi - width)
            placed = Box(x, box.y, width, box.h)
            base = make_id("pressure", side.value)
            entries = pressure_entries(self.assessment.indices.get(side))
            title = f"{side.value.capitalize()} leg"
            items += draw_box(base, title, entries, placed, self.style, self.bands)
            regions.append(Region(base, side.value, placed))
        return items, tuple(regions)
