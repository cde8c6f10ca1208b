"""What every block of the sheet is: it measures itself for a width, then draws into a box.

A block (header, map, pressure strip, legend, tables, notes, caution, footer) answers two
questions: ``height(width)`` — how much room it needs at that width — and ``draw(box)`` — its
items set inside ``box``. ``diagram.drawing.layout`` asks every block its height first, then
hands each its box; no block's height is worked out anywhere but in the block's own module.
Blocks that end at the foot of their box (the notes, the caution) set their last line on
``box.bottom``. ``text_lines`` is the one way a block sets plain lines of text.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Protocol

from diagram.drawing.scene import Block, Box, Group, Item, Text, Weight, bounds, make_id
from diagram.drawing.textmetrics import line_extents

BLOCK_GAP_PT = 7.0  # between two blocks of a page


class SheetBlock(Protocol):
    """A block of the sheet: measured for a width, then drawn into a box."""

    def height(self, width: float) -> float:
        """Return the room the block needs at ``width`` (0 when it has nothing to show)."""
        ...

    def draw(self, box: Box) -> list[Item]:
        """Return the block's items set inside ``box``."""
        ...


def line_pitch(size: float) -> float:
    """Return the distance from one line of plain text to the next at ``size``."""
    asc, desc = line_extents(size)
    return asc + desc + 1.0


def text_lines_height(count: int, size: float) -> float:
    """Return the height of ``count`` lines set by ``text_lines``."""
    return line_pitch(size) * count


def text_lines(
    base: str,
    lines: Sequence[tuple[str, bool]],
    size: float,
    x: float,
    bottom: float,
    fill: str,
) -> tuple[list[Item], float]:
    """Return lines (text, bold) set so that the last one ends at ``bottom``, and their top."""
    asc, _ = line_extents(size)
    line_h = line_pitch(size)
    top = bottom - line_h * len(lines)
    items: list[Item] = [
        Text(
            make_id(base, k),
            x,
            top + k * line_h + asc,
            text,
            size,
            Weight.BOLD if bold else Weight.NORMAL,
            fill=fill,
        )
        for k, (text, bold) in enumerate(lines)
    ]
    return items, top


def placed(named: Sequence[tuple[str, Sequence[Item]]]) -> tuple[Block, ...]:
    """Return where each named block lies on the page (blocks with nothing drawn left out)."""
    out = []
    for name, items in named:
        found = bounds(Group(name, tuple(items)))
        if found is not None:
            out.append(Block(name, found))
    return tuple(out)
