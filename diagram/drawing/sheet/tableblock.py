"""Tables on the page: measured row by row, set under one another, continued over pages.

A table has a title, the legs as columns (right, then left) after a label column, rows of cells
and foot notes. ``Tables`` is the block of all tables of page 1; when they would leave the map
too little room the page module hands them to ``paginate``, which sets them on further pages with
rows kept whole and the last row kept with the table's notes.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from diagram.drawing.scene import Box, Group, Item, Line, Text, Weight, make_id
from diagram.drawing.sheet.blocks import BLOCK_GAP_PT
from diagram.drawing.sheet.cells import (
    CELL_PAD_PT,
    Entry,
    Table,
    basis,
    cell_lines,
    entry,
    line_height,
    set_cell,
    set_entry,
)
from diagram.drawing.style import BandStyle, Style
from diagram.drawing.textmetrics import line_extents

LABEL_COLUMN_PT = 84.0


@dataclass(frozen=True)
class _Columns:
    label: tuple[float, float]
    cells: tuple[tuple[float, float], ...]  # (x, width) per leg: right, then left

    @staticmethod
    def of(x0: float, x1: float) -> _Columns:
        first = x0 + LABEL_COLUMN_PT
        half = (x1 - first) / 2
        cells = ((first, half - CELL_PAD_PT * 2), (first + half, half - CELL_PAD_PT))
        return _Columns((x0, LABEL_COLUMN_PT - CELL_PAD_PT), cells)


def row_heights(table: Table, x0: float, x1: float, style: Style) -> list[float]:
    """Return the height of each row of ``table`` set between ``x0`` and ``x1``."""
    cols = _Columns.of(x0, x1)
    lh = line_height(style)
    out = []
    for row in table.rows:
        lines = [
            cell_lines(cell, w, style) for cell, (_, w) in zip(row.cells, cols.cells, strict=True)
        ]
        label_lines = cell_lines((entry(basis(row.label)),), cols.label[1], style)
        out.append(max([*lines, label_lines]) * lh + 2.0)
    return out


def table_head_height(style: Style) -> float:
    """Return the height of a table's title and column heads."""
    return 2 * line_height(style) + 3.0


def notes_height(table: Table, x0: float, x1: float, style: Style) -> float:
    """Return the height of a table's foot notes."""
    lines = cell_lines(table.notes, x1 - x0, style)
    return lines * line_height(style) + (2.0 if lines else 0.0)


def draw_table(
    table: Table,
    rows: range,
    x0: float,
    x1: float,
    top: float,
    style: Style,
    bands: Mapping[str, BandStyle],
    *,
    with_notes: bool,
    continued: bool = False,
) -> tuple[list[Item], float]:
    """Return the items of ``rows`` of ``table`` set from ``top`` (title and heads first)."""
    cols = _Columns.of(x0, x1)
    lh = line_height(style)
    asc, _ = line_extents(style.table_pt)
    base = table.id + ("-cont" if continued else "")
    title = table.title + ((basis(" (continued)"),) if continued else ())
    items, y = set_entry(f"{base}-title", Entry(title), x0, top, x1 - x0, style, bands)
    for (x, _), name in zip(cols.cells, ("Right", "Left"), strict=True):
        items.append(
            Text(
                f"{base}-head-{name}",
                x,
                y + asc,
                name,
                style.table_pt,
                Weight.BOLD,
                fill=style.text_ink,
            )
        )
    y += lh + 1.0
    items.append(Line(f"{base}-rule", ((x0, y), (x1, y)), style.rule_ink, 0.6))
    y += 2.0
    heights = row_heights(table, x0, x1, style)
    for i in rows:
        row = table.rows[i]
        rid = make_id(base, "row", i)
        label, _ = set_entry(
            f"{rid}-label",
            entry(basis(row.label)),
            *cols.label[:1],
            y,
            cols.label[1],
            style,
            bands,
        )
        items.extend(label)
        for k, (cell, (x, w)) in enumerate(zip(row.cells, cols.cells, strict=True)):
            cell_items, _ = set_cell(f"{rid}-{k}", cell, x, y, w, style, bands)
            items.extend(cell_items)
        y += heights[i]
        items.append(Line(f"{rid}-rule", ((x0, y - 1.0), (x1, y - 1.0)), style.table_rule_ink, 0.4))
    if with_notes:
        y += 1.0
        for k, note in enumerate(table.notes):
            more, y = set_entry(f"{base}-note-{k}", note, x0, y, x1 - x0, style, bands)
            items.extend(more)
    return [Group(base, tuple(items), role="table")], y


@dataclass(frozen=True)
class Tables:
    """The tables of a page set one under the other, a gap after each."""

    tables: Sequence[Table]
    style: Style
    bands: Mapping[str, BandStyle]

    def height(self, width: float) -> float:
        """Return the height of the tables set one under the other (with the gaps between)."""
        total = 0.0
        for table in self.tables:
            rows = sum(row_heights(table, 0.0, width, self.style))
            foot = notes_height(table, 0.0, width, self.style)
            total += table_head_height(self.style) + rows + foot + BLOCK_GAP_PT
        return total

    def draw(self, box: Box) -> list[Item]:
        """Return the tables set one under the other from the top of ``box``."""
        items: list[Item] = []
        y = box.y
        for table in self.tables:
            rows = range(len(table.rows))
            more, y = draw_table(
                table, rows, box.x, box.right, y, self.style, self.bands, with_notes=True
            )
            items += more
            y += BLOCK_GAP_PT
        return items

    def paginate(self, x0: float, x1: float, top: float, bottom: float) -> list[list[Item]]:
        """Return the tables set on as many pages as they need (rows kept whole), page by page.

        Each page's body runs from ``top`` to ``bottom``; a table that breaks carries on under
        its title marked "(continued)"; its last row stays with its notes where it can.
        """
        style, bands = self.style, self.bands
        pages: list[list[Item]] = [[]]
        y = top
        for table in self.tables:
            heights = row_heights(table, x0, x1, style)
            foot = notes_height(table, x0, x1, style)
            head = table_head_height(style)
            i, continued = 0, False
            while i < len(heights):
                j = _rows_that_fit(heights, i, bottom - y - head, foot)
                if j == i and pages[-1]:
                    pages.append([])
                    y = top
                    continue
                j = max(j, i + 1)  # a row taller than a page is set anyway
                last = j == len(heights)
                items, y = draw_table(
                    table,
                    range(i, j),
                    x0,
                    x1,
                    y,
                    style,
                    bands,
                    with_notes=last,
                    continued=continued,
                )
                pages[-1] += items
                y += BLOCK_GAP_PT
                i, continued = j, True
        return pages


def _rows_that_fit(heights: Sequence[float], i: int, room: float, foot: float) -> int:
    """Return where the rows from ``i`` that fit ``room`` end (the last kept with the notes)."""
    j, used = i, 0.0
    while j < len(heights) and used + heights[j] <= room:
        used, j = used + heights[j], j + 1
    if j == len(heights) and used + foot > room and j - i > 1:
        j -= 1  # keep the last row with the table's notes
    return j
