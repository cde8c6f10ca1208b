"""Margin labels of the map: their texts, 1-D packing, columns and leader lines.

Labels sit in the margins (the right leg's on the viewer's left) with leader lines to their
vessel, stacked per column by ``pack_1d`` so that no two overlap; text is measured with the
shipped font before anything is drawn. A partial map (one leg, or from the groin down) labels
what it draws; ``not_drawn`` names every finding it cannot show, for the sheet's notes.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace

from diagram.anatomy import SEGMENT_IDS, Side, ancestors, run_on, vessel_key
from diagram.assess.results import Assessment, LesionResult, SegmentResult
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
from diagram.errors import Problem, TemplateError

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


# --------------------------------------------------------------------------- label texts


def _velocity(v: float) -> str:
    return f"{v:.1f}".rstrip("0").rstrip(".")


def _ratio(v: float) -> str:
    text = f"{v:.2f}"
    return text[:-1] if text.endswith("0") else text


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


# --------------------------------------------------------------------------- vessels and frames


def segment_results(assessment: Assessment) -> dict[str, SegmentResult]:
    """Return each drawn vessel's segment result by vessel key (the aorta once)."""
    out: dict[str, SegmentResult] = {}
    for side in (Side.RIGHT, Side.LEFT):
        limb = assessment.limbs.get(side)
        if limb is None:
            continue
        for seg, res in sorted(limb.segments.items()):
            key = vessel_key(side, seg)
            # The unpaired aorta may be reported under either leg: keep an assessed result.
            if key not in out or (res.assessed and not out[key].assessed):
                out[key] = res
    return out


def vessel_order(key: str) -> tuple[int, int, str]:
    """Return a sort key for vessel keys: down the tree, right before left."""
    side, _, seg = key.rpartition("/")
    index = SEGMENT_IDS.index(seg) if seg in SEGMENT_IDS else len(SEGMENT_IDS)
    return (index, 0 if side == "right" else 1, key)


def frame(vessel: Vessel, fit: Fit, s: float) -> tuple[Point, Point]:
    """Return the page point at arc length ``s`` and the unit normal there."""
    tx, ty = vessel.geometry.tangent_at(s)
    return fit.point(vessel.geometry.point_at(s)), (ty, -tx)


# --------------------------------------------------------------------------- collecting labels


def collect_labels(assessment: Assessment, template: Template, style: Style) -> list[MarginLabel]:
    """Return every margin label with its measured size (segment PSVs, lesions, reconstitution)."""
    asc, desc = line_extents(style.label_pt)
    height = asc + desc + 2 * style.label_pad_pt
    out: list[MarginLabel] = []

    def add(
        lid: str, margin: Side, kind: str, key: str, s: float, text: str, band: str | None
    ) -> None:
        bold = kind != "segment"
        width = text_width(text, style.label_pt, bold) + 2 * style.label_pad_pt
        if band is not None:
            width += SWATCH_PT + 2.0
        out.append(MarginLabel(lid, margin, kind, key, s, text, bold, band, width, height))

    for side in (Side.RIGHT, Side.LEFT):
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
            add(make_id(*base), side, "lesion", vessel.key, s, lesion_label(lesion), lesion.band)
            point = lesion.reconstitution
            rv = template.vessels.get(vessel_key(side, point.segment)) if point else None
            if point is not None and rv is not None:
                add(
                    make_id(*base, "reconstitution"),
                    side,
                    "reconstitution",
                    rv.key,
                    point.start_frac * rv.geometry.length(),
                    "reconst.",
                    None,
                )
    for key, res in sorted(segment_results(assessment).items(), key=lambda kv: vessel_order(kv[0])):
        if res.psv is not None and key in template.vessels:
            length = template.vessels[key].geometry.length()
            add(
                make_id("label", key),
                res.side,
                "segment",
                key,
                _segment_anchor(length, [lb.s for lb in out if lb.target == key]),
                segment_label(res.segment, res.psv),
                None,
            )
    # The unpaired aorta's labels go to the emptier margin.
    counts = {m: sum(1 for lb in out if lb.margin is m and lb.target != "AO") for m in Side}
    emptier = Side.LEFT if counts[Side.LEFT] < counts[Side.RIGHT] else Side.RIGHT
    return [
        MarginLabel(
            lb.id, emptier, lb.kind, lb.target, lb.s, lb.text, lb.bold, lb.band, lb.width, lb.height
        )
        if lb.target == "AO"
        else lb
        for lb in out
    ]


def _segment_anchor(length: float, taken: Sequence[float]) -> float:
    """Return where a segment's label points: its middle, or a quarter away from a lesion's."""
    near = [t for t in taken if abs(t - length / 2) < 0.2 * length]
    if not near:
        return length / 2
    return max((0.2 * length, 0.8 * length), key=lambda s: min(abs(s - t) for t in taken))


def stack_height(count: int, columns: int, height: float, gap: float) -> float:
    """Return the height of ``count`` labels stacked in ``columns``."""
    per_column = math.ceil(count / columns)
    return per_column * (height + gap) - gap if per_column else 0.0


def anchor_point(vessel: Vessel, fit: Fit, s: float, hw: float, margin: Side) -> Point:
    """Return the tube edge facing the label's margin (the centre when the vessel runs across)."""
    (x, y), (nx, ny) = frame(vessel, fit, s)
    if abs(nx) < 0.25:
        return (x, y)
    toward = -1.0 if margin is Side.RIGHT else 1.0
    if nx * toward < 0:
        nx, ny = -nx, -ny
    return (x + nx * hw, y + ny * hw)


def place_labels(
    labels: list[MarginLabel],
    template: Template,
    fit: Fit,
    map_box: Box,
    bounds: tuple[float, float],
    columns: Mapping[Side, int],
    half_widths: Mapping[str, float],
    style: Style,
    bands: Mapping[str, BandStyle],
) -> tuple[list[LabelBox], list[Item], list[Item]]:
    """Return the label boxes, the leader lines and the label items."""
    boxes: list[LabelBox] = []
    leaders: list[Item] = []
    texts: list[Item] = []
    asc, _ = line_extents(style.label_pt)
    pad = style.label_pad_pt
    for margin in (Side.RIGHT, Side.LEFT):
        mine = [lb for lb in labels if lb.margin is margin]
        widest = max((lb.width for lb in mine), default=0.0)
        anchors = {
            lb.id: anchor_point(
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
                if margin is Side.RIGHT:
                    edge = map_box.x - GUTTER_PT - col * (widest + COLUMN_GAP_PT)
                    box = Box(edge - lb.width, top, lb.width, lb.height)
                    start, elbow = (box.right, top + lb.height / 2), map_box.x - GUTTER_PT / 2
                else:
                    edge = map_box.right + GUTTER_PT + col * (widest + COLUMN_GAP_PT)
                    box = Box(edge, top, lb.width, lb.height)
                    start, elbow = (box.x, top + lb.height / 2), map_box.right + GUTTER_PT / 2
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
                parts: list[Item] = [Rect(f"{lb.id}-bg", *_xywh(box), fill="#FFFFFF")]
                x = box.x + pad
                if lb.band is not None:
                    chip = bands[lb.band]
                    parts.append(
                        Rect(
                            f"{lb.id}-chip",
                            x,
                            top + (lb.height - SWATCH_PT) / 2,
                            SWATCH_PT,
                            SWATCH_PT,
                            band=lb.band,
                            stroke=chip.outline,
                            stroke_width=0.5,
                            dash=chip.outline_dash,
                        )
                    )
                    x += SWATCH_PT + 2.0
                parts.append(
                    Text(
                        f"{lb.id}-text",
                        x,
                        top + pad + asc,
                        lb.text,
                        style.label_pt,
                        Weight.BOLD if lb.bold else Weight.NORMAL,
                        fill=style.text_ink,
                    )
                )
                texts.append(Group(lb.id, tuple(parts), role=f"label {lb.kind}"))
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


# --------------------------------------------------------------------------- partial maps


def chain(first: str, last: str) -> tuple[str, ...]:
    """Return the segments from ``first`` to ``last`` along the tree (both ends when unrelated)."""
    inline = run_on(first)
    if last in inline:
        return inline[: inline.index(last) + 1]
    up = ancestors(last)
    if first in up:
        return (*reversed(up[: up.index(first) + 1]), last)
    return (first,) if first == last else (first, last)


def not_drawn(assessment: Assessment, template: Template) -> list[str]:
    """Return the notes naming findings on segments the map lacks (a partial template).

    A template that holds none of the legs the study reports is refused.
    """
    legs = {v.side for v in template.vessels.values() if v.side}
    found = {side: _findings(assessment, side) for side in Side}
    reported = [side for side in Side if any(found[side].values())]
    if reported and not legs & {side.value for side in reported}:
        rule = "the map template draws neither leg the study reports"
        hint = "use a map that holds the " + " and ".join(s.value for s in reported) + " leg"
        raise TemplateError([Problem(template.source, None, "vessels", None, rule, hint)])
    label = {b.id: b.label for b in assessment.bands}
    results = sorted(segment_results(assessment).items(), key=lambda kv: vessel_order(kv[0]))
    out: list[str] = []
    for side in (Side.RIGHT, Side.LEFT):
        leg = side.value
        if leg not in legs and reported:
            if side in reported:
                counts = ", ".join(
                    f"{n} {what}{'s' if n != 1 else ''}" for what, n in found[side].items() if n
                )
                out.append(f"not drawn: the {leg} leg ({counts}); this map has no {leg} leg")
            continue
        lost: list[str] = []
        for key, res in results:
            if res.side is side and res.assessed and key not in template.vessels:
                where = res.segment if key == res.segment else f"{leg} {res.segment}"
                lost.append(f"{where} {label.get(res.band, res.band)}")
        limb = assessment.limbs.get(side)
        for les in limb.lesions if limb else ():
            off = [
                p.segment for p in les.spans if vessel_key(side, p.segment) not in template.vessels
            ]
            if off or (not les.spans and not _on(template, side, les.at)):
                part = f" (the part in {', '.join(off)})" if len(off) < len(les.spans) else ""
                lost.append(f"{leg} {les.at} lesion{part}")
        given = assessment.study.limb(side)
        for what, devices in (("stent", given.stents), ("graft", given.grafts)):
            for d in devices:
                ends = (d.from_, d.to) if what == "graft" else chain(d.from_, d.to)
                if not all(_on(template, side, seg) for seg in ends):
                    lost.append(f"{leg} {what} {d.from_} to {d.to}")
        if lost:
            out.append("not drawn: " + "; ".join(lost) + " (not on this map)")
    return out


def _findings(assessment: Assessment, side: Side) -> dict[str, int]:
    """Return how many findings of each kind the study reports for one leg."""
    limb, given = assessment.limbs.get(side), assessment.study.limb(side)
    assessed = [r for r in limb.segments.values() if r.assessed] if limb else []
    return {
        "segment": len(assessed),
        "lesion": len(limb.lesions) if limb else 0,
        "stent": len(given.stents),
        "graft": len(given.grafts),
    }


def _on(template: Template, side: Side, segment: str) -> bool:
    return vessel_key(side, segment) in template.vessels
