"""Table cells: text runs in tones, entries of runs, and how they flow into lines and are set.

Content is built as plain entries of runs (``diagram.drawing.sheet.tables`` writes what the boxes
and tables say); ``flow`` breaks an entry into lines with the shipped font's metrics, and
``set_entry`` / ``set_cell`` draw them. Every measure of a cell comes from ``flow`` here, so a
block that sets cells measures them with the same code that draws them.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass
from enum import StrEnum

from diagram.drawing.map.devices import device_mark
from diagram.drawing.map.marks import change_mark
from diagram.drawing.scene import Box, Item, Rect, Text, Weight
from diagram.drawing.style import BandStyle, Style
from diagram.drawing.textmetrics import line_extents, text_width

CELL_PAD_PT = 3.0
CHIP_PT = 6.0  # band swatch in front of a value
_TOKENS = re.compile(r"\S+\s*|\s+")


class Tone(StrEnum):
    """How a run of text is set."""

    VALUE = "value"
    STRONG = "strong"  # the value itself, bold
    BASIS = "basis"  # what it rests on: small, muted
    FLAG = "flag"  # a finding to act on: bold, warning ink


@dataclass(frozen=True)
class Run:
    """A piece of text in one tone."""

    text: str
    tone: Tone = Tone.VALUE


@dataclass(frozen=True)
class Entry:
    """One item of a cell; it starts on a new line, after a band chip or change mark if any."""

    runs: tuple[Run, ...]
    chip: str | None = None  # band id
    mark: str | None = None  # a Change value: the map's change symbol


Cell = tuple[Entry, ...]


@dataclass(frozen=True)
class Row:
    """A table row: a label, then one cell per leg (right, left)."""

    label: str
    cells: tuple[Cell, ...]


@dataclass(frozen=True)
class Table:
    """A titled table with the legs as columns; ``notes`` run across the foot."""

    id: str
    title: tuple[Run, ...]
    rows: tuple[Row, ...]
    notes: tuple[Entry, ...] = ()


def entry(*runs: Run | str, chip: str | None = None, mark: str | None = None) -> Entry:
    return Entry(tuple(Run(r) if isinstance(r, str) else r for r in runs), chip, mark)


def basis(text: str) -> Run:
    return Run(text, Tone.BASIS)


def strong(text: str) -> Run:
    return Run(text, Tone.STRONG)


@dataclass(frozen=True)
class _Piece:
    x: float  # from the start of the line
    text: str
    tone: Tone


def _font(tone: Tone, style: Style) -> tuple[float, bool]:
    if tone is Tone.BASIS:
        return style.small_pt, False
    return style.table_pt, tone in (Tone.STRONG, Tone.FLAG)


def line_height(style: Style) -> float:
    """Return the height of one line of a table or box."""
    asc, desc = line_extents(style.table_pt)
    return asc + desc + 1.0


def flow(entry: Entry, width: float, style: Style) -> list[list[_Piece]]:
    """Break an entry's runs into lines no wider than ``width`` (words kept whole)."""
    lead = (CHIP_PT + 3.0) if entry.chip or entry.mark else 0.0
    lines: list[list[_Piece]] = [[]]
    x = lead
    for run in entry.runs:
        size, bold = _font(run.tone, style)
        for token in _TOKENS.findall(run.text):
            word = token.rstrip()
            if word and lines[-1] and x + text_width(word, size, bold) > width:
                lines.append([])
                x = lead
            if not word and not lines[-1]:
                continue  # no space at the start of a line
            line = lines[-1]
            if line and line[-1].tone is run.tone:
                line[-1] = _Piece(line[-1].x, line[-1].text + token, run.tone)
            elif word:  # a piece starts at a glyph (SVG drops leading spaces): spaces only move x
                line.append(_Piece(x, token, run.tone))
            x += text_width(token, size, bold)
    return lines


def set_entry(
    base: str,
    entry: Entry,
    x: float,
    top: float,
    width: float,
    style: Style,
    bands: Mapping[str, BandStyle],
) -> tuple[list[Item], float]:
    """Return the items of one entry set from ``top``, and the y below it."""
    lh = line_height(style)
    asc, _ = line_extents(style.table_pt)
    items: list[Item] = []
    lines = flow(entry, width, style)
    if entry.chip is not None and entry.chip in bands:
        chip = bands[entry.chip]
        y = top + (lh - CHIP_PT) / 2
        items.append(
            Rect(
                f"{base}-chip",
                x,
                y,
                CHIP_PT,
                CHIP_PT,
                band=entry.chip,
                stroke=chip.outline,
                stroke_width=0.5,
                dash=chip.outline_dash,
            )
        )
        items += device_mark(f"{base}-chip", chip.device, Box(x, y, CHIP_PT, CHIP_PT), style)
    if entry.mark is not None:
        items.append(change_mark(f"{base}-mark", entry.mark, x + CHIP_PT / 2, top + lh / 2, style))
    for i, pieces in enumerate(lines):
        for j, piece in enumerate(pieces):
            size, bold = _font(piece.tone, style)
            ink = {Tone.BASIS: style.muted_ink, Tone.FLAG: style.warning_ink}.get(
                piece.tone, style.text_ink
            )
            items.append(
                Text(
                    f"{base}-{i}-{j}",
                    x + piece.x,
                    top + i * lh + asc,
                    piece.text.rstrip(),
                    size,
                    Weight.BOLD if bold else Weight.NORMAL,
                    fill=ink,
                )
            )
    return items, top + len(lines) * lh


def set_cell(
    base: str,
    cell: Cell,
    x: float,
    top: float,
    width: float,
    style: Style,
    bands: Mapping[str, BandStyle],
) -> tuple[list[Item], float]:
    items: list[Item] = []
    y = top
    for k, entry in enumerate(cell):
        more, y = set_entry(f"{base}-{k}", entry, x, y, width, style, bands)
        items.extend(more)
    return items, y


def cell_lines(cell: Cell, width: float, style: Style) -> int:
    """Return how many lines ``cell`` takes at ``width``."""
    return sum(len(flow(e, width, style)) for e in cell)
