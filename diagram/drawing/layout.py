"""Lay out a sheet: the graded map with its margin labels, inside the sheet's furniture.

``layout`` turns an Assessment and a map Template into a Scene of page-point primitives. The map
is the template scaled to fit its area (aspect kept), patient's right on the viewer's left. Each
vessel is a tube in its segment's band; each lesion is painted over it from ``start_frac`` to
``end_frac`` of each segment it touches (arc length s = frac x path length), with ticks at its
ends; a segment whose band changed since the prior exam gets the change symbol beside it.
Margin labels are placed by ``diagram.drawing.labels``; the blocks around the map (header, ankle
pressure boxes, legend, tables, notes, caution, footer) come from ``diagram.drawing.sheet.parts``
and ``diagram.drawing.sheet.tables``. Blocks are stacked from the page's edges inwards and the
map takes the rest; tables that would leave the map too small continue on further pages
(``Scene.more``).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field

from diagram.anatomy import SEGMENTS, Side, vessel_key
from diagram.assess.compare import BAND_CHANGES, SegmentChange, changed_segments
from diagram.assess.results import Assessment, LesionResult
from diagram.caution import CAUTION
from diagram.drawing.labels import (
    GUTTER_PT,
    chain,
    choose_columns,
    frame,
    lesion_label,
    margin_width,
    not_drawn,
    pack_1d,
    place_labels,
    segment_label,
    segment_results,
    vessel_order,
)
from diagram.drawing.scene import (
    Anchor,
    Box,
    CaseHeader,
    Circle,
    Fit,
    Group,
    Item,
    Line,
    PathCommand,
    PathItem,
    Point,
    Polygon,
    Rect,
    Scene,
    Text,
    Weight,
    make_id,
    path_commands,
)
from diagram.drawing.sheet import parts as sheet
from diagram.drawing.sheet.parts import (
    BLOCK_GAP_PT,
    MARGIN_PT,
    PAGES,
    VELOCITY_NOTE,
    PageSpec,
)
from diagram.drawing.sheet.tables import (
    PRESSURE_SOURCES,
    Table,
    change_mark,
    change_table,
    planning_table,
)
from diagram.drawing.style import NOT_ASSESSED, BandStyle, Style, default_style
from diagram.drawing.template.mapfile import Template, Vessel

__all__ = [
    "CAUTION",
    "PAGES",
    "VELOCITY_NOTE",
    "PageSpec",
    "layout",
    "lesion_label",
    "pack_1d",
    "path_commands",
    "segment_label",
]

SIDE_MARK_STRIP_PT = 16.0
# Design margin, own choice: tables that would leave the map less than 45% of the page height
# go to a further page, so the map stays large enough to read lesion extents.
MIN_MAP_SHARE = 0.45
STEP_PT = 2.0  # spacing of outline points along a vessel, on the page
MIN_LESION_PT = 2.0  # shortest lesion still drawn visibly


# --------------------------------------------------------------------------- the map


def _bands(assessment: Assessment, style: Style) -> dict[str, BandStyle]:
    out = {b.id: style.band_for(b.id, b.rank, b.label, b.look) for b in assessment.bands}
    if NOT_ASSESSED not in out:
        out[NOT_ASSESSED] = style.band_for(NOT_ASSESSED)
    return out


def _band(bands: dict[str, BandStyle], style: Style, band_id: str) -> str:
    """Return ``band_id``, registering a style for an id the criteria set did not list."""
    if band_id not in bands:
        bands[band_id] = style.band_for(band_id)
    return band_id


def _half_width(vessel: Vessel, style: Style) -> float:
    width = vessel.diameter_mm * style.tube_pt_per_mm
    return min(max(width, style.tube_min_pt), style.tube_max_pt) / 2


def _outline(vessel: Vessel, fit: Fit, s0: float, s1: float, hw: float) -> tuple[Point, ...]:
    pts = vessel.geometry.outline(s0, s1, hw / fit.scale, STEP_PT / fit.scale)
    return tuple(fit.point(p) for p in pts)


def _bbox(points: Sequence[Point]) -> Box:
    xs = [p[0] for p in points]
    ys = [p[1] for p in points]
    return Box(min(xs), min(ys), max(xs) - min(xs), max(ys) - min(ys))


def _across(vessel: Vessel, fit: Fit, s: float, half: float) -> tuple[Point, Point]:
    (x, y), (nx, ny) = frame(vessel, fit, s)
    return (x - nx * half, y - ny * half), (x + nx * half, y + ny * half)


def _clamp(v: float, lo: float, hi: float) -> float:
    return lo if hi < lo else min(max(v, lo), hi)


def _visible_span(s0: float, s1: float, length: float, fit: Fit) -> tuple[float, float]:
    least = MIN_LESION_PT / fit.scale
    if s1 - s0 >= least:
        return s0, s1
    mid = _clamp((s0 + s1) / 2, least / 2, length - least / 2)
    return max(0.0, mid - least / 2), min(length, mid + least / 2)


@dataclass
class _MapOut:
    tubes: list[Item] = field(default_factory=list)
    lesions: list[Item] = field(default_factory=list)
    overlays: list[Item] = field(default_factory=list)  # stents, grafts
    marks: list[Item] = field(default_factory=list)  # ticks, reconstitution symbols
    boxes: dict[str, Box] = field(default_factory=dict)  # drawn extent per side ("" = aorta)
    half_widths: dict[str, float] = field(default_factory=dict)


def _draw_map(
    assessment: Assessment, template: Template, fit: Fit, style: Style, bands: dict[str, BandStyle]
) -> _MapOut:
    out = _MapOut()
    results = segment_results(assessment)

    def grow(side: str, box: Box) -> None:
        out.boxes[side] = out.boxes[side].union(box) if side in out.boxes else box

    for key in sorted(template.vessels, key=vessel_order):
        vessel = template.vessels[key]
        res = results.get(key)
        # the lumen shows the segment's own sample; its lesions are drawn over it to scale
        band = _band(bands, style, (res.base_band or res.band) if res else NOT_ASSESSED)
        hw = _half_width(vessel, style)
        out.half_widths[key] = hw
        pts = _outline(vessel, fit, 0.0, vessel.geometry.length(), hw)
        grow(vessel.side or "", _bbox(pts))
        look = bands[band]
        out.tubes.append(
            Polygon(
                make_id("vessel", key),
                pts,
                band=band,
                stroke=look.outline,
                stroke_width=style.tube_outline_pt,
                dash=look.outline_dash,
            )
        )
    for side in (Side.RIGHT, Side.LEFT):
        limb = assessment.limbs.get(side)
        if limb is not None:
            for lesion in limb.lesions:
                _draw_lesion(lesion, template, fit, style, bands, out)
        _draw_stents(assessment, side, template, fit, style, out)
        _draw_grafts(assessment, side, template, fit, style, out, grow)
    return out


def _draw_lesion(
    lesion: LesionResult,
    template: Template,
    fit: Fit,
    style: Style,
    bands: dict[str, BandStyle],
    out: _MapOut,
) -> None:
    band = _band(bands, style, lesion.band)
    look = bands[band]
    stretch: list[tuple[Vessel, float, float]] = []
    for span in lesion.spans:
        vessel = template.vessels.get(vessel_key(lesion.side, span.segment))
        if vessel is None:  # not on this map: listed in the notes
            continue
        length = vessel.geometry.length()
        s0, s1 = sorted((span.start_frac * length, span.end_frac * length))
        s0, s1 = _visible_span(max(0.0, s0), min(length, s1), length, fit)
        stretch.append((vessel, s0, s1))
    base = ("lesion", lesion.side.value, lesion.index)
    for j, (vessel, s0, s1) in enumerate(stretch):
        hw = out.half_widths.get(vessel.key, _half_width(vessel, style))
        out.lesions.append(
            Polygon(
                make_id(*base, "span", j),
                _outline(vessel, fit, s0, s1, hw),
                band=band,
                stroke=look.outline,
                stroke_width=style.tube_outline_pt * 1.4,
            )
        )
    if stretch:
        first, last = stretch[0], stretch[-1]
        ends = (
            ("start", first[0], first[1], lesion.spans[0]),
            ("end", last[0], last[2], lesion.spans[-1]),
        )
        for end, vessel, s, span in ends:
            if vessel.segment != span.segment:
                continue  # the lesion runs on off the map: no tick where the map ends
            hw = out.half_widths.get(vessel.key, _half_width(vessel, style))
            out.marks.append(
                Line(
                    make_id(*base, "tick", end),
                    _across(vessel, fit, s, hw + 2.2),
                    style.tick_ink,
                    style.tick_pt,
                )
            )
    point = lesion.reconstitution
    vessel_back = template.vessels.get(vessel_key(lesion.side, point.segment)) if point else None
    if point is not None and vessel_back is not None:
        vessel = vessel_back
        s = point.start_frac * vessel.geometry.length()
        hw = out.half_widths.get(vessel.key, _half_width(vessel, style))
        (x, y), _ = frame(vessel, fit, s)
        ring = hw + 1.8
        out.marks.append(
            Group(
                make_id(*base, "reconstitution"),
                (
                    Line(
                        make_id(*base, "reconstitution", "bar"),
                        _across(vessel, fit, s, ring + 2.6),
                        style.marker_ink,
                        1.0,
                    ),
                    Circle(
                        make_id(*base, "reconstitution", "ring"),
                        x,
                        y,
                        ring,
                        stroke=style.marker_ink,
                        stroke_width=1.0,
                    ),
                ),
                role="reconstitution",
            )
        )


def _draw_stents(
    assessment: Assessment, side: Side, template: Template, fit: Fit, style: Style, out: _MapOut
) -> None:
    for i, stent in enumerate(assessment.study.limb(side).stents):
        path = chain(stent.from_, stent.to)
        vessels = [template.vessels.get(vessel_key(side, seg)) for seg in path]
        start_cm = stent.from_cm or 0.0
        left_cm = stent.length_cm if stent.length_cm is not None else math.inf
        for j, vessel in enumerate(vessels):
            if vessel is None:  # off the map: its cm are counted in the template's terms below
                seg = path[j]
                left_cm -= SEGMENTS[seg].length_cm - (start_cm if j == 0 else 0.0)
                if left_cm <= 0:
                    break
                continue
            length = vessel.geometry.length()
            per_cm = length / vessel.length_cm if vessel.length_cm > 0 else 0.0
            s0 = min(start_cm * per_cm, length) if j == 0 else 0.0
            s1 = min(length, s0 + left_cm * per_cm) if per_cm else length
            left_cm -= (s1 - s0) / per_cm if per_cm else 0.0
            if s1 > s0:
                _mesh(
                    make_id("stent", side.value, i, j),
                    vessel,
                    fit,
                    s0,
                    s1,
                    out.half_widths.get(vessel.key, _half_width(vessel, style)),
                    style,
                    out.overlays,
                )
            if left_cm <= 0:
                break


def _mesh(
    base: str,
    vessel: Vessel,
    fit: Fit,
    s0: float,
    s1: float,
    hw: float,
    style: Style,
    into: list[Item],
) -> None:
    """Draw a stent as two crossing zigzags inside the tube, with bars at its ends."""
    half_period = 3.6 / fit.scale  # sparse enough to leave the band texture readable
    n = max(2, math.ceil((s1 - s0) / half_period))
    zig: list[Point] = []
    zag: list[Point] = []
    for k in range(n + 1):
        s = s0 + (s1 - s0) * k / n
        (x, y), (nx, ny) = frame(vessel, fit, s)
        off = 0.72 * hw * (1 if k % 2 else -1)
        zig.append((x + nx * off, y + ny * off))
        zag.append((x - nx * off, y - ny * off))
    halo = style.stent_pt + 0.6  # a pale rim keeps the mesh visible on a dark (occluded) lumen
    parts: list[Item] = []
    for name, pts in (("a", zig), ("b", zag)):
        parts.append(Line(f"{base}-{name}-halo", tuple(pts), style.graft_fill, halo))
    for name, pts in (("a", zig), ("b", zag)):
        parts.append(Line(f"{base}-{name}", tuple(pts), style.stent_ink, style.stent_pt))
    for name, s in (("p", s0), ("d", s1)):
        parts.append(
            Line(
                f"{base}-{name}",
                _across(vessel, fit, s, hw * 0.9),
                style.stent_ink,
                style.stent_pt * 2,
            )
        )
    into.append(Group(base, tuple(parts), role="stent"))


def _draw_grafts(
    assessment: Assessment,
    side: Side,
    template: Template,
    fit: Fit,
    style: Style,
    out: _MapOut,
    grow: Callable[[str, Box], None],
) -> None:
    outward = -1.0 if side is Side.RIGHT else 1.0  # the patient's right is the viewer's left
    for i, graft in enumerate(assessment.study.limb(side).grafts):
        a = template.vessels.get(vessel_key(side, graft.from_))
        b = template.vessels.get(vessel_key(side, graft.to))
        if a is None or b is None:  # an end off the map: listed in the notes
            continue
        p0, _ = frame(a, fit, a.geometry.length() * 0.5)
        p3, _ = frame(b, fit, b.geometry.length() * 0.5)
        bulge = outward * (
            max(out.half_widths.get(a.key, 4.0), out.half_widths.get(b.key, 4.0)) + 12.0
        )
        dy = p3[1] - p0[1]
        p1 = (p0[0] + bulge, p0[1] + dy * 0.25)
        p2 = (p3[0] + bulge, p3[1] - dy * 0.25)
        cmds: tuple[PathCommand, ...] = (("M", p0), ("C", (*p1, *p2, *p3)))
        base = make_id("graft", side.value, i)
        out.overlays.append(
            Group(
                base,
                (
                    PathItem(
                        f"{base}-casing",
                        cmds,
                        stroke=style.graft_ink,
                        stroke_width=style.graft_pt + 1.4,
                    ),
                    PathItem(
                        f"{base}-lumen", cmds, stroke=style.graft_fill, stroke_width=style.graft_pt
                    ),
                    Circle(f"{base}-from", *p0, 1.6, fill=style.graft_ink),
                    Circle(f"{base}-to", *p3, 1.6, fill=style.graft_ink),
                ),
                role="graft",
            )
        )
        hull = _bbox((p0, p1, p2, p3))
        pad = style.graft_pt
        grow(side.value, Box(hull.x - pad, hull.y - pad, hull.w + 2 * pad, hull.h + 2 * pad))


def _fit_map(
    template: Template,
    x0: float,
    x1: float,
    top: float,
    bottom: float,
    margins: tuple[float, float],
) -> tuple[Fit, Box]:
    """Scale the template into the room between the two label margins (widths given)."""
    vx, vy, vw, vh = template.viewbox
    lo, hi = x0 + margins[0] + GUTTER_PT, x1 - margins[1] - GUTTER_PT
    scale = max(min((hi - lo) / vw, (bottom - top) / vh), 1e-3)
    w, h = vw * scale, vh * scale
    left = (x0 + x1) / 2 - w / 2 if margins[0] == margins[1] else (lo + hi) / 2 - w / 2
    down = bottom - h  # a map narrower than its room sits on the ankle pressure strip
    return Fit(scale, left - vx * scale, down - vy * scale), Box(left, down, w, h)


def _register_bands(assessment: Assessment, style: Style, bands: dict[str, BandStyle]) -> None:
    """Add a style for any band the results use that the criteria sets did not list."""
    for limb in assessment.limbs.values():
        for seg in limb.segments.values():
            _band(bands, style, seg.band)
        for les in limb.lesions:
            _band(bands, style, les.band)


def _change_marks(
    assessment: Assessment,
    template: Template,
    fit: Fit,
    map_box: Box,
    half: dict[str, float],
    style: Style,
) -> list[Item]:
    """Return the change symbol beside each segment whose band changed since the prior exam.

    The symbol sits beside the worst lesion that sets the segment's band (the segment's middle
    when its own sample does), on the side facing the body's midline, away from the margin
    labels' leader lines (which reach the outer edge).
    """
    comparison = assessment.comparison
    if comparison is None:
        return []
    kinds = {(c.side, c.segment): c.change.value for c in comparison.segments}
    mid_x = map_box.x + map_box.w / 2
    out: list[Item] = []
    for side, seg in changed_segments(comparison):
        vessel = template.vessels.get(vessel_key(side, seg))
        if vessel is None:
            continue
        at = _worst_lesion_middle(assessment, side, seg)
        (x, y), (nx, ny) = frame(vessel, fit, vessel.geometry.length() * at)
        if abs(nx) < 0.25:  # running across: above it
            nx, ny = (nx, ny) if ny < 0 else (-nx, -ny)
        elif (nx > 0) != (mid_x > x if seg != "AO" else True):
            nx, ny = -nx, -ny
        off = half.get(vessel.key, 3.0) + 1.5 + style.change_mark_pt / 2
        base = make_id("change", vessel.key)
        out.append(change_mark(base, kinds[(side, seg)], x + nx * off, y + ny * off, style))
    return out


def _worst_lesion_middle(assessment: Assessment, side: Side, seg: str) -> float:
    """Return where in ``seg`` (a fraction) its worst lesion's stretch is centred, else 0.5."""
    limb = assessment.limbs.get(side)
    result = limb.segments.get(seg) if limb else None
    if limb is None or result is None:
        return 0.5
    rank = {b.id: b.rank for b in assessment.bands}
    spans = [
        (rank.get(les.band, -1), -k, span)
        for k, les in enumerate(limb.lesions)
        if les.index in result.lesions
        for span in les.spans
        if span.segment == seg
    ]
    if not spans:
        return 0.5
    span = max(spans, key=lambda t: (t[0], t[1]))[2]
    return (span.start_frac + span.end_frac) / 2


def _tables(assessment: Assessment, bands: Mapping[str, BandStyle]) -> list[Table]:
    out = []
    if assessment.planning:
        out.append(planning_table(assessment.planning, bands))
    if assessment.comparison is not None:
        out.append(change_table(assessment.comparison, bands))
    return out


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
    spec = PAGES[page]
    style = style or default_style()
    bands = _bands(assessment, style)
    _register_bands(assessment, style, bands)
    missing = not_drawn(assessment, template)
    x0, x1 = MARGIN_PT, spec.width_pt - MARGIN_PT
    rise = sheet.footer_height(assessment, version, generated_note, style, x0, x1)
    top, bottom = MARGIN_PT, spec.height_pt - MARGIN_PT - rise

    head: list[Item] = []
    if spec.furniture:
        head, top = sheet.header(assessment, style, x0, x1, top, case)
    caution, bottom = sheet.caution(style, x0, x1, bottom - 2)
    note_items: list[Item] = []
    if spec.furniture or missing:
        note_items, bottom = sheet.notes(
            assessment,
            style,
            x0,
            x1,
            bottom - BLOCK_GAP_PT / 2,
            missing,
            case,
            warnings=spec.furniture,
        )
    tables = _tables(assessment, bands) if spec.furniture else []
    changes = sorted({c.change.value for c in _changed(assessment)})
    symbols = sheet.symbols_used(assessment, changes)
    pressure_h = sheet.pressure_height(assessment, style, x0, x1)
    strip = pressure_h + BLOCK_GAP_PT if pressure_h else 0.0
    note = VELOCITY_NOTE + (" " + PRESSURE_SOURCES if pressure_h else "")
    legend_h = -sheet.legend(list(bands.values()), symbols, style, x0, x1, 0.0, bands, note)[1]
    room = bottom - 2 * BLOCK_GAP_PT - legend_h - strip - top - SIDE_MARK_STRIP_PT
    need = sheet.tables_height(tables, x0, x1, style)
    one_page = room - need >= MIN_MAP_SHARE * (spec.height_pt - 2 * MARGIN_PT)
    table_items: list[Item] = []
    more_pages: list[list[Item]] = []
    if tables and one_page:
        table_items, _ = sheet.place_tables(tables, x0, x1, bottom - need, style, bands)
        bottom -= need
    elif tables:
        _, cont_top = sheet.header(assessment, style, x0, x1, MARGIN_PT, case, page_number=2)
        page_bottom = spec.height_pt - MARGIN_PT - rise - 2
        cont_bottom = sheet.caution(style, x0, x1, page_bottom)[1] - BLOCK_GAP_PT
        more_pages = sheet.flow_tables(tables, x0, x1, cont_top, cont_bottom, style, bands)
        table_items, bottom = sheet.see_next_page(tables, style, x0, x1, bottom - BLOCK_GAP_PT / 2)
    key, legend_top = sheet.legend(
        list(bands.values()), symbols, style, x0, x1, bottom - BLOCK_GAP_PT, bands, note
    )
    area_top = top + SIDE_MARK_STRIP_PT
    area_bottom = legend_top - BLOCK_GAP_PT - strip
    labels, columns, label_st = choose_columns(assessment, template, style, area_bottom - area_top)
    widths = (
        margin_width(labels, Side.RIGHT, columns[Side.RIGHT]),
        margin_width(labels, Side.LEFT, columns[Side.LEFT]),
    )
    if max(columns.values()) == 1:  # keep the map centred on the page
        widths = (max(widths), max(widths))
    fit, map_box = _fit_map(template, x0, x1, area_top, area_bottom, widths)
    drawn = _draw_map(assessment, template, fit, style, bands)
    label_boxes, leaders, label_items = place_labels(
        labels,
        template,
        fit,
        map_box,
        (area_top, area_bottom),
        columns,
        drawn.half_widths,
        label_st,
        bands,
    )
    change_items = _change_marks(assessment, template, fit, map_box, drawn.half_widths, style)
    silhouette = tuple(
        PathItem(
            make_id("silhouette", k),
            path_commands(d, fit),
            fill=style.silhouette_fill,
            stroke=style.silhouette_stroke,
            stroke_width=style.silhouette_width_pt,
        )
        for k, d in enumerate(template.silhouette)
    )
    side_marks = tuple(
        Text(
            f"side-mark-{side.value}",
            leg.x + leg.w / 2,
            map_box.y - 3,
            side.value[0].upper(),
            style.side_mark_pt,
            Weight.BOLD,
            Anchor.MIDDLE,
            style.muted_ink,
        )
        for side in (Side.RIGHT, Side.LEFT)
        if (leg := drawn.boxes.get(side.value)) is not None
    )
    vessel_box = None
    for box in drawn.boxes.values():
        vessel_box = box if vessel_box is None else vessel_box.union(box)
    pressure_items, regions = sheet.pressure_boxes(
        assessment,
        drawn.boxes,
        map_box,
        (x0, x1, area_bottom + BLOCK_GAP_PT / 2, pressure_h),
        style,
        bands,
    )
    count = 1 + len(more_pages)
    foot, _ = sheet.footer(
        assessment, version, generated_note, style, x0, x1, spec.height_pt - MARGIN_PT, (1, count)
    )
    map_groups = [
        Group("silhouette", silhouette, role="silhouette"),
        Group("vessels", tuple(drawn.tubes), role="vessels"),
        Group("lesions", tuple(drawn.lesions), role="lesions"),
        Group("devices", tuple(drawn.overlays), role="devices"),
        Group("marks", tuple(drawn.marks), role="marks"),
    ]
    items: list[Item] = [
        Rect("page", 0, 0, spec.width_pt, spec.height_pt, fill="#FFFFFF"),
        Group("header", tuple(head), role="header"),
        *map_groups,
        Group("leaders", tuple(leaders), role="leaders"),
        Group("changes", tuple(change_items), role="changes"),
        Group("labels", tuple(label_items), role="labels"),
        Group("side-marks", side_marks, role="side-marks"),
        Group("pressures", tuple(pressure_items), role="pressures"),
        *key,
        *table_items,
        Group("notes", tuple(note_items), role="notes"),
        Group("caution", tuple(caution), role="caution"),
        Group("footer", tuple(foot), role="footer"),
    ]
    by_margin = {
        side: [Rect(lb.id, *_xywh(lb.box)) for lb in label_boxes if lb.side == side.value]
        for side in Side
    }
    blocks = sheet.blocks(
        [
            ("header", head),
            ("map", [*map_groups, *change_items, *side_marks]),
            ("labels-right", by_margin[Side.RIGHT]),
            ("labels-left", by_margin[Side.LEFT]),
            *((r.id, [Rect(r.id, *_xywh(r.box))]) for r in regions),
            ("legend", key),
            *((item.id, [item]) for item in table_items),
            ("notes", note_items),
            ("caution", caution),
            ("footer", foot),
        ]
    )
    rest = tuple(
        sheet.continuation(
            assessment, spec, style, bands, body, (n, count), version, generated_note, case
        )
        for n, body in enumerate(more_pages, start=2)
    )
    return Scene(
        page=spec.name,
        width_pt=spec.width_pt,
        height_pt=spec.height_pt,
        unit=spec.unit,
        font_family=style.font_family,
        bands=tuple(bands.values()),
        items=tuple(item for item in items if not (isinstance(item, Group) and not item.items)),
        map_box=map_box,
        vessel_box=vessel_box or map_box,
        label_boxes=tuple(label_boxes),
        pressure_regions=regions,
        blocks=blocks,
        page_number=1,
        page_count=count,
        more=rest,
    )


def _xywh(box: Box) -> tuple[float, float, float, float]:
    return box.x, box.y, box.w, box.h


def _changed(assessment: Assessment) -> list[SegmentChange]:
    comparison = assessment.comparison
    if comparison is None:
        return []
    return [c for c in comparison.segments if c.change in BAND_CHANGES]
