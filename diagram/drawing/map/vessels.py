"""The map's vessels and lesions: each segment a tube in its band, each lesion to scale over it.

Each vessel is a tube along its centre line, as wide as its nominal diameter allows (within the
style's bounds), tinted and hatched as its segment's own sample is graded. Each lesion is painted
over the tube from ``start_frac`` to ``end_frac`` of each segment it touches (arc length
s = frac x path length), with ticks across the tube at its ends; an occlusion that reconstitutes
gets the reconstitution ring where flow returns.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field, replace

from diagram.anatomy import SEGMENT_IDS, Side, vessel_key
from diagram.assess.results import Assessment, LesionResult, SegmentResult
from diagram.drawing.scene import Box, Circle, Fit, Group, Item, Line, Point, Polygon, make_id
from diagram.drawing.style import NOT_ASSESSED, BandStyle, Style
from diagram.drawing.template.mapfile import Template, Vessel

STEP_PT = 2.0  # spacing of outline points along a vessel, on the page
MIN_LESION_PT = 2.0  # shortest lesion still drawn visibly
DEVICE_KINDS = ("stent", "graft")  # criteria set kinds whose bands carry a device mark


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


def band_styles(assessment: Assessment, style: Style) -> dict[str, BandStyle]:
    """Return the look of every band: the criteria sets' in order, then any other in use."""
    out: dict[str, BandStyle] = {}
    seen: dict[tuple[str, str], int] = {}
    for b in assessment.bands:
        look = style.band_for(b.id, b.rank, b.label, b.look)
        if b.kind in DEVICE_KINDS and b.look != "occluded" and b.rank >= 0:
            # A device band carries its device's mark; a second band of one set on the same
            # house look (graft high and highest risk) gets a denser texture.
            n = seen[(b.kind, b.look)] = seen.get((b.kind, b.look), 0) + 1
            look = replace(look, device=b.kind)
            if n > 1:
                look = replace(
                    look, spacing_pt=look.spacing_pt * 0.6, weight_pt=look.weight_pt * 1.3
                )
        out[b.id] = look
    if NOT_ASSESSED not in out:
        out[NOT_ASSESSED] = style.band_for(NOT_ASSESSED)
    _register_bands(assessment, style, out)
    return out


def ensure_band(bands: dict[str, BandStyle], style: Style, band_id: str) -> str:
    """Return ``band_id``, registering a style for an id the criteria set did not list."""
    if band_id not in bands:
        bands[band_id] = style.band_for(band_id)
    return band_id


def half_width(vessel: Vessel, style: Style) -> float:
    width = vessel.diameter_mm * style.tube_pt_per_mm
    return min(max(width, style.tube_min_pt), style.tube_max_pt) / 2


def outline(vessel: Vessel, fit: Fit, s0: float, s1: float, hw: float) -> tuple[Point, ...]:
    pts = vessel.geometry.outline(s0, s1, hw / fit.scale, STEP_PT / fit.scale)
    return tuple(fit.point(p) for p in pts)


def bbox(points: Sequence[Point]) -> Box:
    xs = [p[0] for p in points]
    ys = [p[1] for p in points]
    return Box(min(xs), min(ys), max(xs) - min(xs), max(ys) - min(ys))


def across(vessel: Vessel, fit: Fit, s: float, half: float) -> tuple[Point, Point]:
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
class MapParts:
    """The map's items by layer, and what later steps need to know of the drawing."""

    tubes: list[Item] = field(default_factory=list)
    lesions: list[Item] = field(default_factory=list)
    overlays: list[Item] = field(default_factory=list)  # stents, grafts
    marks: list[Item] = field(default_factory=list)  # ticks, reconstitution symbols
    boxes: dict[str, Box] = field(default_factory=dict)  # drawn extent per side ("" = aorta)
    half_widths: dict[str, float] = field(default_factory=dict)
    anchors: dict[str, Point] = field(default_factory=dict)  # label anchors off the template

    def grow(self, side: str, box: Box) -> None:
        """Add ``box`` to the drawn extent of ``side``."""
        self.boxes[side] = self.boxes[side].union(box) if side in self.boxes else box

    def half_width(self, vessel: Vessel, style: Style) -> float:
        """Return the half width the tube of ``vessel`` was drawn with."""
        return self.half_widths.get(vessel.key, half_width(vessel, style))


def draw_tubes(
    assessment: Assessment, template: Template, fit: Fit, style: Style, bands: dict[str, BandStyle]
) -> MapParts:
    """Return the map with each vessel drawn as a tube in its segment's own band."""
    out = MapParts()
    results = segment_results(assessment)
    for key in sorted(template.vessels, key=vessel_order):
        vessel = template.vessels[key]
        res = results.get(key)
        # the lumen shows the segment's own sample; its lesions are drawn over it to scale
        band = ensure_band(bands, style, (res.base_band or res.band) if res else NOT_ASSESSED)
        hw = half_width(vessel, style)
        out.half_widths[key] = hw
        pts = outline(vessel, fit, 0.0, vessel.geometry.length(), hw)
        out.grow(vessel.side or "", bbox(pts))
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
    return out


def draw_lesion(
    lesion: LesionResult,
    template: Template,
    fit: Fit,
    style: Style,
    bands: dict[str, BandStyle],
    out: MapParts,
) -> None:
    """Add ``lesion`` to ``out``: its stretch over each segment drawn, and ticks at its ends."""
    band = ensure_band(bands, style, lesion.band)
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
        hw = out.half_width(vessel, style)
        out.lesions.append(
            Polygon(
                make_id(*base, "span", j),
                outline(vessel, fit, s0, s1, hw),
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
            hw = out.half_width(vessel, style)
            out.marks.append(
                Line(
                    make_id(*base, "tick", end),
                    across(vessel, fit, s, hw + 2.2),
                    style.tick_ink,
                    style.tick_pt,
                )
            )
    _draw_reconstitution(lesion, template, fit, style, out)


def _draw_reconstitution(
    lesion: LesionResult, template: Template, fit: Fit, style: Style, out: MapParts
) -> None:
    """Add the ring and bar where an occlusion's flow returns (when that segment is drawn)."""
    base = ("lesion", lesion.side.value, lesion.index)
    point = lesion.reconstitution
    vessel_back = template.vessels.get(vessel_key(lesion.side, point.segment)) if point else None
    if point is not None and vessel_back is not None:
        vessel = vessel_back
        s = point.start_frac * vessel.geometry.length()
        hw = out.half_width(vessel, style)
        (x, y), _ = frame(vessel, fit, s)
        ring = hw + 1.8
        out.marks.append(
            Group(
                make_id(*base, "reconstitution"),
                (
                    Line(
                        make_id(*base, "reconstitution", "bar"),
                        across(vessel, fit, s, ring + 2.6),
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


def _register_bands(assessment: Assessment, style: Style, bands: dict[str, BandStyle]) -> None:
    """Add a style for any band the results use that the criteria sets did not list."""
    for limb in assessment.limbs.values():
        for seg in limb.segments.values():
            ensure_band(bands, style, seg.band)
        for les in limb.lesions:
            ensure_band(bands, style, les.band)
