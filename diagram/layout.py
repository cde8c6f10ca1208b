"""Lay out a sheet: the graded map, its margin labels, header, legend, warnings and footer.

``layout`` turns an Assessment and a map Template into a Scene of page-point primitives. The map
is the template scaled to fit its area (aspect kept), patient's right on the viewer's left. Each
vessel is a tube in its segment's band; each lesion is painted over it from ``start_frac`` to
``end_frac`` of each segment it touches (arc length s = frac x path length), with ticks at its
ends. Labels sit in the margins (the right leg's on the left) with leader lines to their vessel,
stacked per column by ``pack_1d`` so that no two overlap; text is measured with the shipped font.
The sheet furniture (header, legend, measurement notes, caution, footer) closes the module.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field, replace

from diagram.anatomy import SEGMENT_IDS, Side, ancestors, run_on, vessel_key
from diagram.assess.results import Assessment, LesionResult, SegmentResult
from diagram.errors import Problem, TemplateError
from diagram.scene import (
    Anchor,
    Box,
    Circle,
    Group,
    Item,
    LabelBox,
    Line,
    PathCommand,
    PathItem,
    Point,
    Polygon,
    Rect,
    Region,
    Scene,
    Text,
    Weight,
    make_id,
)
from diagram.style import NOT_ASSESSED, BandStyle, Style, default_style
from diagram.template import Template, Vessel
from diagram.textmetrics import ellipsize, line_extents, text_width, wrap

PT_PER_MM = 72.0 / 25.4
MARGIN_PT = 10 * PT_PER_MM
GUTTER_PT = 10.0  # between the map and the nearest label column
COLUMN_GAP_PT = 8.0  # between two label columns of one margin
MIN_COLUMN_PT = 48.0
MAX_COLUMNS = 3
BLOCK_GAP_PT = 7.0
SIDE_MARK_STRIP_PT = 16.0
PRESSURE_BOX_PT = (140.0, 34.0)
STEP_PT = 2.0  # spacing of outline points along a vessel, on the page
MIN_LESION_PT = 2.0  # shortest lesion still drawn visibly
SWATCH_PT = 6.0  # band chip in front of a lesion label

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


# --------------------------------------------------------------------------- map transform


@dataclass(frozen=True)
class _Fit:
    """Template user units to page points: uniform scale, then translate."""

    scale: float
    tx: float
    ty: float

    def point(self, p: Point) -> Point:
        return (p[0] * self.scale + self.tx, p[1] * self.scale + self.ty)


_TOKEN = re.compile(r"[A-Za-z]|[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?")
_ARITY = {"M": 2, "L": 2, "T": 2, "H": 1, "V": 1, "C": 6, "S": 4, "Q": 4, "A": 7, "Z": 0}


def _map_args(cmd: str, args: list[float], fit: _Fit) -> tuple[float, ...]:
    s = fit.scale
    rel = cmd.islower()
    tx, ty = (0.0, 0.0) if rel else (fit.tx, fit.ty)
    up = cmd.upper()
    if up == "H":
        return (args[0] * s + tx,)
    if up == "V":
        return (args[0] * s + ty,)
    if up == "A":
        rx, ry, rot, large, sweep, x, y = args
        return (rx * s, ry * s, rot, large, sweep, x * s + tx, y * s + ty)
    return tuple(v * s + (tx if k % 2 == 0 else ty) for k, v in enumerate(args))


def path_commands(d: str, fit: _Fit) -> tuple[PathCommand, ...]:
    """Return path data ``d`` as commands mapped onto the page (the silhouette's layer)."""
    tokens = _TOKEN.findall(d)
    out: list[PathCommand] = []
    cmd: str | None = None
    i = 0
    while i < len(tokens):
        if tokens[i].isalpha():
            cmd = tokens[i]
            i += 1
            if cmd.upper() == "Z":
                out.append((cmd, ()))
                continue
        if cmd is None or cmd.upper() not in _ARITY or _ARITY[cmd.upper()] == 0:
            break  # malformed tail: the template module has validated what it hands on
        n = _ARITY[cmd.upper()]
        if i + n > len(tokens) or any(t.isalpha() for t in tokens[i : i + n]):
            break
        out.append((cmd, _map_args(cmd, [float(t) for t in tokens[i : i + n]], fit)))
        i += n
        if cmd in "Mm":
            cmd = "L" if cmd == "M" else "l"
    return tuple(out)


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
class _Label:
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


# --------------------------------------------------------------------------- the map


def _bands(assessment: Assessment, st: Style) -> dict[str, BandStyle]:
    out = {b.id: st.band_for(b.id, b.rank, b.label, b.look) for b in assessment.bands}
    if NOT_ASSESSED not in out:
        out[NOT_ASSESSED] = st.band_for(NOT_ASSESSED)
    return out


def _band(bands: dict[str, BandStyle], st: Style, band_id: str) -> str:
    """Return ``band_id``, registering a style for an id the criteria set did not list."""
    if band_id not in bands:
        bands[band_id] = st.band_for(band_id)
    return band_id


def _segment_results(assessment: Assessment) -> dict[str, SegmentResult]:
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


def _vessel(template: Template, key: str) -> Vessel:
    vessel = template.vessels.get(key)
    if vessel is None:
        raise TemplateError(
            [
                Problem(
                    template.source,
                    None,
                    "vessels",
                    key,
                    "the map template has no vessel for this segment",
                    "a map template must draw every segment of the arterial tree",
                )
            ]
        )
    return vessel


def _order(key: str) -> tuple[int, int, str]:
    side, _, seg = key.rpartition("/")
    index = SEGMENT_IDS.index(seg) if seg in SEGMENT_IDS else len(SEGMENT_IDS)
    return (index, 0 if side == "right" else 1, key)


def _half_width(vessel: Vessel, st: Style) -> float:
    width = vessel.diameter_mm * st.tube_pt_per_mm
    return min(max(width, st.tube_min_pt), st.tube_max_pt) / 2


def _outline(vessel: Vessel, fit: _Fit, s0: float, s1: float, hw: float) -> tuple[Point, ...]:
    pts = vessel.geometry.outline(s0, s1, hw / fit.scale, STEP_PT / fit.scale)
    return tuple(fit.point(p) for p in pts)


def _bbox(points: Sequence[Point]) -> Box:
    xs = [p[0] for p in points]
    ys = [p[1] for p in points]
    return Box(min(xs), min(ys), max(xs) - min(xs), max(ys) - min(ys))


def _frame(vessel: Vessel, fit: _Fit, s: float) -> tuple[Point, Point]:
    """Return the page point at arc length ``s`` and the unit normal there."""
    tx, ty = vessel.geometry.tangent_at(s)
    return fit.point(vessel.geometry.point_at(s)), (ty, -tx)


def _across(vessel: Vessel, fit: _Fit, s: float, half: float) -> tuple[Point, Point]:
    (x, y), (nx, ny) = _frame(vessel, fit, s)
    return (x - nx * half, y - ny * half), (x + nx * half, y + ny * half)


def _visible_span(s0: float, s1: float, length: float, fit: _Fit) -> tuple[float, float]:
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
    assessment: Assessment, template: Template, fit: _Fit, st: Style, bands: dict[str, BandStyle]
) -> _MapOut:
    out = _MapOut()
    results = _segment_results(assessment)

    def grow(side: str, box: Box) -> None:
        out.boxes[side] = out.boxes[side].union(box) if side in out.boxes else box

    for key in sorted(template.vessels, key=_order):
        vessel = template.vessels[key]
        res = results.get(key)
        band = _band(bands, st, res.band if res else NOT_ASSESSED)
        hw = _half_width(vessel, st)
        out.half_widths[key] = hw
        pts = _outline(vessel, fit, 0.0, vessel.geometry.length(), hw)
        grow(vessel.side or "", _bbox(pts))
        style = bands[band]
        out.tubes.append(
            Polygon(
                make_id("vessel", key),
                pts,
                band=band,
                stroke=style.outline,
                stroke_width=st.tube_outline_pt,
                dash=style.outline_dash,
            )
        )
    for side in (Side.RIGHT, Side.LEFT):
        limb = assessment.limbs.get(side)
        if limb is not None:
            for lesion in limb.lesions:
                _draw_lesion(lesion, template, fit, st, bands, out)
        _draw_stents(assessment, side, template, fit, st, out)
        _draw_grafts(assessment, side, template, fit, st, out, grow)
    return out


def _draw_lesion(
    lesion: LesionResult,
    template: Template,
    fit: _Fit,
    st: Style,
    bands: dict[str, BandStyle],
    out: _MapOut,
) -> None:
    band = _band(bands, st, lesion.band)
    style = bands[band]
    stretch: list[tuple[Vessel, float, float]] = []
    for span in lesion.spans:
        vessel = _vessel(template, vessel_key(lesion.side, span.segment))
        length = vessel.geometry.length()
        s0, s1 = sorted((span.start_frac * length, span.end_frac * length))
        s0, s1 = _visible_span(max(0.0, s0), min(length, s1), length, fit)
        stretch.append((vessel, s0, s1))
    base = ("lesion", lesion.side.value, lesion.index)
    for j, (vessel, s0, s1) in enumerate(stretch):
        hw = out.half_widths.get(vessel.key, _half_width(vessel, st))
        out.lesions.append(
            Polygon(
                make_id(*base, "span", j),
                _outline(vessel, fit, s0, s1, hw),
                band=band,
                stroke=style.outline,
                stroke_width=st.tube_outline_pt * 1.4,
            )
        )
    if stretch:
        first, last = stretch[0], stretch[-1]
        for end, (vessel, s) in (("start", (first[0], first[1])), ("end", (last[0], last[2]))):
            hw = out.half_widths.get(vessel.key, _half_width(vessel, st))
            out.marks.append(
                Line(
                    make_id(*base, "tick", end),
                    _across(vessel, fit, s, hw + 2.2),
                    st.tick_ink,
                    st.tick_pt,
                )
            )
    point = lesion.reconstitution
    if point is not None:
        vessel = _vessel(template, vessel_key(lesion.side, point.segment))
        s = point.start_frac * vessel.geometry.length()
        hw = out.half_widths.get(vessel.key, _half_width(vessel, st))
        (x, y), _ = _frame(vessel, fit, s)
        ring = hw + 1.8
        out.marks.append(
            Group(
                make_id(*base, "reconstitution"),
                (
                    Line(
                        make_id(*base, "reconstitution", "bar"),
                        _across(vessel, fit, s, ring + 2.6),
                        st.marker_ink,
                        1.0,
                    ),
                    Circle(
                        make_id(*base, "reconstitution", "ring"),
                        x,
                        y,
                        ring,
                        stroke=st.marker_ink,
                        stroke_width=1.0,
                    ),
                ),
                role="reconstitution",
            )
        )


def _chain(first: str, last: str) -> tuple[str, ...]:
    """Return the segments from ``first`` to ``last`` along the tree (both ends when unrelated)."""
    inline = run_on(first)
    if last in inline:
        return inline[: inline.index(last) + 1]
    up = ancestors(last)
    if first in up:
        return (*reversed(up[: up.index(first) + 1]), last)
    return (first,) if first == last else (first, last)


def _draw_stents(
    assessment: Assessment, side: Side, template: Template, fit: _Fit, st: Style, out: _MapOut
) -> None:
    for i, stent in enumerate(assessment.study.limb(side).stents):
        chain = _chain(stent.from_, stent.to)
        vessels = [_vessel(template, vessel_key(side, seg)) for seg in chain]
        start_cm = stent.from_cm or 0.0
        left_cm = stent.length_cm if stent.length_cm is not None else math.inf
        for j, vessel in enumerate(vessels):
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
                    out.half_widths.get(vessel.key, _half_width(vessel, st)),
                    st,
                    out.overlays,
                )
            if left_cm <= 0:
                break


def _mesh(
    base: str,
    vessel: Vessel,
    fit: _Fit,
    s0: float,
    s1: float,
    hw: float,
    st: Style,
    into: list[Item],
) -> None:
    """Draw a stent as two crossing zigzags inside the tube, with bars at its ends."""
    half_period = 3.6 / fit.scale  # sparse enough to leave the band texture readable
    n = max(2, math.ceil((s1 - s0) / half_period))
    zig: list[Point] = []
    zag: list[Point] = []
    for k in range(n + 1):
        s = s0 + (s1 - s0) * k / n
        (x, y), (nx, ny) = _frame(vessel, fit, s)
        off = 0.72 * hw * (1 if k % 2 else -1)
        zig.append((x + nx * off, y + ny * off))
        zag.append((x - nx * off, y - ny * off))
    halo = st.stent_pt + 0.6  # a pale rim keeps the mesh visible on a dark (occluded) lumen
    parts: list[Item] = []
    for name, pts in (("a", zig), ("b", zag)):
        parts.append(Line(f"{base}-{name}-halo", tuple(pts), st.graft_fill, halo))
    for name, pts in (("a", zig), ("b", zag)):
        parts.append(Line(f"{base}-{name}", tuple(pts), st.stent_ink, st.stent_pt))
    for name, s in (("p", s0), ("d", s1)):
        parts.append(
            Line(f"{base}-{name}", _across(vessel, fit, s, hw * 0.9), st.stent_ink, st.stent_pt * 2)
        )
    into.append(Group(base, tuple(parts), role="stent"))


def _draw_grafts(
    assessment: Assessment,
    side: Side,
    template: Template,
    fit: _Fit,
    st: Style,
    out: _MapOut,
    grow: Callable[[str, Box], None],
) -> None:
    outward = -1.0 if side is Side.RIGHT else 1.0  # the patient's right is the viewer's left
    for i, graft in enumerate(assessment.study.limb(side).grafts):
        a = _vessel(template, vessel_key(side, graft.from_))
        b = _vessel(template, vessel_key(side, graft.to))
        p0, _ = _frame(a, fit, a.geometry.length() * 0.5)
        p3, _ = _frame(b, fit, b.geometry.length() * 0.5)
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
                        f"{base}-casing", cmds, stroke=st.graft_ink, stroke_width=st.graft_pt + 1.4
                    ),
                    PathItem(f"{base}-lumen", cmds, stroke=st.graft_fill, stroke_width=st.graft_pt),
                    Circle(f"{base}-from", *p0, 1.6, fill=st.graft_ink),
                    Circle(f"{base}-to", *p3, 1.6, fill=st.graft_ink),
                ),
                role="graft",
            )
        )
        hull = _bbox((p0, p1, p2, p3))
        pad = st.graft_pt
        grow(side.value, Box(hull.x - pad, hull.y - pad, hull.w + 2 * pad, hull.h + 2 * pad))


# --------------------------------------------------------------------------- margin labels


def _labels(
    assessment: Assessment, template: Template, st: Style, bands: dict[str, BandStyle]
) -> list[_Label]:
    asc, desc = line_extents(st.label_pt)
    height = asc + desc + 2 * st.label_pad_pt
    out: list[_Label] = []

    def add(
        lid: str, margin: Side, kind: str, key: str, s: float, text: str, band: str | None
    ) -> None:
        bold = kind != "segment"
        width = text_width(text, st.label_pt, bold) + 2 * st.label_pad_pt
        if band is not None:
            width += SWATCH_PT + 2.0
        out.append(_Label(lid, margin, kind, key, s, text, bold, band, width, height))

    for side in (Side.RIGHT, Side.LEFT):
        limb = assessment.limbs.get(side)
        for lesion in limb.lesions if limb is not None else ():
            base = ("label", side.value, "lesion", lesion.index)
            spans = lesion.spans
            seg = spans[len(spans) // 2].segment if spans else lesion.at
            vessel = _vessel(template, vessel_key(side, seg))
            frac = (
                (spans[len(spans) // 2].start_frac + spans[len(spans) // 2].end_frac) / 2
                if spans
                else 0.5
            )
            add(
                make_id(*base),
                side,
                "lesion",
                vessel.key,
                frac * vessel.geometry.length(),
                lesion_label(lesion),
                _band(bands, st, lesion.band),
            )
            point = lesion.reconstitution
            if point is not None:
                rv = _vessel(template, vessel_key(side, point.segment))
                add(
                    make_id(*base, "reconstitution"),
                    side,
                    "reconstitution",
                    rv.key,
                    point.start_frac * rv.geometry.length(),
                    "reconst.",
                    None,
                )
    for key, res in sorted(_segment_results(assessment).items(), key=lambda kv: _order(kv[0])):
        if res.psv is not None:
            length = _vessel(template, key).geometry.length()
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
        _Label(
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


def _fit_map(
    template: Template,
    x0: float,
    x1: float,
    top: float,
    bottom: float,
    margins: tuple[float, float],
) -> tuple[_Fit, Box]:
    """Scale the template into the room between the two label margins (widths given)."""
    vx, vy, vw, vh = template.viewbox
    lo, hi = x0 + margins[0] + GUTTER_PT, x1 - margins[1] - GUTTER_PT
    scale = max(min((hi - lo) / vw, (bottom - top) / vh), 1e-3)
    w, h = vw * scale, vh * scale
    left = (x0 + x1) / 2 - w / 2 if margins[0] == margins[1] else (lo + hi) / 2 - w / 2
    down = bottom - h  # a map narrower than its room sits on the ankle pressure strip
    return _Fit(scale, left - vx * scale, down - vy * scale), Box(left, down, w, h)


def _stack_height(count: int, columns: int, height: float, gap: float) -> float:
    per_column = math.ceil(count / columns)
    return per_column * (height + gap) - gap if per_column else 0.0


def _anchor_point(vessel: Vessel, fit: _Fit, s: float, hw: float, margin: Side) -> Point:
    """Return the tube edge facing the label's margin (the centre when the vessel runs across)."""
    (x, y), (nx, ny) = _frame(vessel, fit, s)
    if abs(nx) < 0.25:
        return (x, y)
    toward = -1.0 if margin is Side.RIGHT else 1.0
    if nx * toward < 0:
        nx, ny = -nx, -ny
    return (x + nx * hw, y + ny * hw)


def _place_labels(
    labels: list[_Label],
    template: Template,
    fit: _Fit,
    map_box: Box,
    bounds: tuple[float, float],
    columns: Mapping[Side, int],
    half_widths: Mapping[str, float],
    st: Style,
    bands: Mapping[str, BandStyle],
) -> tuple[list[LabelBox], list[Item], list[Item]]:
    """Return the label boxes, the leader lines and the label items."""
    boxes: list[LabelBox] = []
    leaders: list[Item] = []
    texts: list[Item] = []
    asc, _ = line_extents(st.label_pt)
    pad = st.label_pad_pt
    for margin in (Side.RIGHT, Side.LEFT):
        mine = [lb for lb in labels if lb.margin is margin]
        widest = max((lb.width for lb in mine), default=0.0)
        anchors = {
            lb.id: _anchor_point(
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
                st.line_gap_pt,
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
                        st.leader_ink,
                        st.leader_pt,
                    )
                )
                leaders.append(Circle(f"{lb.id}-dot", *anchor, 0.9, fill=st.leader_ink))
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
                        st.label_pt,
                        Weight.BOLD if lb.bold else Weight.NORMAL,
                        fill=st.text_ink,
                    )
                )
                texts.append(Group(lb.id, tuple(parts), role=f"label {lb.kind}"))
    boxes.sort(key=lambda b: b.id)
    return boxes, leaders, texts


def _xywh(box: Box) -> tuple[float, float, float, float]:
    return box.x, box.y, box.w, box.h


# --------------------------------------------------------------------------- sheet furniture


def _header(
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


def _text_block(
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


def _footer(
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


def _notes(
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
    items, top = _text_block("notes", lines, st, st.small_pt, x0, bottom, st.warning_ink)
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


def _legend(
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
    note_items, note_top = _text_block(
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


# --------------------------------------------------------------------------- the sheet


def _symbols_used(assessment: Assessment) -> list[str]:
    lesions = [les for limb in assessment.limbs.values() for les in limb.lesions]
    limbs = [assessment.study.limb(side) for side in (Side.RIGHT, Side.LEFT)]
    used = {
        "ticks": any(les.spans for les in lesions),
        "reconstitution": any(les.reconstitution is not None for les in lesions),
        "stent": any(limb.stents for limb in limbs),
        "graft": any(limb.grafts for limb in limbs),
    }
    return [kind for kind in SYMBOL_LABELS if used[kind]]


def _pressure_sides(assessment: Assessment) -> list[Side]:
    pressures = assessment.study.pressures
    return [
        side
        for side in (Side.RIGHT, Side.LEFT)
        if any(
            v is not None
            for v in (pressures.limb(side).pt, pressures.limb(side).dp, pressures.limb(side).toe)
        )
    ]


def _pressure_regions(
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


def _register_bands(assessment: Assessment, st: Style, bands: dict[str, BandStyle]) -> None:
    """Add a style for any band the results use that the criteria sets did not list."""
    for limb in assessment.limbs.values():
        for seg in limb.segments.values():
            _band(bands, st, seg.band)
        for les in limb.lesions:
            _band(bands, st, les.band)


def _choose_columns(
    assessment: Assessment,
    template: Template,
    st: Style,
    bands: dict[str, BandStyle],
    height: float,
) -> tuple[list[_Label], dict[Side, int], Style]:
    """Return the labels, the columns of each margin and the label style that fit ``height``.

    One column at the house size; then one column set denser; then more columns in the margin
    that needs them (the map shrinks to make room: the last resort for very crowded studies).
    """
    dense = replace(st, label_pt=min(st.label_pt, 6.0), line_gap_pt=0.6, label_pad_pt=0.6)
    for style in (st, dense):
        labels = _labels(assessment, template, style, bands)
        label_h = labels[0].height if labels else 0.0
        columns: dict[Side, int] = {}
        for margin in Side:
            n = sum(1 for lb in labels if lb.margin is margin)
            columns[margin] = next(
                (
                    k
                    for k in range(1, MAX_COLUMNS + 1)
                    if _stack_height(n, k, label_h, style.line_gap_pt) <= height
                ),
                MAX_COLUMNS,
            )
        if max(columns.values()) == 1:
            break
    return labels, columns, style


def _margin_width(labels: Sequence[_Label], margin: Side, columns: int) -> float:
    widest = max((lb.width for lb in labels if lb.margin is margin), default=0.0)
    return max(MIN_COLUMN_PT, columns * widest + (columns - 1) * COLUMN_GAP_PT)


def layout(
    assessment: Assessment,
    template: Template,
    *,
    page: str = "a4",
    version: str,
    generated_note: str | None = None,
    style: Style | None = None,
) -> Scene:
    """Lay out the sheet of one assessment on ``page`` ("a4", "letter" or "map")."""
    if page not in PAGES:
        raise ValueError(f"page {page!r} is not one of {', '.join(PAGES)}")
    spec = PAGES[page]
    st = style or default_style()
    bands = _bands(assessment, st)
    x0, x1 = MARGIN_PT, spec.width_pt - MARGIN_PT
    top, bottom = MARGIN_PT, spec.height_pt - MARGIN_PT

    header: list[Item] = []
    if spec.furniture:
        header, top = _header(assessment, st, x0, x1, top)
    footer, bottom = _footer(assessment, version, generated_note, st, x0, x1, bottom)
    caution_lines = [(t, False) for t in wrap(CAUTION, st.caution_pt, x1 - x0)]
    caution, bottom = _text_block(
        "caution", caution_lines, st, st.caution_pt, x0, bottom - 2, st.text_ink
    )
    notes: list[Item] = []
    if spec.furniture:
        notes, bottom = _notes(assessment, st, x0, x1, bottom - BLOCK_GAP_PT / 2)
    _register_bands(assessment, st, bands)
    pressure_sides = _pressure_sides(assessment)
    reserve = PRESSURE_BOX_PT[1] + BLOCK_GAP_PT if pressure_sides else 0.0
    symbols = _symbols_used(assessment)
    legend, legend_top = _legend(
        list(bands.values()), symbols, st, x0, x1, bottom - BLOCK_GAP_PT, bands
    )
    area_top = top + SIDE_MARK_STRIP_PT
    area_bottom = legend_top - BLOCK_GAP_PT - reserve
    labels, columns, label_st = _choose_columns(
        assessment, template, st, bands, area_bottom - area_top
    )
    widths = (
        _margin_width(labels, Side.RIGHT, columns[Side.RIGHT]),
        _margin_width(labels, Side.LEFT, columns[Side.LEFT]),
    )
    if max(columns.values()) == 1:  # keep the map centred on the page
        widths = (max(widths), max(widths))
    fit, map_box = _fit_map(template, x0, x1, area_top, area_bottom, widths)
    drawn = _draw_map(assessment, template, fit, st, bands)
    label_boxes, leaders, label_items = _place_labels(
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

    silhouette = tuple(
        PathItem(
            make_id("silhouette", k),
            path_commands(d, fit),
            fill=st.silhouette_fill,
            stroke=st.silhouette_stroke,
            stroke_width=st.silhouette_width_pt,
        )
        for k, d in enumerate(template.silhouette)
    )
    mark_y = map_box.y - 3
    side_marks = (
        Text(
            "side-mark-right",
            map_box.x + map_box.w * 0.25,
            mark_y,
            "R",
            st.side_mark_pt,
            Weight.BOLD,
            Anchor.MIDDLE,
            st.muted_ink,
        ),
        Text(
            "side-mark-left",
            map_box.x + map_box.w * 0.75,
            mark_y,
            "L",
            st.side_mark_pt,
            Weight.BOLD,
            Anchor.MIDDLE,
            st.muted_ink,
        ),
    )
    vessel_box = None
    for box in drawn.boxes.values():
        vessel_box = box if vessel_box is None else vessel_box.union(box)
    regions = _pressure_regions(
        pressure_sides, drawn.boxes, map_box, x0, x1, area_bottom + BLOCK_GAP_PT / 2
    )
    items: list[Item] = [
        Rect("page", 0, 0, spec.width_pt, spec.height_pt, fill="#FFFFFF"),
        Group("header", tuple(header), role="header"),
        Group("silhouette", silhouette, role="silhouette"),
        Group("vessels", tuple(drawn.tubes), role="vessels"),
        Group("lesions", tuple(drawn.lesions), role="lesions"),
        Group("devices", tuple(drawn.overlays), role="devices"),
        Group("marks", tuple(drawn.marks), role="marks"),
        Group("leaders", tuple(leaders), role="leaders"),
        Group("labels", tuple(label_items), role="labels"),
        Group("side-marks", side_marks, role="side-marks"),
        *legend,
        Group("notes", tuple(notes), role="notes"),
        Group("caution", tuple(caution), role="caution"),
        Group("footer", tuple(footer), role="footer"),
    ]
    return Scene(
        page=spec.name,
        width_pt=spec.width_pt,
        height_pt=spec.height_pt,
        unit=spec.unit,
        font_family=st.font_family,
        bands=tuple(bands.values()),
        items=tuple(item for item in items if not (isinstance(item, Group) and not item.items)),
        map_box=map_box,
        vessel_box=vessel_box or map_box,
        label_boxes=tuple(label_boxes),
        pressure_regions=regions,
    )
