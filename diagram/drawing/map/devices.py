"""Devices on the map: stents as a mesh inside the tube, bypass grafts as a tube of their own.

A stent is two crossing zigzags with bars at its ends, laid over the tubes from ``from_cm`` for
``length_cm``; a graft is a cased tube bowed outward from its origin to its target segment, each
graft site's stretch in its band's look. The same marks (``device_mark``) set the bands of the
stent and graft criteria sets apart from native ones in the legend and in every band chip.
"""

from __future__ import annotations

import math

from diagram.anatomy import SEGMENTS, Side, ancestors, run_on, vessel_key
from diagram.assess.results import Assessment, GraftResult
from diagram.drawing.map.vessels import STEP_PT, MapParts, across, bbox, ensure_band, frame
from diagram.drawing.scene import (
    Box,
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
    make_id,
)
from diagram.drawing.style import NOT_ASSESSED, BandStyle, Style
from diagram.drawing.template.geometry import Cubic, PathGeometry
from diagram.drawing.template.mapfile import Template, Vessel


def chain(first: str, last: str) -> tuple[str, ...]:
    """Return the segments from ``first`` to ``last`` along the tree (both ends when unrelated)."""
    inline = run_on(first)
    if last in inline:
        return inline[: inline.index(last) + 1]
    up = ancestors(last)
    if first in up:
        return (*reversed(up[: up.index(first) + 1]), last)
    return (first,) if first == last else (first, last)


def draw_stents(
    assessment: Assessment, side: Side, template: Template, fit: Fit, style: Style, out: MapParts
) -> None:
    """Add each stent of ``side`` as a mesh over the tubes it lies in (cm along the segments)."""
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
                    out.half_width(vessel, style),
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
                across(vessel, fit, s, hw * 0.9),
                style.stent_ink,
                style.stent_pt * 2,
            )
        )
    into.append(Group(base, tuple(parts), role="stent"))


# Where each graft site lies along the drawn graft, as fractions of its length: the anastomoses
# at the ends, the body in thirds between (a schematic, not a measured position).
GRAFT_STRETCHES: dict[str, tuple[float, float]] = {
    "proximal_anastomosis": (0.0, 0.12),
    "proximal": (0.12, 0.37),
    "mid": (0.37, 0.63),
    "distal": (0.63, 0.88),
    "distal_anastomosis": (0.88, 1.0),
}


def graft_anchor_key(side: Side, index: int, site: str) -> str:
    """Return the key a graft site's margin label is anchored by."""
    return f"graft/{side.value}/{index}/{site}"


def _graft_curve(
    a: Vessel, b: Vessel, side: Side, fit: Fit, out: MapParts
) -> tuple[Point, Point, Point, Point]:
    """Return the graft's Bézier on the page: bowed outward from ``a``'s middle to ``b``'s."""
    outward = -1.0 if side is Side.RIGHT else 1.0  # the patient's right is the viewer's left
    p0, _ = frame(a, fit, a.geometry.length() * 0.5)
    p3, _ = frame(b, fit, b.geometry.length() * 0.5)
    bulge = outward * (max(out.half_widths.get(a.key, 4.0), out.half_widths.get(b.key, 4.0)) + 12.0)
    dy = p3[1] - p0[1]
    return p0, (p0[0] + bulge, p0[1] + dy * 0.25), (p3[0] + bulge, p3[1] - dy * 0.25), p3


def _graft_lumen(
    base: str,
    result: GraftResult | None,
    curve: PathGeometry,
    style: Style,
    bands: dict[str, BandStyle],
) -> tuple[list[Item], dict[str, Point]]:
    """Return the graft's lumen, each site's stretch in its band, and each stretch's middle."""
    hw = style.graft_pt / 2
    length = curve.length()
    graded = {site.site: site.band for site in result.sites} if result else {}
    items: list[Item] = []
    middles: dict[str, Point] = {}
    for site, (f0, f1) in GRAFT_STRETCHES.items():
        band = ensure_band(bands, style, graded.get(site, NOT_ASSESSED))
        look = bands[band]
        items.append(
            Polygon(
                make_id(base, site),
                curve.outline(f0 * length, f1 * length, hw, STEP_PT),
                band=band,
                stroke=look.outline,
                stroke_width=style.tube_outline_pt / 2,
                dash=look.outline_dash,
            )
        )
        middles[site] = curve.point_at((f0 + f1) / 2 * length)
    return items, middles


def draw_grafts(
    assessment: Assessment,
    side: Side,
    template: Template,
    fit: Fit,
    style: Style,
    bands: dict[str, BandStyle],
    out: MapParts,
) -> None:
    """Add each bypass graft of ``side``: a cased tube bowed outward from origin to target.

    Each site's stretch of the lumen is drawn in its band's look (tint and texture), a site not
    sampled as not assessed; the middle of each stretch, on the edge facing the margin, anchors
    the site's margin label.
    """
    limb = assessment.limbs.get(side)
    results = {g.index: g for g in limb.grafts} if limb else {}
    toward = -1.0 if side is Side.RIGHT else 1.0
    for i, graft in enumerate(assessment.study.limb(side).grafts):
        a = template.vessels.get(vessel_key(side, graft.from_))
        b = template.vessels.get(vessel_key(side, graft.to))
        if a is None or b is None:  # an end off the map: listed in the notes
            continue
        p0, p1, p2, p3 = _graft_curve(a, b, side, fit, out)
        cmds: tuple[PathCommand, ...] = (("M", p0), ("C", (*p1, *p2, *p3)))
        base = make_id("graft", side.value, i)
        lumen, middles = _graft_lumen(
            base, results.get(i), PathGeometry((Cubic(p0, p1, p2, p3),)), style, bands
        )
        casing = PathItem(
            f"{base}-casing", cmds, stroke=style.graft_ink, stroke_width=style.graft_pt + 1.4
        )
        ends = (
            Circle(f"{base}-from", *p0, 1.6, fill=style.graft_ink),
            Circle(f"{base}-to", *p3, 1.6, fill=style.graft_ink),
        )
        out.overlays.append(Group(base, (casing, *lumen, *ends), role="graft"))
        for site, (x, y) in middles.items():
            edge = (x + toward * (style.graft_pt / 2 + 0.7), y)
            out.anchors[graft_anchor_key(side, i, site)] = edge
        hull = bbox((p0, p1, p2, p3))
        pad = style.graft_pt
        out.grow(side.value, Box(hull.x - pad, hull.y - pad, hull.w + 2 * pad, hull.h + 2 * pad))


# --------------------------------------------------------------------------- device looks


def device_mark(base: str, device: str, box: Box, style: Style) -> list[Item]:
    """Return the mark that tells a stent or graft band from a native one, over ``box``.

    A stent band carries the stent's crossing zigzags; a graft band the graft's dark casing as
    its frame. Swatches and chips of those bands carry it; native bands carry none.
    """
    if device == "stent":
        n = 8 if box.w > 3 * box.h else 2
        mid, amp = box.y + box.h / 2, box.h * 0.29
        zig = tuple((box.x + k * box.w / n, mid + (amp if k % 2 else -amp)) for k in range(n + 1))
        zag = tuple((px, 2 * mid - py) for px, py in zig)
        width = style.stent_pt if n == 8 else style.stent_pt * 0.8
        halo = width + 0.6  # a pale rim keeps the mesh seen on a dark band, as on the map
        return [
            Line(f"{base}-device-a-halo", zig, style.graft_fill, halo),
            Line(f"{base}-device-b-halo", zag, style.graft_fill, halo),
            Line(f"{base}-device-a", zig, style.stent_ink, width),
            Line(f"{base}-device-b", zag, style.stent_ink, width),
        ]
    if device == "graft":
        frame_w = 1.6 if box.h >= 8 else 1.0
        return [
            Rect(
                f"{base}-device",
                box.x,
                box.y,
                box.w,
                box.h,
                stroke=style.graft_ink,
                stroke_width=frame_w,
            )
        ]
    return []
