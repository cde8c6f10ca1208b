"""The sheet around the map: page sizes, header, legend, measurement notes, caution and footer.

Each block is laid out from the page's edge inwards and returns its items together with the
coordinate where the next block may start, so that ``layout`` stacks them without overlap.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from diagram.anatomy import Side
from diagram.assess.results import Assessment
from diagram.scene import (
    Anchor,
    Box,
    Circle,
    Group,
    Item,
    Line,
    PathCommand,
    PathItem,
    Rect,
    Region,
    Text,
    Weight,
    make_id,
)
from diagram.style import NOT_ASSESSED, BandStyle, Style
from diagram.textmetrics import ellipsize, line_extents, text_width, wrap

PT_PER_MM = 72.0 / 25.4
MARGIN_PT = 10 * PT_PER_MM
BLOCK_GAP_PT = 7.0
PRESSURE_BOX_PT = (140.0, 34.0)

CAUTION = (
    "Schematic aid for the report — not a substitute for the images or the interpreting "
    "physician's judgement. Criteria must be validated locally; follow local protocols and "
    "licensed practice."
)
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


def header(
    assessment: Assessment, st: Style, x0: float, x1: float, y: float
) -> tuple[list[Item], float]:
    """Return the header items and the y below them; each field only when the study has it."""
    study = assessment.study
    items: list[Item] = []
    asc, desc = line_extents(st.header_title_pt, True)
    baseline = y + asc
    kind = "Lower-limb arterial duplex"
    items.append(
        Text("header-kind", x1, baseline, kind, st.header_pt, anchor=Anchor.END, fill=st.muted_ink)
    )
    if study.exam.site:
        room = x1 - x0 - text_width(kind, st.header_pt) - 12
        items.append(
            Text(
                "header-site",
                x0,
                baseline,
                ellipsize(study.exam.site, st.header_title_pt, room, True),
                st.header_title_pt,
                Weight.BOLD,
                fill=st.text_ink,
            )
        )
    y = baseline + desc + 2
    p, e = study.patient, study.exam
    rows = (
        (
            ("Patient", p.name),
            ("ID", p.id),
            ("Born", p.birth_date.isoformat() if p.birth_date else None),
            ("Sex", p.sex),
        ),
        (("Exam", e.date.isoformat() if e.date else None), ("Accession", e.accession)),
        (("Indication", e.indication),),
    )
    h_asc, h_desc = line_extents(st.header_pt)
    line_h = h_asc + h_desc + 1.5
    for r, row in enumerate(rows):
        present = [(k, v) for k, v in row if v]
        if not present:
            continue
        x, baseline = x0, y + h_asc
        for k, (name, value) in enumerate(present):
            name_w = text_width(name + "  ", st.header_pt)
            if k and x + name_w + 40 > x1:
                x, y = x0, y + line_h
                baseline = y + h_asc
            items.append(
                Text(
                    make_id("header", r, k, "name"),
                    x,
                    baseline,
                    name,
                    st.header_pt,
                    fill=st.muted_ink,
                )
            )
            shown = ellipsize(str(value), st.header_pt, x1 - x - name_w, True)
            items.append(
                Text(
                    make_id("header", r, k, "value"),
                    x + name_w,
                    baseline,
                    shown,
                    st.header_pt,
                    Weight.BOLD,
                    fill=st.text_ink,
                )
            )
            x += name_w + text_width(shown, st.header_pt, True) + 14
        y += line_h
    y += 2
    items.append(Line("header-rule", ((x0, y), (x1, y)), st.rule_ink, 0.5))
    return items, y + BLOCK_GAP_PT


def text_block(
    base: str,
    lines: Sequence[tuple[str, bool]],
    st: Style,
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
    st: Style,
    x0: float,
    x1: float,
    bottom: float,
) -> tuple[list[Item], float]:
    asc, desc = line_extents(st.small_pt)
    right = f"limbchart {version}" if not note else f"{note} · limbchart {version}"
    right_w = text_width(right, st.small_pt)
    sets = assessment.criteria_used or ((assessment.criteria_name, assessment.criteria_title, ""),)
    left = "Criteria: " + "; ".join(f"{title} ({name})" for name, title, _ in sets)
    left = ellipsize(left, st.small_pt, x1 - x0 - right_w - 12)
    baseline = bottom - desc
    return [
        Text("footer-criteria", x0, baseline, left, st.small_pt, fill=st.muted_ink),
        Text(
            "footer-version", x1, baseline, right, st.small_pt, anchor=Anchor.END, fill=st.muted_ink
        ),
    ], bottom - asc - desc


def notes(
    assessment: Assessment, st: Style, x0: float, x1: float, bottom: float
) -> tuple[list[Item], float]:
    """Return the measurement notes (first few warnings, then a count of the rest)."""
    warnings = assessment.warnings
    if not warnings:
        return [], bottom
    shown = warnings[: st.max_warnings]
    lines: list[tuple[str, bool]] = [("Measurement notes", True)]
    for finding in shown:
        wrapped = wrap(finding.message, st.small_pt, x1 - x0 - 10)
        lines.extend((("• " if k == 0 else "  ") + text, False) for k, text in enumerate(wrapped))
    if len(warnings) > len(shown):
        lines.append((f"+{len(warnings) - len(shown)} more in the results file", False))
    items, top = text_block("notes", lines, st, st.small_pt, x0, bottom, st.warning_ink)
    return items, top


def _symbol(
    kind: str, x: float, y: float, w: float, h: float, st: Style, bands: Mapping[str, BandStyle]
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
                Line(f"{base}-{k}", ((tx, y - 1), (tx, y + h + 1)), st.tick_ink, st.tick_pt)
                for k, tx in enumerate((x + 5, x + w - 5))
            ),
        ]
    elif kind == "reconstitution":
        cx = x + w / 2
        parts = [
            tube,
            Line(f"{base}-bar", ((cx, y - 2), (cx, y + h + 2)), st.marker_ink, 1.0),
            Circle(f"{base}-ring", cx, mid, h / 2 + 1, stroke=st.marker_ink, stroke_width=1.0),
        ]
    elif kind == "stent":
        step = w / 8
        zig = tuple((x + k * step, mid + (2.6 if k % 2 else -2.6)) for k in range(9))
        zag = tuple((px, 2 * mid - py) for px, py in zig)
        parts = [
            tube,
            Line(f"{base}-a", zig, st.stent_ink, st.stent_pt),
            Line(f"{base}-b", zag, st.stent_ink, st.stent_pt),
        ]
    else:  # graft
        cmds: tuple[PathCommand, ...] = (("M", (x, mid)), ("L", (x + w, mid)))
        parts = [
            PathItem(f"{base}-casing", cmds, stroke=st.graft_ink, stroke_width=st.graft_pt + 1.4),
            PathItem(f"{base}-lumen", cmds, stroke=st.graft_fill, stroke_width=st.graft_pt),
        ]
    return Group(base, tuple(parts), role="legend-symbol")


SYMBOL_LABELS = {
    "ticks": "lesion extent",
    "reconstitution": "reconstitution",
    "stent": "stent",
    "graft": "bypass graft",
}


def legend(
    bands: Sequence[BandStyle],
    symbols: Sequence[str],
    st: Style,
    x0: float,
    x1: float,
    bottom: float,
    all_bands: Mapping[str, BandStyle],
) -> tuple[list[Item], float]:
    """Return the legend (band swatches, symbols in use, velocity note) ending at ``bottom``."""
    sw_w, sw_h, row_h = 22.0, 9.0, 14.0
    entries = [("band", b.id, b.label) for b in bands]
    entries += [("symbol", kind, SYMBOL_LABELS[kind]) for kind in symbols]
    placed: list[tuple[int, float, tuple[str, str, str]]] = []
    row, x = 0, x0
    for entry in entries:
        w = sw_w + 4 + text_width(entry[2], st.legend_pt) + 12
        if x > x0 and x + w > x1:
            row, x = row + 1, x0
        placed.append((row, x, entry))
        x += w
    note = wrap(VELOCITY_NOTE, st.small_pt, x1 - x0)
    note_items, note_top = text_block(
        "legend-note", [(t, False) for t in note], st, st.small_pt, x0, bottom, st.muted_ink
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
            items.append(_symbol(key, ex, sy, sw_w, sw_h, st, all_bands))
        items.append(
            Text(
                make_id("legend", "label", what, key),
                ex + sw_w + 4,
                sy + sw_h / 2 + 0.36 * st.legend_pt,
                label,
                st.legend_pt,
                fill=st.text_ink,
            )
        )
    rule = Line("legend-rule", ((x0, top - 3), (x1, top - 3)), st.rule_ink, 0.5)
    return [rule, Group("legend", (*items, *note_items), role="legend")], top - 3


# --------------------------------------------------------------------------- ankle pressures


def symbols_used(assessment: Assessment) -> list[str]:
    lesions = [les for limb in assessment.limbs.values() for les in limb.lesions]
    limbs = [assessment.study.limb(side) for side in (Side.RIGHT, Side.LEFT)]
    used = {
        "ticks": any(les.spans for les in lesions),
        "reconstitution": any(les.reconstitution is not None for les in lesions),
        "stent": any(limb.stents for limb in limbs),
        "graft": any(limb.grafts for limb in limbs),
    }
    return [kind for kind in SYMBOL_LABELS if used[kind]]


def pressure_sides(assessment: Assessment) -> list[Side]:
    pressures = assessment.study.pressures
    return [
        side
        for side in (Side.RIGHT, Side.LEFT)
        if any(
            v is not None
            for v in (pressures.limb(side).pt, pressures.limb(side).dp, pressures.limb(side).toe)
        )
    ]


def pressure_regions(
    sides: Sequence[Side], drawn: Mapping[str, Box], map_box: Box, x0: float, x1: float, top: float
) -> tuple[Region, ...]:
    """Reserve a box under each ankle that has pressures (filled by a later stage)."""
    w, h = PRESSURE_BOX_PT
    mid = (x0 + x1) / 2
    out = []
    for side in sides:
        leg = drawn.get(side.value)
        centre = (
            leg.x + leg.w / 2
            if leg
            else map_box.x + map_box.w * (0.25 if side is Side.RIGHT else 0.75)
        )
        lo, hi = (x0, mid - 3) if side is Side.RIGHT else (mid + 3, x1)
        width = min(w, hi - lo)
        x = _clamp(centre - width / 2, lo, hi - width)
        out.append(Region(make_id("pressure", side.value), side.value, Box(x, top, width, h)))
    return tuple(out)


def _clamp(v: float, lo: float, hi: float) -> float:
    return lo if hi < lo else min(max(v, lo), hi)
