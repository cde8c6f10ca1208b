"""The map block: the template scaled into its box, graded, with its margin labels.

The map takes the room the other blocks of the page leave. Inside its box the margin labels are
measured first (one column per margin at the house size, then denser, then more columns); the
template is scaled into the room between the label columns (aspect kept, patient's right on the
viewer's left) and sits on the foot of the box, over the ankle pressure strip. Then the body
outline, the vessels, lesions, devices and marks are drawn, the labels placed beside them, and
the change marks and the side letters added. A partial map (one leg, or from the groin down)
draws what it holds; ``not_drawn`` names every finding it cannot show, for the sheet's notes,
and refuses a map that holds neither leg the study reports.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from diagram.anatomy import Side, vessel_key
from diagram.assess.results import Assessment
from diagram.drawing.map.devices import chain, draw_grafts, draw_stents
from diagram.drawing.map.labels import GUTTER_PT, choose_columns, margin_width, place_labels
from diagram.drawing.map.marks import change_marks
from diagram.drawing.map.vessels import (
    MapParts,
    draw_lesion,
    draw_tubes,
    segment_results,
    vessel_order,
)
from diagram.drawing.scene import (
    Anchor,
    Box,
    Fit,
    Group,
    Item,
    LabelBox,
    PathCommand,
    PathItem,
    Text,
    Weight,
    make_id,
)
from diagram.drawing.style import BandStyle, Style
from diagram.drawing.template.mapfile import Template
from diagram.drawing.template.pathdata import read_path
from diagram.errors import Problem, TemplateError

SIDE_MARK_STRIP_PT = 16.0  # above the map: the R and L letters


def silhouette_commands(d: str, fit: Fit) -> tuple[PathCommand, ...]:
    """Return the body outline's path data ``d`` as absolute commands on the page."""
    out: list[PathCommand] = []
    for sp in read_path(d):
        out.append(("M", fit.point(sp.start)))
        for bezier in sp.beziers:
            kind = "L" if len(bezier) == 2 else "C"
            out.append((kind, tuple(v for p in bezier[1:] for v in fit.point(p))))
        if sp.closed:
            out.append(("Z", ()))
    return tuple(out)


def fit_map(
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


@dataclass(frozen=True)
class DrawnMap:
    """The map's items by layer, where it lies, and what the page needs of it."""

    layers: tuple[Group, ...]  # silhouette, vessels, lesions, devices, marks
    leaders: tuple[Item, ...]
    changes: tuple[Item, ...]
    labels: tuple[Item, ...]
    side_marks: tuple[Item, ...]
    label_boxes: tuple[LabelBox, ...]
    legs: Mapping[str, Box]  # drawn extent per side ("" = aorta)
    map_box: Box  # where the template's viewBox lies
    vessel_box: Box


def _draw_parts(
    assessment: Assessment, template: Template, fit: Fit, style: Style, bands: dict[str, BandStyle]
) -> MapParts:
    out = draw_tubes(assessment, template, fit, style, bands)
    for side in (Side.RIGHT, Side.LEFT):
        limb = assessment.limbs.get(side)
        if limb is not None:
            for lesion in limb.lesions:
                draw_lesion(lesion, template, fit, style, bands, out)
        draw_stents(assessment, side, template, fit, style, out)
        draw_grafts(assessment, side, template, fit, style, bands, out)
    return out


def _layers(template: Template, fit: Fit, style: Style, parts: MapParts) -> tuple[Group, ...]:
    silhouette = tuple(
        PathItem(
            make_id("silhouette", k),
            silhouette_commands(d, fit),
            fill=style.silhouette_fill,
            stroke=style.silhouette_stroke,
            stroke_width=style.silhouette_width_pt,
        )
        for k, d in enumerate(template.silhouette)
    )
    return (
        Group("silhouette", silhouette, role="silhouette"),
        Group("vessels", tuple(parts.tubes), role="vessels"),
        Group("lesions", tuple(parts.lesions), role="lesions"),
        Group("devices", tuple(parts.overlays), role="devices"),
        Group("marks", tuple(parts.marks), role="marks"),
    )


def _side_marks(parts: MapParts, map_box: Box, style: Style) -> tuple[Item, ...]:
    return tuple(
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
        if (leg := parts.boxes.get(side.value)) is not None
    )


@dataclass(frozen=True)
class MapBlock:
    """The graded map of ``assessment`` on ``template``, with its margin labels."""

    assessment: Assessment
    template: Template
    style: Style
    bands: dict[str, BandStyle]

    def draw(self, box: Box) -> DrawnMap:
        """Return the map drawn in ``box`` (the side letters in the strip at its top)."""
        a, template, style, bands = self.assessment, self.template, self.style, self.bands
        top, bottom = box.y + SIDE_MARK_STRIP_PT, box.bottom
        labels, columns, label_style = choose_columns(a, template, style, bottom - top)
        widths = (
            margin_width(labels, Side.RIGHT, columns[Side.RIGHT]),
            margin_width(labels, Side.LEFT, columns[Side.LEFT]),
        )
        if max(columns.values()) == 1:  # keep the map centred on the page
            widths = (max(widths), max(widths))
        fit, map_box = fit_map(template, box.x, box.right, top, bottom, widths)
        parts = _draw_parts(a, template, fit, style, bands)
        label_boxes, leaders, label_items = place_labels(
            labels,
            template,
            fit,
            map_box,
            (top, bottom),
            columns,
            parts.half_widths,
            parts.anchors,
            label_style,
            bands,
        )
        vessel_box = None
        for leg in parts.boxes.values():
            vessel_box = leg if vessel_box is None else vessel_box.union(leg)
        return DrawnMap(
            layers=_layers(template, fit, style, parts),
            leaders=tuple(leaders),
            changes=tuple(change_marks(a, template, fit, map_box, parts.half_widths, style)),
            labels=tuple(label_items),
            side_marks=_side_marks(parts, map_box, style),
            label_boxes=tuple(label_boxes),
            legs=parts.boxes,
            map_box=map_box,
            vessel_box=vessel_box or map_box,
        )


# --------------------------------------------------------------------------- partial maps


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
