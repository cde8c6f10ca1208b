"""Measure, then place: every block draws inside the height it asked for, at several widths.

The page module trusts ``height(width)``; a block that drew outside it would overlap its
neighbour. Each block of every example sheet is drawn into a box of exactly its measured height
and its drawn bounds are checked against that box.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from diagram.assess import assess as assess_study
from diagram.assess.results import Assessment
from diagram.drawing.layout import sheet_tables
from diagram.drawing.map.block import not_drawn
from diagram.drawing.map.vessels import band_styles
from diagram.drawing.scene import Box, CaseHeader, Group, Item, bounds
from diagram.drawing.sheet.blocks import SheetBlock
from diagram.drawing.sheet.header import Header
from diagram.drawing.sheet.legend import Legend, symbols_used
from diagram.drawing.sheet.notes import Caution, Footer, NextPage, Notes
from diagram.drawing.sheet.pressure import PressureStrip
from diagram.drawing.sheet.tableblock import Tables
from diagram.drawing.style import default_style
from diagram.drawing.template.mapfile import load_template
from diagram.reading.load import load_prior, load_study

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
STEMS = sorted(p.stem for p in EXAMPLES.glob("*.yaml"))
WIDTHS = (538.58, 300.0)  # the A4 body, and a narrow one that makes everything wrap
SLACK = 0.01  # points: rounding of the drawn coordinates
EDGE = 0.5  # points: half a frame's or rule's stroke may lie outside the box (gaps are 3.5+)
# points, sideways: ``bounds`` counts half a stroke in every direction, and the legend's graft
# symbol is a 6.4 pt stroke with butt ends (drawn, it stays inside)
STROKE = 3.5


def assessed(stem: str) -> Assessment:
    study = load_study(EXAMPLES / f"{stem}.yaml")
    prior = load_prior(study) if study.prior else None
    return assess_study(study, prior=prior)


def blocks(a: Assessment) -> list[tuple[str, SheetBlock]]:
    style = default_style()
    bands = band_styles(a, style)
    case = CaseHeader("T-1", 2026, "70s", "female")
    tables = sheet_tables(a, bands)
    out: list[tuple[str, SheetBlock]] = [
        ("header", Header(a, style)),
        ("header-2", Header(a, style, page_number=2)),
        ("header-case", Header(a, style, case)),
        ("caution", Caution(style)),
        ("notes", Notes(a, style, not_drawn(a, load_template()))),
        ("notes-case", Notes(a, style, (), case)),
        ("footer", Footer(a, style, "9.9.9", "a note", (2, 3))),
        ("pressures", PressureStrip(a, style, bands)),
        ("legend", Legend(list(bands.values()), symbols_used(a), style, bands)),
        ("tables", Tables(tables, style, bands)),
    ]
    if tables:
        out.append(("next-page", NextPage([t.id for t in tables], style)))
    return out


def drawn_bounds(items: list[Item]) -> Box | None:
    return bounds(Group("b", tuple(items)))


@pytest.mark.parametrize("stem", STEMS)
@pytest.mark.parametrize("width", WIDTHS)
def test_each_block_draws_within_its_measured_height(stem: str, width: float) -> None:
    for name, block in blocks(assessed(stem)):
        h = block.height(width)
        box = Box(40.0, 100.0, width, h)
        found = drawn_bounds(block.draw(box))
        if found is None:
            assert h == 0.0 or name in ("pressures",), name
            continue
        assert h > 0, name
        assert found.y >= box.y - EDGE and found.bottom <= box.bottom + EDGE, (name, found, box)
        assert found.x >= box.x - STROKE and found.right <= box.right + STROKE, (name, found, box)


@pytest.mark.parametrize("stem", STEMS)
def test_narrower_never_shorter(stem: str) -> None:
    # wrapping text can only add lines as the width shrinks
    for name, block in blocks(assessed(stem)):
        assert block.height(WIDTHS[1]) >= block.height(WIDTHS[0]) - SLACK, name
