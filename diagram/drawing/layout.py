"""Lay out a sheet: measure every block, then place them on the page and break pages.

``layout`` turns an Assessment and a map Template into a Scene of page-point primitives. Every
block of the sheet (``diagram.drawing.sheet`` and the map of ``diagram.drawing.map``) is asked
its height for the page's width; the footer, caution and notes are stacked up from the foot of
the page, the header down from its top, then the tables (when they fit) and the legend above the
notes; the map and its ankle pressure strip take the room left. Tables that would leave the map
less than ``MIN_MAP_SHARE`` of the page continue on further pages (``Scene.more``), each with a
short header, the caution and the footer.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace

from diagram.assess.compare import BAND_CHANGES
from diagram.assess.results import Assessment
from diagram.drawing.map.block import SIDE_MARK_STRIP_PT, DrawnMap, MapBlock, not_drawn
from diagram.drawing.map.vessels import band_styles
from diagram.drawing.paper import MARGIN_PT, PAGES, PageSpec
from diagram.drawing.scene import Block, Box, CaseHeader, Group, Item, Rect, Region, Scene
from diagram.drawing.sheet.blocks import BLOCK_GAP_PT, placed
from diagram.drawing.sheet.cells import Table
from diagram.drawing.sheet.header import Header, sheet_title
from diagram.drawing.sheet.legend import VELOCITY_NOTE, Legend, symbols_used
from diagram.drawing.sheet.notes import Caution, Footer, NextPage, Notes
from diagram.drawing.sheet.pressure import PressureStrip
from diagram.drawing.sheet.tableblock import Tables
from diagram.drawing.sheet.tables import PRESSURE_SOURCES, change_table, planning_table
from diagram.drawing.style import BandStyle, Style, default_style
from diagram.drawing.template.mapfile import Template

# Design margin, own choice: tables that would leave the map less than 45% of the page height
# go to a further page, so the map stays large enough to read lesion extents.
MIN_MAP_SHARE = 0.45


@dataclass(frozen=True)
class _Sheet:
    """What every page of one sheet shares."""

    assessment: Assessment
    spec: PageSpec
    style: Style
    bands: dict[str, BandStyle]
    version: str
    note: str | None
    case: CaseHeader | None

    @property
    def x0(self) -> float:
        return MARGIN_PT

    @property
    def width(self) -> float:
        return self.spec.width_pt - 2 * MARGIN_PT

    def footer(self, page: tuple[int, int]) -> Footer:
        return Footer(self.assessment, self.style, self.version, self.note, page)

    def header(self, page_number: int) -> Header:
        return Header(self.assessment, self.style, self.case, page_number)

    def below(self, block: Header, top: float) -> tuple[list[Item], float]:
        """Return ``block`` set from ``top``, and the y below it."""
        h = block.height(self.width)
        return block.draw(Box(self.x0, top, self.width, h)), top + h

    def above(self, block: Caution | Notes | NextPage, bottom: float) -> tuple[list[Item], float]:
        """Return ``block`` set to end at ``bottom``, and its top."""
        h = block.height(self.width)
        return block.draw(Box(self.x0, bottom - h, self.width, h)), bottom - h


def _boundaries(assessment: Assessment) -> tuple[str, ...]:
    """Return the legend's line on band boundaries: each set's thresholds as its file states them.

    ">=" puts a value exactly on the boundary in the higher band, ">" leaves it in the lower one.
    """
    if not assessment.criteria_rules:
        return ()
    rules = "; ".join(assessment.criteria_rules).replace(">=", "\u2265")
    head = "Band thresholds (\u2265: a value on the boundary goes to the higher band; >: not)"
    return (f"{head}: {rules}.",)


def sheet_tables(assessment: Assessment, bands: Mapping[str, BandStyle]) -> list[Table]:
    """Return the tables a full sheet carries: the planning summary, the change table."""
    out = []
    if assessment.planning:
        grafts = {side: limb.grafts for side, limb in assessment.limbs.items()}
        out.append(planning_table(assessment.planning, bands, grafts))
    if assessment.comparison is not None:
        out.append(change_table(assessment.comparison, bands))
    return out


def _legend(sheet: _Sheet, pressures: bool) -> Legend:
    a = sheet.assessment
    changes = sorted(
        {
            c.change.value
            for c in (a.comparison.segments if a.comparison else ())
            if c.change in BAND_CHANGES
        }
    )
    note = " ".join((VELOCITY_NOTE, *_boundaries(a), *((PRESSURE_SOURCES,) if pressures else ())))
    bands = sheet.bands
    return Legend(list(bands.values()), symbols_used(a, changes), sheet.style, bands, note)


@dataclass
class _Body:
    """Page 1 as it is filled: the room left and the items placed so far."""

    top: float
    bottom: float
    head: list[Item]
    caution: list[Item]
    notes: list[Item]
    tables: list[Item]
    more_pages: list[list[Item]]


def _furniture(sheet: _Sheet, missing: Sequence[str]) -> _Body:
    """Place the header, the caution and the notes of page 1; the room between is the body."""
    spec, style = sheet.spec, sheet.style
    rise = sheet.footer((1, 1)).height(sheet.width)
    top, bottom = MARGIN_PT, spec.height_pt - MARGIN_PT - rise
    head: list[Item] = []
    if spec.furniture:
        head, top = sheet.below(sheet.header(1), top)
    caution, bottom = sheet.above(Caution(style), bottom - 2)
    notes: list[Item] = []
    if spec.furniture or missing:
        block = Notes(sheet.assessment, style, missing, sheet.case, spec.furniture)
        notes, bottom = sheet.above(block, bottom - BLOCK_GAP_PT / 2)
    return _Body(top, bottom, head, caution, notes, [], [])


def _place_tables(sheet: _Sheet, body: _Body, legend_h: float, strip_h: float) -> None:
    """Set the tables above the legend when the map keeps its share, else on further pages."""
    spec, style, width = sheet.spec, sheet.style, sheet.width
    tables = sheet_tables(sheet.assessment, sheet.bands) if spec.furniture else []
    if not tables:
        return
    block = Tables(tables, style, sheet.bands)
    need = block.height(width)
    room = body.bottom - 2 * BLOCK_GAP_PT - legend_h - strip_h - body.top - SIDE_MARK_STRIP_PT
    if room - need >= MIN_MAP_SHARE * (spec.height_pt - 2 * MARGIN_PT):
        body.tables = block.draw(Box(sheet.x0, body.bottom - need, width, need))
        body.bottom -= need
        return
    cont_top = MARGIN_PT + sheet.header(2).height(width)
    rise = sheet.footer((1, 1)).height(width)
    page_bottom = spec.height_pt - MARGIN_PT - rise - 2
    cont_bottom = page_bottom - Caution(style).height(width) - BLOCK_GAP_PT
    body.more_pages = block.paginate(sheet.x0, sheet.x0 + width, cont_top, cont_bottom)
    line = NextPage([t.id for t in tables], style)
    body.tables, body.bottom = sheet.above(line, body.bottom - BLOCK_GAP_PT / 2)


def layout(
    assessment: Assessment,
    template: Template,
    *,
    page: str = "a4",
    version: str,
    generated_note: str | None = None,
    style: Style | None = None,
    case: CaseHeader | None = None,
) -> Scene:
    """Lay out the sheet of one assessment on ``page`` ("a4", "letter" or "map").

    ``case`` makes a teaching sheet: the header shows only the case. Tables that would leave
    the map less than ``MIN_MAP_SHARE`` of the page continue on further pages (``Scene.more``).
    """
    if page not in PAGES:
        raise ValueError(f"page {page!r} is not one of {', '.join(PAGES)}")
    style = style or default_style()
    bands = band_styles(assessment, style)
    sheet = _Sheet(assessment, PAGES[page], style, bands, version, generated_note, case)
    width = sheet.width
    body = _furniture(sheet, not_drawn(assessment, template))
    strip = PressureStrip(assessment, style, bands)
    pressure_h = strip.height(width)
    strip_h = pressure_h + BLOCK_GAP_PT if pressure_h else 0.0
    legend = _legend(sheet, bool(pressure_h))
    legend_h = legend.height(width)
    _place_tables(sheet, body, legend_h, strip_h)
    legend_top = body.bottom - BLOCK_GAP_PT - legend_h
    key = legend.draw(Box(sheet.x0, legend_top, width, legend_h))
    area_bottom = legend_top - BLOCK_GAP_PT - strip_h
    drawn = MapBlock(assessment, template, style, bands).draw(
        Box(sheet.x0, body.top, width, area_bottom - body.top)
    )
    strip = replace(strip, legs=drawn.legs, map_box=drawn.map_box)
    pressures, regions = strip.place(
        Box(sheet.x0, area_bottom + BLOCK_GAP_PT / 2, width, pressure_h)
    )
    count = 1 + len(body.more_pages)
    rest = tuple(
        _further_page(sheet, items, (n, count)) for n, items in enumerate(body.more_pages, start=2)
    )
    return _first_page(sheet, body, drawn, (pressures, regions), key, rest)


def _foot(sheet: _Sheet, page: tuple[int, int]) -> list[Item]:
    footer = sheet.footer(page)
    rise = footer.height(sheet.width)
    bottom = sheet.spec.height_pt - MARGIN_PT
    return footer.draw(Box(sheet.x0, bottom - rise, sheet.width, rise))


def _first_page(
    sheet: _Sheet,
    body: _Body,
    drawn: DrawnMap,
    pressures: tuple[list[Item], tuple[Region, ...]],
    key: list[Item],
    rest: tuple[Scene, ...],
) -> Scene:
    """Return page 1: its items in paint order, where each block lies, the further pages."""
    spec = sheet.spec
    foot = _foot(sheet, (1, 1 + len(rest)))
    items: list[Item] = [
        Rect("page", 0, 0, spec.width_pt, spec.height_pt, fill="#FFFFFF"),
        Group("header", tuple(body.head), role="header"),
        *drawn.layers,
        Group("leaders", drawn.leaders, role="leaders"),
        Group("changes", drawn.changes, role="changes"),
        Group("labels", drawn.labels, role="labels"),
        Group("side-marks", drawn.side_marks, role="side-marks"),
        Group("pressures", tuple(pressures[0]), role="pressures"),
        *key,
        *body.tables,
        Group("notes", tuple(body.notes), role="notes"),
        Group("caution", tuple(body.caution), role="caution"),
        Group("footer", tuple(foot), role="footer"),
    ]
    by_margin = {
        side: [Rect(lb.id, *_xywh(lb.box)) for lb in drawn.label_boxes if lb.side == side]
        for side in ("right", "left")
    }
    blocks = placed(
        [
            ("header", body.head),
            ("map", [*drawn.layers, *drawn.changes, *drawn.side_marks]),
            ("labels-right", by_margin["right"]),
            ("labels-left", by_margin["left"]),
            *((r.id, [Rect(r.id, *_xywh(r.box))]) for r in pressures[1]),
            ("legend", key),
            *((item.id, [item]) for item in body.tables),
            ("notes", body.notes),
            ("caution", body.caution),
            ("footer", foot),
        ]
    )
    return _scene(
        sheet,
        tuple(item for item in items if not (isinstance(item, Group) and not item.items)),
        blocks,
        (1, 1 + len(rest)),
        drawn=drawn,
        regions=pressures[1],
        more=rest,
    )


def _further_page(sheet: _Sheet, body: list[Item], page: tuple[int, int]) -> Scene:
    """Return a further page: a short header, the tables that did not fit, caution and footer."""
    spec = sheet.spec
    head, _ = sheet.below(sheet.header(page[0]), MARGIN_PT)
    foot = _foot(sheet, page)
    rise = sheet.footer(page).height(sheet.width)
    warn, _ = sheet.above(Caution(sheet.style), spec.height_pt - MARGIN_PT - rise - 2)
    items: list[Item] = [
        Rect("page", 0, 0, spec.width_pt, spec.height_pt, fill="#FFFFFF"),
        Group("header", tuple(head), role="header"),
        *body,
        Group("caution", tuple(warn), role="caution"),
        Group("footer", tuple(foot), role="footer"),
    ]
    blocks = placed(
        [
            ("header", head),
            *((item.id, [item]) for item in body),
            ("caution", warn),
            ("footer", foot),
        ]
    )
    return _scene(sheet, tuple(items), blocks, page)


def _scene(
    sheet: _Sheet,
    items: tuple[Item, ...],
    blocks: tuple[Block, ...],
    page: tuple[int, int],
    *,
    drawn: DrawnMap | None = None,
    regions: tuple[Region, ...] = (),
    more: tuple[Scene, ...] = (),
) -> Scene:
    spec = sheet.spec
    empty = Box(0, 0, 0, 0)  # a further page holds no map
    return Scene(
        page=spec.name,
        width_pt=spec.width_pt,
        height_pt=spec.height_pt,
        unit=spec.unit,
        font_family=sheet.style.font_family,
        bands=tuple(sheet.bands.values()),
        items=items,
        map_box=drawn.map_box if drawn else empty,
        vessel_box=drawn.vessel_box if drawn else empty,
        label_boxes=drawn.label_boxes if drawn else (),
        pressure_regions=regions,
        blocks=blocks,
        page_number=page[0],
        page_count=page[1],
        more=more,
        title=sheet_title(sheet.assessment, sheet.style, sheet.case),
    )


def _xywh(box: Box) -> tuple[float, float, float, float]:
    return box.x, box.y, box.w, box.h
