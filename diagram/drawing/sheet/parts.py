"""The sheet around the map: page sizes, header, legend, measurement notes, caution and footer.

Each block is laid out from the page's edge inwards and returns its items together with the
coordinate where the next block may start, so that ``layout`` stacks them without overlap.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from diagram.anatomy import Side
from diagram.assess.results import Assessment
from diagram.caution import CAUTION
from diagram.drawing.scene import (
    Anchor,
    Block,
    Box,
    CaseHeader,
    Circle,
    Group,
    Item,
    Line,
    PathCommand,
    PathItem,
    Rect,
    Region,
    Scene,
    Text,
    Weight,
    bounds,
    make_id,
)
from diagram.drawing.sheet.tables import (
    CHANGE_WORDS,
    Table,
    box_height,
    change_mark,
    draw_box,
    draw_table,
    notes_height,
    pressure_entries,
    row_heights,
    table_head_height,
)
from diagram.drawing.style import NOT_ASSESSED, BandStyle, Style
from diagram.drawing.textmetrics import ellipsize, line_extents, text_width, wrap
from diagram.reading.study import Study

PT_PER_MM = 72.0 / 25.4
MARGIN_PT = 10 * PT_PER_MM
BLOCK_GAP_PT = 7.0
PRESSURE_BOX_MAX_PT = 250.0

VELOCITY_NOTE = (
    "PSV, EDV in cm/s. Vr = PSV at the lesion ÷ PSV of the reference segment upstream "
    "(basis in the results file)."
)


@dataclass(frozen=True)
class PageSpec:
    """A sheet size and what it carries."""

    name: str
    width_pt: float
    height_pt: float
    unit: str  # the unit the SVG states its size in
    furniture: bool  # header and measurement notes (the map-only sheet omits them)


PAGES: Mapping[str, PageSpec] = {
    "a4": PageSpec("a4", 210 * PT_PER_MM, 297 * PT_PER_MM, "mm", True),
    "letter": PageSpec("letter", 8.5 * 72, 11 * 72, "in", True),
    "map": PageSpec("map", 180 * PT_PER_MM, 240 * PT_PER_MM, "mm", False),
}


# --------------------------------------------------------------------------- sheet furniture


KIND = "Lower-limb arterial duplex"


def _title_line(
    title: str | None, right: str, style: Style, x0: float, x1: float, y: float
) -> tuple[list[Item], float]:
    """Return a bold title at the left and a muted note at the right; the y below them."""
    asc, desc = line_extents(style.header_title_pt, True)
    baseline = y + asc
    items: list[Item] = [
        Text(
            "header-kind",
            x1,
            baseline,
            right,
            style.header_pt,
            anchor=Anchor.END,
            fill=style.muted_ink,
        )
    ]
    if title:
        room = x1 - x0 - text_width(right, style.header_pt) - 12
        shown = ellipsize(title, style.header_title_pt, room, True)
        items.append(
            Text(
                "header-site",
                x0,
                baseline,
                shown,
                style.header_title_pt,
                Weight.BOLD,
                fill=style.text_ink,
            )
        )
    return items, baseline + desc + 2


def _fields(
    rows: Sequence[Sequence[tuple[str, str | None]]], style: Style, x0: float, x1: float, y: float
) -> tuple[list[Item], float]:
    """Return rows of "name value" pairs (only those with a value), wrapping at ``x1``."""
    items: list[Item] = []
    h_asc, h_desc = line_extents(style.header_pt)
    line_h = h_asc + h_desc + 1.5
    for r, row in enumerate(rows):
        present = [(k, v) for k, v in row if v]
        if not present:
            continue
        x, baseline = x0, y + h_asc
        for k, (name, value) in enumerate(present):
            name_w = text_width(name + "  ", style.header_pt)
            if k and x + name_w + 40 > x1:
                x, y = x0, y + line_h
                baseline = y + h_asc
            items.append(
                Text(
                    make_id("header", r, k, "name"),
                    x,
                    baseline,
                    name,
                    style.header_pt,
                    fill=style.muted_ink,
                )
            )
            shown = ellipsize(str(value), style.header_pt, x1 - x - name_w, True)
            items.append(
                Text(
                    make_id("header", r, k, "value"),
                    x + name_w,
                    baseline,
                    shown,
                    style.header_pt,
                    Weight.BOLD,
                    fill=style.text_ink,
                )
            )
            x += name_w + text_width(shown, style.header_pt, True) + 14
        y += line_h
    return items, y


def _rule(
    items: list[Item], style: Style, x0: float, x1: float, y: float
) -> tuple[list[Item], float]:
    y += 2
    items.append(Line("header-rule", ((x0, y), (x1, y)), style.rule_ink, 0.5))
    return items, y + BLOCK_GAP_PT


def header(
    assessment: Assessment,
    style: Style,
    x0: float,
    x1: float,
    y: float,
    case: CaseHeader | None = None,
    *,
    page_number: int = 1,
) -> tuple[list[Item], float]:
    """Return the header items and the y below them; each field only when the study has it.

    With ``case`` (a teaching sheet) only the case id, year, age and sex are shown. A further
    page repeats who the sheet is about on one line (and ``page_number`` says it continues).
    """
    more = page_number > 1
    right = KIND if not more else f"{KIND} · continued"
    if case is not None:
        items, y = _title_line(f"Teaching case {case.case_id}", right, style, x0, x1, y)
        row = (
            ("Year", None if case.year is None else str(case.year)),
            ("Age", case.age),
            ("Sex", case.sex),
        )
        fields, y = _fields((row,), style, x0, x1, y)
        return _rule(items + fields, style, x0, x1, y)
    study = assessment.study
    p, e = study.patient, study.exam
    items, y = _title_line(style.lab_name or study.exam.site, right, style, x0, x1, y)
    who = (
        ("Patient", p.name),
        ("ID", p.id),
        ("Born", p.birth_date.isoformat() if p.birth_date else None),
        ("Sex", p.sex),
    )
    exam = (("Exam", e.date.isoformat() if e.date else None), ("Accession", e.accession))
    rows = ((*who[:3], exam[0]),) if more else (who, exam, (("Indication", e.indication),))
    fields, y = _fields(rows, style, x0, x1, y)
    return _rule(items + fields, style, x0, x1, y)


def text_block(
    base: str,
    lines: Sequence[tuple[str, bool]],
    style: Style,
    size: float,
    x: float,
    bottom: float,
    fill: str,
) -> tuple[list[Item], float]:
    """Return lines set from the top so that the last one ends at ``bottom``, and their top."""
    asc, desc = line_extents(size)
    line_h = asc + desc + 1.0
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


def footer(
    assessment: Assessment,
    version: str,
    note: str | None,
    style: Style,
    x0: float,
    x1: float,
    bottom: float,
    page: tuple[int, int] = (1, 1),
) -> tuple[list[Item], float]:
    """Return the footer (criteria sets at the left; page, note and version at the right).

    The criteria sets are never cut: they wrap, at a width that leaves room for any page number,
    so that every page of a sheet has the same footer height.
    """
    asc, desc = line_extents(style.small_pt)
    line_h = asc + desc + 1.0
    right = f"limbchart {version}" if not note else f"{note} · limbchart {version}"
    room = x1 - x0 - text_width(f"page 99 of 99 · {right}", style.small_pt) - 12
    if page[1] > 1:
        right = f"page {page[0]} of {page[1]} · {right}"
    sets = assessment.criteria_used or ((assessment.criteria_name, assessment.criteria_title, ""),)
    left = "Criteria: " + "; ".join(f"{title} ({name})" for name, title, _ in sets)
    lines = wrap(left, style.small_pt, room)
    baseline = bottom - desc
    items: list[Item] = [
        Text(
            make_id("footer", "criteria", k) if k else "footer-criteria",
            x0,
            baseline - (len(lines) - 1 - k) * line_h,
            text,
            style.small_pt,
            fill=style.muted_ink,
        )
        for k, text in enumerate(lines)
    ]
    items.append(
        Text(
            "footer-version",
            x1,
            baseline,
            right,
            style.small_pt,
            anchor=Anchor.END,
            fill=style.muted_ink,
        )
    )
    return items, bottom - asc - desc - (len(lines) - 1) * line_h


def _free_text(study: Study) -> list[str]:
    """Return the study's own words (identifiers, notes, comments) a teaching sheet never shows."""
    p, e = study.patient, study.exam
    words = [p.name, p.id, e.accession, e.site, e.operator, e.referrer, e.indication, study.notes]
    words += [e.study_uid]
    for limb in study.limbs.values():
        words += [f.comment for f in limb.segments.values()]
        words += [les.comment for les in limb.lesions]
    return sorted({w.strip() for w in words if w and len(w.strip()) >= 3})


def footer_height(
    assessment: Assessment, version: str, note: str | None, style: Style, x0: float, x1: float
) -> float:
    """Return the height of the footer (the same on every page of a sheet)."""
    return -footer(assessment, version, note, style, x0, x1, 0.0, (99, 99))[1]


def caution(style: Style, x0: float, x1: float, bottom: float) -> tuple[list[Item], float]:
    """Return the fixed caution, set to end at ``bottom``, and its top."""
    lines = [(t, False) for t in wrap(CAUTION, style.caution_pt, x1 - x0)]
    return text_block("caution", lines, style, style.caution_pt, x0, bottom, style.text_ink)


def notes(
    assessment: Assessment,
    style: Style,
    x0: float,
    x1: float,
    bottom: float,
    extra: Sequence[str] = (),
    case: CaseHeader | None = None,
    *,
    warnings: bool = True,
) -> tuple[list[Item], float]:
    """Return the measurement notes: ``extra`` lines in full, the first few warnings, a count.

    A teaching sheet (``case``) leaves out any line that quotes the study's own text.
    """
    messages = [f.message for f in assessment.warnings] if warnings else []
    withheld = 0
    if case is not None:
        quoted = _free_text(assessment.study)
        kept = [m for m in messages if not any(q.casefold() in m.casefold() for q in quoted)]
        withheld, messages = len(messages) - len(kept), kept
    if not messages and not extra and not withheld:
        return [], bottom
    shown = messages[: style.max_warnings]
    lines: list[tuple[str, bool]] = [("Measurement notes", True)]
    for message in (*extra, *shown):
        wrapped = wrap(message, style.small_pt, x1 - x0 - 10)
        lines.extend((("• " if k == 0 else "  ") + text, False) for k, text in enumerate(wrapped))
    if len(messages) > len(shown):
        lines.append((f"+{len(messages) - len(shown)} more in the results file", False))
    if withheld:
        lines.append((f"{withheld} note(s) left out: they quote the study's own text", False))
    items, top = text_block("notes", lines, style, style.small_pt, x0, bottom, style.warning_ink)
    return items, top


def _symbol(
    kind: str, x: float, y: float, w: float, h: float, style: Style, bands: Mapping[str, BandStyle]
) -> Item:
    """Draw a legend symbol in the box (x, y, w, h)."""
    base = make_id("legend", "symbol", kind)
    lumen = bands.get("normal", bands[NOT_ASSESSED])
    tube = Rect(
        f"{base}-tube", x, y + 1, w, h - 2, fill=lumen.tint, stroke=lumen.outline, stroke_width=0.5
    )
    mid = y + h / 2
    parts: list[Item]
    if kind == "ticks":
        parts = [
            tube,
            *(
                Line(f"{base}-{k}", ((tx, y - 1), (tx, y + h + 1)), style.tick_ink, style.tick_pt)
                for k, tx in enumerate((x + 5, x + w - 5))
            ),
        ]
    elif kind == "reconstitution":
        cx = x + w / 2
        parts = [
            tube,
            Line(f"{base}-bar", ((cx, y - 2), (cx, y + h + 2)), style.marker_ink, 1.0),
            Circle(f"{base}-ring", cx, mid, h / 2 + 1, stroke=style.marker_ink, stroke_width=1.0),
        ]
    elif kind == "stent":
        step = w / 8
        zig = tuple((x + k * step, mid + (2.6 if k % 2 else -2.6)) for k in range(9))
        zag = tuple((px, 2 * mid - py) for px, py in zig)
        parts = [
            tube,
            Line(f"{base}-a", zig, style.stent_ink, style.stent_pt),
            Line(f"{base}-b", zag, style.stent_ink, style.stent_pt),
        ]
    elif kind in CHANGE_WORDS:
        return change_mark(base, kind, x + w / 2, mid, style)
    else:  # graft
        cmds: tuple[PathCommand, ...] = (("M", (x, mid)), ("L", (x + w, mid)))
        parts = [
            PathItem(
                f"{base}-casing", cmds, stroke=style.graft_ink, stroke_width=style.graft_pt + 1.4
            ),
            PathItem(f"{base}-lumen", cmds, stroke=style.graft_fill, stroke_width=style.graft_pt),
        ]
    return Group(base, tuple(parts), role="legend-symbol")


SYMBOL_LABELS: Mapping[str, str] = {
    "ticks": "lesion extent",
    "reconstitution": "reconstitution",
    "stent": "stent",
    "graft": "bypass graft",
    **CHANGE_WORDS,
}


def legend(
    bands: Sequence[BandStyle],
    symbols: Sequence[str],
    style: Style,
    x0: float,
    x1: float,
    bottom: float,
    all_bands: Mapping[str, BandStyle],
    note: str = VELOCITY_NOTE,
) -> tuple[list[Item], float]:
    """Return the legend (band swatches, symbols in use, ``note``) ending at ``bottom``."""
    sw_w, sw_h, row_h = 22.0, 9.0, 14.0
    entries = [("band", b.id, b.label) for b in bands]
    entries += [("symbol", kind, SYMBOL_LABELS[kind]) for kind in symbols]
    placed: list[tuple[int, float, tuple[str, str, str]]] = []
    row, x = 0, x0
    for entry in entries:
        w = sw_w + 4 + text_width(entry[2], style.legend_pt) + 12
        if x > x0 and x + w > x1:
            row, x = row + 1, x0
        placed.append((row, x, entry))
        x += w
    note_items, note_top = text_block(
        "legend-note",
        [(t, False) for t in wrap(note, style.small_pt, x1 - x0)],
        style,
        style.small_pt,
        x0,
        bottom,
        style.muted_ink,
    )
    top = note_top - 2 - (row + 1) * row_h
    items: list[Item] = []
    for r, ex, (what, key, label) in placed:
        sy = top + r * row_h + (row_h - sw_h) / 2
        if what == "band":
            b = all_bands[key]
            items.append(
                Rect(
                    make_id("legend", "swatch", key),
                    ex,
                    sy,
                    sw_w,
                    sw_h,
                    band=key,
                    stroke=b.outline,
                    stroke_width=0.6,
                    dash=b.outline_dash,
                )
            )
        else:
            items.append(_symbol(key, ex, sy, sw_w, sw_h, style, all_bands))
        items.append(
            Text(
                make_id("legend", "label", what, key),
                ex + sw_w + 4,
                sy + sw_h / 2 + 0.36 * style.legend_pt,
                label,
                style.legend_pt,
                fill=style.text_ink,
            )
        )
    rule = Line("legend-rule", ((x0, top - 3), (x1, top - 3)), style.rule_ink, 0.5)
    return [rule, Group("legend", (*items, *note_items), role="legend")], top - 3


def symbols_used(assessment: Assessment, changes: Sequence[str] = ()) -> list[str]:
    """Return the map symbols in use, in legend order (``changes``: change kinds marked)."""
    lesions = [les for limb in assessment.limbs.values() for les in limb.lesions]
    limbs = [assessment.study.limb(side) for side in (Side.RIGHT, Side.LEFT)]
    used = {
        "ticks": any(les.spans for les in lesions),
        "reconstitution": any(les.reconstitution is not None for les in lesions),
        "stent": any(limb.stents for limb in limbs),
        "graft": any(limb.grafts for limb in limbs),
    }
    return [kind for kind in SYMBOL_LABELS if used.get(kind) or kind in changes]


# --------------------------------------------------------------------------- ankle pressures


def has_pressures(assessment: Assessment) -> bool:
    """Return True when any ankle or toe pressure was measured (both legs then get a box)."""
    pressures = assessment.study.pressures
    return any(
        v is not None
        for side in (Side.RIGHT, Side.LEFT)
        for v in (pressures.limb(side).pt, pressures.limb(side).dp, pressures.limb(side).toe)
    )


def pressure_box_width(x0: float, x1: float) -> float:
    """Return the width of one leg's pressure box: up to half the page, less a gap."""
    return min(PRESSURE_BOX_MAX_PT, (x1 - x0) / 2 - 4)


def pressure_height(assessment: Assessment, style: Style, x0: float, x1: float) -> float:
    """Return the height of the ankle pressure strip (0 without pressures)."""
    if not has_pressures(assessment):
        return 0.0
    width = pressure_box_width(x0, x1)
    return max(
        box_height(pressure_entries(assessment.indices.get(side)), width, style)
        for side in (Side.RIGHT, Side.LEFT)
    )


def pressure_boxes(
    assessment: Assessment,
    drawn: Mapping[str, Box],
    map_box: Box,
    span: tuple[float, float, float, float],
    style: Style,
    bands: Mapping[str, BandStyle],
) -> tuple[list[Item], tuple[Region, ...]]:
    """Return each leg's pressure box, under its ankle, in ``span`` (x0, x1, top, height)."""
    x0, x1, top, height = span
    if not height:
        return [], ()
    width = pressure_box_width(x0, x1)
    mid = (x0 + x1) / 2
    items: list[Item] = []
    regions = []
    for side in (Side.RIGHT, Side.LEFT):
        leg = drawn.get(side.value)
        centre = (
            leg.x + leg.w / 2
            if leg
            else map_box.x + map_box.w * (0.25 if side is Side.RIGHT else 0.75)
        )
        lo, hi = (x0, mid - 4) if side is Side.RIGHT else (mid + 4, x1)
        x = _clamp(centre - width / 2, lo, hi - width)
        box = Box(x, top, width, height)
        base = make_id("pressure", side.value)
        entries = pressure_entries(assessment.indices.get(side))
        title = f"{side.value.capitalize()} leg"
        items += draw_box(base, title, entries, box, style, bands)
        regions.append(Region(base, side.value, box))
    return items, tuple(regions)


def _clamp(v: float, lo: float, hi: float) -> float:
    return lo if hi < lo else min(max(v, lo), hi)


# --------------------------------------------------------------------------- tables on the page


def tables_height(tables: Sequence[Table], x0: float, x1: float, style: Style) -> float:
    """Return the height the tables take set one under the other (with the gaps between)."""
    total = 0.0
    for table in tables:
        rows = sum(row_heights(table, x0, x1, style))
        total += table_head_height(style) + rows + notes_height(table, x0, x1, style) + BLOCK_GAP_PT
    return total


def place_tables(
    tables: Sequence[Table],
    x0: float,
    x1: float,
    top: float,
    style: Style,
    bands: Mapping[str, BandStyle],
) -> tuple[list[Item], float]:
    """Return the tables set one under the other from ``top``, and the y below the last."""
    items: list[Item] = []
    y = top
    for table in tables:
        more, y = draw_table(
            table, range(len(table.rows)), x0, x1, y, style, bands, with_notes=True
        )
        items += more
        y += BLOCK_GAP_PT
    return items, y


def flow_tables(
    tables: Sequence[Table],
    x0: float,
    x1: float,
    top: float,
    bottom: float,
    style: Style,
    bands: Mapping[str, BandStyle],
) -> list[list[Item]]:
    """Return the tables set on as many pages as they need (rows kept whole), page by page."""
    pages: list[list[Item]] = [[]]
    y = top
    for table in tables:
        heights = row_heights(table, x0, x1, style)
        foot = notes_height(table, x0, x1, style)
        head = table_head_height(style)
        i, continued = 0, False
        while i < len(heights):
            room = bottom - y - head
            j, used = i, 0.0
            while j < len(heights) and used + heights[j] <= room:
                used, j = used + heights[j], j + 1
            if j == len(heights) and used + foot > room and j - i > 1:
                j -= 1  # keep the last row with the table's notes
            if j == i and pages[-1]:
                pages.append([])
                y = top
                continue
            j = max(j, i + 1)  # a row taller than a page is set anyway
            last = j == len(heights)
            items, y = draw_table(
                table, range(i, j), x0, x1, y, style, bands, with_notes=last, continued=continued
            )
            pages[-1] += items
            y += BLOCK_GAP_PT
            i, continued = j, True
    return pages


def see_next_page(
    tables: Sequence[Table], style: Style, x0: float, x1: float, bottom: float
) -> tuple[list[Item], float]:
    """Return the line that sends the reader to page 2 for the tables, ending at ``bottom``."""
    names = {"planning": "planning summary", "changes": "change since the prior exam"}
    what = " and ".join(names.get(t.id, t.id) for t in tables)
    line = [(f"{what[0].upper()}{what[1:]}: page 2.", True)]
    items, top = text_block("next-page", line, style, style.table_pt, x0, bottom, style.text_ink)
    return [Group("next-page", tuple(items), role="next-page")], top


# --------------------------------------------------------------------------- pages


def blocks(named: Sequence[tuple[str, Sequence[Item]]]) -> tuple[Block, ...]:
    out = []
    for name, items in named:
        found = bounds(Group(name, tuple(items)))
        if found is not None:
            out.append(Block(name, found))
    return tuple(out)


def continuation(
    assessment: Assessment,
    spec: PageSpec,
    style: Style,
    bands: Mapping[str, BandStyle],
    body: list[Item],
    page: tuple[int, int],
    version: str,
    generated_note: str | None,
    case: CaseHeader | None,
) -> Scene:
    """Return a further page: a short header, the tables that did not fit, caution and footer."""
    x0, x1 = MARGIN_PT, spec.width_pt - MARGIN_PT
    head, _ = header(assessment, style, x0, x1, MARGIN_PT, case, page_number=page[0])
    bottom = spec.height_pt - MARGIN_PT
    foot, _ = footer(assessment, version, generated_note, style, x0, x1, bottom, page)
    rise = footer_height(assessment, version, generated_note, style, x0, x1)
    warn, _ = caution(style, x0, x1, bottom - rise - 2)
    items: list[Item] = [
        Rect("page", 0, 0, spec.width_pt, spec.height_pt, fill="#FFFFFF"),
        Group("header", tuple(head), role="header"),
        *body,
        Group("caution", tuple(warn), role="caution"),
        Group("footer", tuple(foot), role="footer"),
    ]
    found = blocks(
        [
            ("header", head),
            *((item.id, [item]) for item in body),
            ("caution", warn),
            ("footer", foot),
        ]
    )
    empty = Box(0, 0, 0, 0)
    return Scene(
        page=spec.name,
        width_pt=spec.width_pt,
        height_pt=spec.height_pt,
        unit=spec.unit,
        font_family=style.font_family,
        bands=tuple(bands.values()),
        items=tuple(items),
        map_box=empty,
        vessel_box=empty,
        label_boxes=(),
        pressure_regions=(),
        blocks=found,
        page_number=page[0],
        page_count=page[1],
    )
