"""The map's marks of change since the prior exam, and the symbol the legend and tables repeat.

Worse: a solid triangle pointing up; better: an open triangle pointing down; new occlusion: a
solid diamond; occlusion no longer seen: an open diamond. On the map the mark sits beside the
worst lesion that sets the segment's band, on the side facing the body's midline.
"""

from __future__ import annotations

from collections.abc import Mapping

from diagram.anatomy import Side, vessel_key
from diagram.assess.compare import Change, changed_segments
from diagram.assess.results import Assessment
from diagram.drawing.map.vessels import frame
from diagram.drawing.scene import Box, Fit, Group, Item, Point, Polygon, make_id
from diagram.drawing.style import Style
from diagram.drawing.template.mapfile import Template

CHANGE_WORDS: Mapping[str, str] = {
    Change.WORSE: "worse since the prior exam",
    Change.BETTER: "better since the prior exam",
    Change.NEW_OCCLUSION: "new occlusion",
    Change.RESOLVED_OCCLUSION: "occlusion no longer seen",
}


def change_mark(base: str, kind: str, cx: float, cy: float, style: Style) -> Item:
    """Draw the change symbol centred on (cx, cy).

    Worse: a solid triangle pointing up; better: an open triangle pointing down; new occlusion:
    a solid diamond; occlusion no longer seen: an open diamond. A white rim keeps each mark
    readable over a vessel.
    """
    r = style.change_mark_pt / 2
    if kind in (Change.WORSE, Change.BETTER):
        sign = 1.0 if kind == Change.WORSE else -1.0
        pts: tuple[Point, ...] = (
            (cx, cy - sign * r),
            (cx + r, cy + sign * r * 0.8),
            (cx - r, cy + sign * r * 0.8),
        )
    else:
        pts = ((cx, cy - r * 1.1), (cx + r, cy), (cx, cy + r * 1.1), (cx - r, cy))
    solid = kind in (Change.WORSE, Change.NEW_OCCLUSION)
    return Group(
        base,
        (
            Polygon(f"{base}-rim", pts, fill="#FFFFFF", stroke="#FFFFFF", stroke_width=2.4),
            Polygon(
                f"{base}-mark",
                pts,
                fill=style.change_ink if solid else "#FFFFFF",
                stroke=style.change_ink,
                stroke_width=0.9,
            ),
        ),
        role=f"change {kind}",
    )


def change_marks(
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
