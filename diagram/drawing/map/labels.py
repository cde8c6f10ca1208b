"""Margin labels of the map: their texts, where each is placed, columns and leader lines.

Labels sit in the margins (the right leg's on the viewer's left) with leader lines to their
vessel, stacked per column by ``pack_1d`` so that no two overlap; text is measured with the
shipped font before anything is drawn. A partial map (one leg, or from the groin down) labels
what it draws (``diagram.drawing.map.partial`` names what it cannot show).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace

from diagram.anatomy import Side, vessel_key
from diagram.assess.results import Assessment, GraftSite, LesionResult
from diagram.drawing.map.devices import device_mark, graft_anchor_key
from diagram.drawing.map.vessels import frame, segment_results, vessel_order
from diagram.drawing.scene import (
    Box,
    Circle,
    Fit,
    Group,
    Item,
    LabelBox,
    Line,
    Point,
    Rect,
    Text,
    Weight,
    make_id,
)
from diagram.drawing.style import BandStyle, Style
from diagram.drawing.template.mapfile import Template, Vessel
from diagram.drawing.textmetrics import line_extents, text_width
from diagram.reading.study import GRAFT_BODY_SITES

GUTTER_PT = 10.0  # between the map and the nearest label column
COLUMN_GAP_PT = 8.0  # between two label columns of one margin
MIN_COLUMN_PT = 48.0
MAX_COLUMNS = 3
SWATCH_PT = 6.0  # band chip in front of a lesion label

# --------------------------------------------------------------------------- 1-D label packing


@dataclass
class _Cluster:
    top: float
    height: float
    ideal_sum: float  # sum over members of (desired top - offset in cluster)
    count: int
    base: float  # offsets are stored relative to this shift (merges move the smaller list)
    members: list[tuple[int, float]] = field(default_factory=list)


def _clamp(v: float, lo: float, hi: float) -> float:
    return lo if hi < lo else min(max(v, lo), hi)


def pack_1d(
    centres: Sequence[float], heights: Sequence[float], gap: float, top: float, bottom: float
) -> list[float]:
    """Return the top of each box so that boxes keep ``gap`` apart and stay near their centres.

    Boxes are taken in order of their desired centre; a box that would overlap the stack above
    pushes down, the clusters it joins move as one to the mean of their members' wishes, and a
    cluster past ``bottom`` is pulled back up (never above ``top``). O(n log n): the sort, then
    amortised merges that move the smaller member list.
    """
    order = sorted(range(len(centres)), key=lambda i: (centres[i], i))
    stack: list[_Cluster] = []
    for i in order:
        h = heights[i]
        cur = _Cluster(0.0, h, centres[i] - h / 2, 1, 0.0, [(i, 0.0)])
        cur.top = _clamp(cur.ideal_sum, top, bottom - h)
        while stack and stack[-1].top + stack[-1].height + gap > cur.top:
            prev = stack.pop()
            shift = prev.height + gap  # where ``cur`` starts inside the merged cluster
            if len(prev.members) >= len(cur.members):
                prev.members.extend((j, o + cur.base + shift - prev.base) for j, o in cur.members)
                merged = prev
            else:
                cur.base += shift
                cur.members.extend((j, o + prev.base - cur.base) for j, o in prev.members)
                merged = cur
            merged.ideal_sum = prev.ideal_sum + cur.ideal_sum - shift * cur.count
            merged.count = prev.count + cur.count
            merged.height = shift + cur.height
            merged.top = _clamp(merged.ideal_sum / merged.count, top, bottom - merged.height)
            cur = merged
        stack.append(cur)
    tops = [0.0] * len(centres)
    for cluster in stack:
        for j, offset in cluster.members:
            tops[j] = cluster.top + cluster.base + offset
    return tops


def stack_height(count: int, columns: int, height: float, gap: float) -> float:
    """Return the height of ``count`` labels stacked in ``columns``."""
    per_column = math.ceil(count / columns)
    return per_column * (height + gap) - gap if per_column else 0.0


# --------------------------------------------------------------------------- label texts


def _velocity(v: float) -> str:
    return f"{v:.1f}".rstrip("0").rstrip(".")


def _ratio(v: float) -> str:
    """Return a velocity ratio as graded: always two decimals (3.00, not 3.0)."""
    return f"{v:.2f}"


def segment_label(segment: str, psv: float) -> str:
    """Return the short margin label of a segment's PSV, e.g. ``SFA-P 88``."""
    return f"{segment} {_velocity(psv)}"


def lesion_label(lesion: LesionResult) -> str:
    """Return a lesion's margin label: its velocities, or the occlusion's length and end."""
    if lesion.occluded:
        text = "Occl."
        if lesion.length_cm is not None:
            text += f" {_velocity(lesion.length_cm)} cm"
        if lesion.reconstitutes:
            text += f" → {lesion.reconstitutes}"
        return text
    parts = []
    if lesion.psv is not None:
        parts.append(f"PSV {_velocity(lesion.psv)}")
    if lesion.edv is not None:
        parts.append(f"EDV {_velocity(lesion.edv)}")
    parts.append("Vr —" if lesion.vr is None else f"Vr {_ratio(lesion.vr)}")
    return " / ".join(parts)


@dataclass(frozen=True)
class MarginLabel:
    id: str
    margin: Side  # the leg whose margin holds it (its leg, or either for the aorta)
    kind: str
    target: str  # vessel key
    s: float  # arc length of the anchor, template units
    text: str
    bold: bool
    band: str | None  # band chip in front of the text
    width: float
    height: float


# --------------------------------------------------------------------------- collecting labels


def _measured(
    lid: str, margin: Side, kind: str, key: str, s: float, text: str, band: str | None, style: Style
) -> MarginLabel:
    """Return a label with its size measured in the shipped font (bold unless a segment's)."""
    asc, desc = line_extents(style.label_pt)
    height = asc + desc + 2 * style.label_pad_pt
    bold = kind not in ("segment", "graft")
    width = text_width(text, style.label_pt, bold) + 2 * style.label_pad_pt
    if band is not None:
        width += SWATCH_PT + 2.0
    return MarginLabel(lid, margin, kind, key, s, text, bold, band, width, height)


def _lesion_labels(
    assessment: Assessment, template: Template, side: Side, style: Style
) -> list[MarginLabel]:
    """Return the labels of one leg's lesions drawn on the map, and of their reconstitutions."""
    out: list[MarginLabel] = []
    limb = assessment.limbs.get(side)
    for lesion in limb.lesions if limb is not None else ():
        base = ("label", side.value, "lesion", lesion.index)
        # Anchor at the middle span the map draws (a lesion may run on off a partial map).
        drawn = [
            (sp, template.vessels[vessel_key(side, sp.segment)])
            for sp in lesion.spans
            if vessel_key(side, sp.segment) in template.vessels
        ]
        if drawn:
            span, vessel = drawn[len(drawn) // 2]
            s = (span.start_frac + span.end_frac) / 2 * vessel.geometry.length()
        elif not lesion.spans and vessel_key(side, lesion.at) in template.vessels:
            vessel = template.vessels[vessel_key(side, lesion.at)]
            s = 0.5 * vessel.geometry.length()
        else:
            continue  # not on this map: listed in the notes
        text = lesion_label(lesion)
        out.append(
            _measured(make_id(*base), side, "lesion", vessel.key, s, text, lesion.band, style)
        )
        point = lesion.reconstitution
        rv = template.vessels.get(vessel_key(side, point.segment)) if point else None
        if point is not None and rv is not None:
            s = point.start_frac * rv.geometry.length()
            lid = make_id(*base, "reconstitution")
            out.append(_measured(lid, side, "reconstitution", rv.key, s, "reconst.", None, style))
    return out


GRAFT_SITE_WORDS = {
    "proximal_anastomosis": "Graft prox. anast.",
    "proximal": "Graft prox.",
    "mid": "Graft mid",
    "distal": "Graft dist.",
    "distal_anastomosis": "Graft dist. anast.",
}


def graft_site_label(site: GraftSite) -> str:
    """Return a graft site's margin label, e.g. ``Graft dist. anast. 325 / Vr 2.75``."""
    text = GRAFT_SITE_WORDS.get(site.site, f"Graft {site.site}")
    if site.psv is not None:
        text += f" {_velocity(site.psv)}"
    return text + (f" / Vr {_ratio(site.vr)}" if site.vr is not None else "")


def _graft_labels(
    assessment: Assessment, template: Template, side: Side, style: Style
) -> list[MarginLabel]:
    """Return the labels of one leg's grafts drawn on the map: each site, and a low graft flow.

    A site's label carries its band chip; a graft flow velocity the assessment found low (its
    ``graft-low-flow`` finding) gets a bold label of its own at the slowest body site.
    """
    out: list[MarginLabel] = []
    limb = assessment.limbs.get(side)
    low = {f.segment for f in assessment.warnings if f.code == "graft-low-flow" and f.side is side}
    for graft in limb.grafts if limb is not None else ():
        ends = (vessel_key(side, graft.from_), vessel_key(side, graft.to))
        if not all(end in template.vessels for end in ends):
            continue  # not on this map: listed in the notes
        base = ("label", side.value, "graft", graft.index)
        for site in graft.sites:
            if site.psv is None:
                continue
            key = graft_anchor_key(side, graft.index, site.site)
            lid = make_id(*base, site.site)
            text = graft_site_label(site)
            out.append(_measured(lid, side, "graft", key, 0.0, text, site.band, style))
        body = [s for s in graft.sites if s.site in GRAFT_BODY_SITES and s.psv is not None]
        if graft.to in low and graft.flow_velocity is not None and body:
            slowest = min(body, key=lambda s: s.psv or 0.0)
            key = graft_anchor_key(side, graft.index, slowest.site)
            text = f"Low graft flow {_velocity(graft.flow_velocity)} cm/s"
            lid = make_id(*base, "flow")
            out.append(_measured(lid, side, "graft-flow", key, 0.0, text, None, style))
    return out


def collect_labels(assessment: Assessment, template: Template, style: Style) -> list[MarginLabel]:
    """Return every margin label with its measured size (segment PSVs, lesions, reconstitution)."""
    out: list[MarginLabel] = []
    for side in (Side.RIGHT, Side.LEFT):
        out += _lesion_labels(assessment, template, side, style)
        out += _graft_labels(assessment, template, side, style)
    for key, res in sorted(segment_results(assessment).items(), key=lambda kv: vessel_order(kv[0])):
        if res.psv is not None and key in template.vessels:
            length = template.vessels[key].geometry.length()
            s = _segment_anchor(length, [lb.s for lb in out if lb.target == key])
            text = segment_label(res.segment, res.psv)
            out.append(
                _measured(make_id("label", key), res.side, "segment", key, s, text, None, style)
            )
    # The unpaired aorta's labels go to the emptier margin.
    counts = {m: sum(1 for lb in out if lb.margin is m and lb.target != "AO") for m in Side}
    emptier = Side.LEFT if counts[Side.LEFT] < counts[Side.RIGHT] else Side.RIGHT
    return [replace(lb, margin=emptier) if lb.target == "AO" else lb for lb in out]


def _segment_anchor(length: float, taken: Sequence[float]) -> float:
    """Return where a segment's label points: its middle, or a quarter away from a lesion's."""
    near = [t for t in taken if abs(t - length / 2) < 0.2 * length]
    if not near:
        return length / 2
    return max((0.2 * length, 0.8 * length), key=lambda s: min(abs(s - t) for t in taken))


def anchor_point(vessel: Vessel, fit: Fit, s: float, hw: float, margin: Side) -> Point:
    """Return the tube edge facing the label's margin (the centre when the vessel runs across)."""
    (x, y), (nx, ny) = frame(vessel, fit, s)
    if abs(nx) < 0.25:
        return (x, y)
    toward = -1.0 if margin is Side.RIGHT else 1.0
    if nx * toward < 0:
        nx, ny = -nx, -ny
    return (x + nx * hw, y + ny * hw)


def _label_items(lb: MarginLabel, box: Box, style: Style, bands: Mapping[str, BandStyle]) -> Group:
    """Return one label drawn in ``box``: a white ground, its band chip if any, its text."""
    asc, _ = line_extents(style.label_pt)
    pad = style.label_pad_pt
    parts: list[Item] = [Rect(f"{lb.id}-bg", *_xywh(box), fill="#FFFFFF")]
    x = box.x + pad
    if lb.band is not None:
        chip = bands[lb.band]
        parts.append(
            Rect(
                f"{lb.id}-chip",
                x,
                box.y + (lb.height - SWATCH_PT) / 2,
                SWATCH_PT,
                SWATCH_PT,
                band=lb.band,
                stroke=chip.outline,
                stroke_width=0.5,
                dash=chip.outline_dash,
            )
        )
        chip_box = Box(x, box.y + (lb.height - SWATCH_PT) / 2, SWATCH_PT, SWATCH_PT)
        parts += device_mark(f"{lb.id}-chip", chip.device, chip_box, style)
        x += SWATCH_PT + 2.0
    parts.append(
        Text(
            f"{lb.id}-text",
            x,
            box.y + pad + asc,
            lb.text,
            style.label_pt,
            Weight.BOLD if lb.bold else Weight.NORMAL,
            fill=style.text_ink,
        )
    )
    return Group(lb.id, tuple(parts), role=f"label {lb.kind}")


def _label_box(
    lb: MarginLabel, margin: Side, col: int, top: float, map_box: Box, widest: float
) -> tuple[Box, Point, float]:
    """Return where a label lies in column ``col``, where its leader leaves it, and its elbow x."""
    if margin is Side.RIGHT:
        edge = map_box.x - GUTTER_PT - col * (widest + COLUMN_GAP_PT)
        box = Box(edge - lb.width, top, lb.width, lb.height)
        return box, (box.right, top + lb.height / 2), map_box.x - GUTTER_PT / 2
    edge = map_box.right + GUTTER_PT + col * (widest + COLUMN_GAP_PT)
    box = Box(edge, top, lb.width, lb.height)
    return box, (box.x, top + lb.height / 2), map_box.right + GUTTER_PT / 2


def place_labels(
    labels: list[MarginLabel],
    template: Template,
    fit: Fit,
    map_box: Box,
    bounds: tuple[float, float],
    columns: Mapping[Side, int],
    half_widths: Mapping[str, float],
    fixed: Mapping[str, Point],
    style: Style,
    bands: Mapping[str, BandStyle],
) -> tuple[list[LabelBox], list[Item], list[Item]]:
    """Return the label boxes, the leader lines and the label items.

    Each margin's labels are sorted by the height of their anchor on the tube edge facing the
    margin (``fixed`` gives the anchors of labels off the template, such as graft sites), dealt
    round its columns, and packed in each column near their anchors.
    """
    boxes: list[LabelBox] = []
    leaders: list[Item] = []
    texts: list[Item] = []
    for margin in (Side.RIGHT, Side.LEFT):
        mine = [lb for lb in labels if lb.margin is margin]
        widest = max((lb.width for lb in mine), default=0.0)
        anchors = {
            lb.id: fixed[lb.target]
            if lb.target in fixed
            else anchor_point(
                template.vessels[lb.target], fit, lb.s, half_widths.get(lb.target, 2.0), margin
            )
            for lb in mine
        }
        mine.sort(key=lambda lb: (anchors[lb.id][1], lb.kind, lb.id))
        for col in range(columns[margin]):
            members = mine[col :: columns[margin]]
            tops = pack_1d(
                [anchors[lb.id][1] for lb in members],
                [lb.height for lb in members],
                style.line_gap_pt,
                *bounds,
            )
            for lb, top in zip(members, tops, strict=True):
                box, start, elbow = _label_box(lb, margin, col, top, map_box, widest)
                anchor = anchors[lb.id]
                boxes.append(
                    LabelBox(lb.id, margin.value, lb.kind, lb.target, lb.text, box, anchor)
                )
                leaders.append(
                    Line(
                        f"{lb.id}-leader",
                        (start, (elbow, start[1]), anchor),
                        style.leader_ink,
                        style.leader_pt,
                    )
                )
                leaders.append(Circle(f"{lb.id}-dot", *anchor, 0.9, fill=style.leader_ink))
                texts.append(_label_items(lb, box, style, bands))
    boxes.sort(key=lambda b: b.id)
    return boxes, leaders, texts


def _xywh(box: Box) -> tuple[float, float, float, float]:
    return box.x, box.y, box.w, box.h


def choose_columns(
    assessment: Assessment,
    template: Template,
    style: Style,
    height: float,
) -> tuple[list[MarginLabel], dict[Side, int], Style]:
    """Return the labels, the columns of each margin and the label style that fit ``height``.

    One column at the house size; then one column set denser; then more columns in the margin
    that needs them (the map shrinks to make room: the last resort for very crowded studies).
    """
    dense = replace(style, label_pt=min(style.label_pt, 6.0), line_gap_pt=0.6, label_pad_pt=0.6)
    for tried in (style, dense):
        labels = collect_labels(assessment, template, tried)
        label_h = labels[0].height if labels else 0.0
        columns: dict[Side, int] = {}
        for margin in Side:
            n = sum(1 for lb in labels if lb.margin is margin)
            columns[margin] = next(
                (
                    k
                    for k in range(1, MAX_COLUMNS + 1)
                    if stack_height(n, k, label_h, tried.line_gap_pt) <= height
                ),
                MAX_COLUMNS,
            )
        if max(columns.values()) == 1:
            break
    return labels, columns, tried


def margin_width(labels: Sequence[MarginLabel], margin: Side, columns: int) -> float:
    """Return the width of one margin's label columns."""
    widest = max((lb.width for lb in labels if lb.margin is margin), default=0.0)
    return max(MIN_COLUMN_PT, columns * widest + (columns - 1) * COLUMN_GAP_PT)
