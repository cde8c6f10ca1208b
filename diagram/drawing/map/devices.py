"""Devices on the map: stents as a mesh inside the tube, bypass grafts as a tube of their own.

A stent is two crossing zigzags with bars at its ends, laid over the tubes from ``from_cm`` for
``length_cm``; a graft is a cased tube bowed outward from its origin to its target segment.
"""

from __future__ import annotations

import math

from diagram.anatomy import SEGMENTS, Side, ancestors, run_on, vessel_key
from diagram.assess.results import Assessment
from diagram.drawing.map.vessels import MapParts, across, bbox, frame
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
    make_id,
)
from diagram.drawing.style import Style
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


def draw_grafts(
    assessment: Assessment,
    side: Side,
    template: Template,
    fit: Fit,
    style: Style,
    out: MapParts,
) -> None:
    """Add each bypass graft of ``side``: a tube bowed outward from its origin to its target."""
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
        hull = bbox((p0, p1, p2, p3))
        pad = style.graft_pt
        out.grow(side.value, Box(hull.x - pad, hull.y - pad, hull.w + 2 * pad, hull.h + 2 * pad))
