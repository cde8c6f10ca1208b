"""Write the shipped one-leg maps (templates_svg/infrainguinal-{right,left}.svg) and test fixtures.

Run from the repository root::

    python tools/make_leg_template.py             # writes both shipped one-leg maps
    python tools/make_leg_template.py --fixtures  # also rewrites tests/data/templates/leg-*.svg

The artwork is this project's own schematic for bypass and stent planning: one leg seen from the
front, from the inguinal ligament to the toes, larger than on the bilateral map. Each artery's
course is one smooth curve through waypoints chosen on the leg (mid-inguinal point, adductor
hiatus, knee, malleoli); the curve is then cut into the segments of ``anatomy.py`` by arc length
in proportion to their nominal lengths, so every join is exact and one centimetre measures the
same along every vessel. The right leg is drawn first (its lateral side on the viewer's left) and
mirrored for the left. The script is not part of the package.
"""

from __future__ import annotations

import argparse
import math
import sys
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tools"))

from make_bilateral_template import _catmull_rom as catmull_rom  # noqa: E402

from diagram import anatomy  # noqa: E402
from diagram.drawing.template.geometry import Cubic, PathGeometry, Point, format_number  # noqa: E402
from diagram.drawing.template.nominal import NOMINAL_DIAMETER_MM  # noqa: E402

VIEW_W, VIEW_H = 420.0, 1000.0

# Courses of the right leg, (x, y) in the viewBox; lateral is toward smaller x. Each chain runs
# through the segments listed, proximal to distal; the first chain fixes the drawing scale.
TRUNK: tuple[Point, ...] = (
    (208, 78),  # mid-inguinal point: EIA becomes CFA under the ligament
    (209, 118),
    (216, 200),
    (228, 290),
    (240, 372),  # adductor hiatus: SFA becomes popliteal
    (234, 432),
    (218, 488),  # knee joint line
    (210, 545),  # popliteal bifurcation
    (216, 600),
    (232, 700),
    (248, 800),
    (258, 866),  # behind the medial malleolus
    (262, 904),
    (260, 936),  # along the medial sole
    (252, 962),
)
TRUNK_SEGMENTS = (
    "CFA",
    "SFA-P",
    "SFA-M",
    "SFA-D",
    "POP-AK",
    "POP-BK",
    "TPT",
    "PTA-P",
    "PTA-M",
    "PTA-D",
    "PLA",
)
# Branches: (parent segment whose distal end they leave, waypoints as offsets from that point,
# segments); each branch is then scaled about its origin to its nominal length.
BRANCHES: tuple[tuple[str, tuple[Point, ...], tuple[str, ...]], ...] = (
    # profunda: arises laterally and runs down the thigh lateral to the SFA
    ("CFA", ((-10, 14), (-26, 50), (-36, 90)), ("PFA",)),
    # anterior tibial: through the interosseous membrane to the front of the leg, lateral, to the
    # front of the ankle midway between the malleoli, then down the dorsum of the foot
    (
        "POP-BK",
        ((-14, 14), (-34, 50), (-46, 150), (-44, 250), (-28, 320), (-14, 365), (-6, 400)),
        ("ATA-P", "ATA-M", "ATA-D", "DPA"),
    ),
    # peroneal: between the two tibials, ending above the lateral malleolus
    ("TPT", ((-7, 30), (-15, 100), (-18, 180), (-20, 235)), ("PER-P", "PER-M", "PER-D")),
)

# The right leg's outline, clockwise from the lateral hip; the top edge is a cut across the hip.
OUTLINE: tuple[Point, ...] = (
    (88, 24),
    (76, 120),
    (82, 230),
    (102, 360),
    (122, 450),
    (124, 500),
    (114, 560),
    (116, 640),
    (134, 760),
    (154, 842),
    (150, 878),
    (148, 920),
    (156, 958),
    (174, 982),
    (214, 990),
    (258, 984),
    (276, 960),
    (278, 918),
    (276, 880),
    (266, 846),
    (280, 760),
    (300, 640),
    (304, 560),
    (296, 500),
    (300, 440),
    (314, 330),
    (316, 200),
    (300, 120),
    (290, 96),
    (316, 60),
    (332, 24),
)
TOE_CLEFTS_X: tuple[float, ...] = (192.0, 209.0, 226.0, 243.0)


@dataclass(frozen=True)
class Drawn:
    """One vessel as drawn: side, segment and centre-line path data."""

    side: str
    segment: str
    d: str


def _catmull_rom(points: Sequence[Point]) -> PathGeometry:
    """Return a smooth open curve through ``points`` (the bilateral map's Catmull-Rom cubics)."""
    pieces, start = [], points[0]
    for c1, c2, end in catmull_rom(tuple(points)):
        pieces.append(Cubic(start, c1, c2, end))
        start = end
    return PathGeometry(tuple(pieces))


def _cut(curve: PathGeometry, segments: Sequence[str], units_per_cm: float) -> dict[str, str]:
    """Return path data per segment, cut from ``curve`` at the nominal lengths' boundaries."""
    out: dict[str, str] = {}
    s = 0.0
    for seg in segments:
        nxt = s + anatomy.SEGMENTS[seg].length_cm * units_per_cm
        out[seg] = curve.subpath_d(s, min(nxt, curve.length()))
        s = nxt
    return out


def _scaled(start: Point, waypoints: Sequence[Point], target: float) -> PathGeometry:
    """Return the curve from ``start`` through ``waypoints`` scaled about ``start`` to length."""
    unit = _catmull_rom((start, *waypoints)).length()
    k = target / unit
    pts = [(start[0] + (x - start[0]) * k, start[1] + (y - start[1]) * k) for x, y in waypoints]
    return _catmull_rom((start, *pts))


def units_per_cm() -> float:
    """Return the drawing scale: the trunk's arc length per nominal centimetre."""
    total = sum(anatomy.SEGMENTS[s].length_cm for s in TRUNK_SEGMENTS)
    return _catmull_rom(TRUNK).length() / total


def right_leg() -> dict[str, str]:
    """Return the right leg's vessels as path data by segment."""
    scale = units_per_cm()
    trunk = _catmull_rom(TRUNK)
    paths = _cut(trunk, TRUNK_SEGMENTS, scale)
    for parent, offsets, segments in BRANCHES:
        start = PathGeometry.from_d(paths[parent]).end
        waypoints = [(start[0] + dx, start[1] + dy) for dx, dy in offsets]
        cm = sum(anatomy.SEGMENTS[s].length_cm for s in segments)
        paths.update(_cut(_scaled(start, waypoints, cm * scale), segments, scale))
    return {seg: paths[seg] for seg in anatomy.SEGMENT_IDS if seg in paths}


def _mirror_d(d: str) -> str:
    """Return path data mirrored about the viewBox's vertical centre line."""
    geometry = PathGeometry.from_d(d)
    pieces = []
    for p in geometry.pieces:
        assert isinstance(p, Cubic)
        m = [(VIEW_W - x, y) for x, y in (p.p0, p.p1, p.p2, p.p3)]
        pieces.append(Cubic(m[0], m[1], m[2], m[3]))
    return PathGeometry(tuple(pieces)).to_d()


def vessels(side: str) -> list[Drawn]:
    """Return the vessels of one leg, in anatomy order."""
    flip: Callable[[str], str] = _mirror_d if side == "left" else (lambda d: d)
    return [Drawn(side, seg, flip(d)) for seg, d in right_leg().items()]


def _pt(p: Point) -> str:
    return f"{format_number(p[0])} {format_number(p[1])}"


def outline_d(side: str) -> str:
    """Return the closed outline of the leg and foot; the top is a shallow cut across the hip."""
    pts = OUTLINE if side == "right" else tuple((VIEW_W - x, y) for x, y in OUTLINE)
    body = _catmull_rom(pts).to_d()
    first, last = pts[0], pts[-1]
    c1 = (last[0] + (first[0] - last[0]) / 3, 16.0)
    c2 = (last[0] + 2 * (first[0] - last[0]) / 3, 16.0)
    return f"{body} C {_pt(c1)} {_pt(c2)} {_pt(first)} Z"


def landmarks_d(side: str) -> list[tuple[str, bool]]:
    """Return the quiet strokes (path data, dashed): ligament, patella, knee line, toe clefts."""
    right = [
        ((118, 40), (160, 66), (208, 78), (248, 88), (286, 100)),  # inguinal ligament
    ]
    out: list[tuple[str, bool]] = []
    sign = 1 if side == "right" else -1

    def x(v: float) -> float:
        return v if side == "right" else VIEW_W - v

    for pts in right:
        mirrored = [(x(px), py) for px, py in pts]
        out.append((_catmull_rom(mirrored).to_d(), True))
    cx, cy, rx, ry = x(204), 438.0, 22.0, 28.0  # the patella, above the knee joint line
    out.append(
        (
            f"M {_pt((cx - rx, cy))} A {format_number(rx)} {format_number(ry)} 0 1 0 "
            f"{_pt((cx + rx, cy))} A {format_number(rx)} {format_number(ry)} 0 1 0 "
            f"{_pt((cx - rx, cy))} Z",
            False,
        )
    )
    out.append((f"M {_pt((x(136), 484))} L {_pt((x(166), 482))}", True))  # joint line, lateral
    out.append((f"M {_pt((x(250), 482))} L {_pt((x(282), 484))}", True))  # joint line, medial
    toes = PathGeometry.from_d(outline_d(side)).polyline(0, 1e9, 0.25)
    for cleft in TOE_CLEFTS_X:
        cx2 = x(cleft)
        y = max((p for p in toes if abs(p[0] - cx2) < 1 and p[1] > 950), key=lambda p: p[1])[1]
        out.append((f"M {_pt((cx2, y))} L {_pt((cx2 + 0.5 * sign, y - 10))}", False))
    return out


def _vessel_element(d: Drawn) -> str:
    seg = anatomy.SEGMENTS[d.segment]
    diameter = NOMINAL_DIAMETER_MM[d.segment]
    attrs = [
        f'id="{d.side}-{d.segment}"',
        f'data-segment="{d.segment}"',
        f'data-side="{d.side}"',
        f'data-length-cm="{format_number(seg.length_cm)}"',
        f'data-diameter-mm="{format_number(diameter)}"',
        f'stroke-width="{format_number(diameter * 0.7)}"',
        f'd="{d.d}"',
    ]
    return f"    <path {' '.join(attrs)}/>"


def template_svg(side: str, drawn: list[Drawn] | None = None, coverage: str | None = None) -> str:
    """Return the one-leg template's SVG text (``drawn`` replaces the vessels, for fixtures)."""
    rows = [_vessel_element(d) for d in (drawn if drawn is not None else vessels(side))]
    marks = landmarks_d(side)
    scale = format_number(units_per_cm())
    declared = coverage if coverage is not None else f"{side}-infrainguinal"
    return "\n".join(
        [
            '<?xml version="1.0" encoding="UTF-8"?>',
            '<svg xmlns="http://www.w3.org/2000/svg" version="1.1" '
            f'viewBox="0 0 {VIEW_W:g} {VIEW_H:g}" width="{VIEW_W:g}" height="{VIEW_H:g}" '
            + (f'data-coverage="{declared}" ' if declared else "")
            + f'data-units-per-cm="{scale}">',
            f"  <title>limbchart {side} leg map, groin to foot</title>",
            f"  <desc>Original schematic for bypass and stent planning: the {side} leg seen from "
            "the front, from the inguinal ligament to the toes. Vessel centre lines run proximal "
            f"to distal, {scale} units per cm.</desc>",
            '  <g id="silhouette" fill="none" stroke="#b4b2aa" stroke-width="1.2" '
            'stroke-linejoin="round">',
            f'    <path id="leg-outline" d="{outline_d(side)}"/>',
            "  </g>",
            '  <g id="landmarks" fill="none" stroke="#ccc9c0" stroke-width="0.8">',
            *(
                f"    <path{' stroke-dasharray=' + chr(34) + '4 3' + chr(34) if dashed else ''} "
                f'd="{d}"/>'
                for d, dashed in marks
            ),
            "  </g>",
            '  <g id="vessels" fill="none" stroke="#8c2d3a" stroke-linecap="round" '
            'stroke-linejoin="round">',
            *rows,
            "  </g>",
            "</svg>",
            "",
        ]
    )


# --------------------------------------------------------------------------- test fixtures


def _moved_start(d: str, dx: float) -> str:
    """Return path data whose first point (only) moved ``dx`` units along x."""
    geometry = PathGeometry.from_d(d)
    first = geometry.pieces[0]
    assert isinstance(first, Cubic)
    moved = Cubic((first.p0[0] + dx, first.p0[1]), first.p1, first.p2, first.p3)
    return PathGeometry((moved, *geometry.pieces[1:])).to_d()


BELOW_KNEE = frozenset(
    {"TPT", "DPA", "PLA", *(f"{v}-{third}" for v in ("ATA", "PTA", "PER") for third in "PMD")}
)


def fixtures() -> dict[str, str]:
    """Return broken and valid one-leg fixtures by file name."""
    right = vessels("right")
    return {
        "leg-missing-segment.svg": template_svg(
            "right", [d for d in right if d.segment != "PER-M"]
        ),
        "leg-gap.svg": template_svg(
            "right",
            [
                Drawn(d.side, d.segment, _moved_start(d.d, 3.0)) if d.segment == "ATA-M" else d
                for d in right
            ],
        ),
        # the right leg's drawing declared as the left leg: its lateral side faces the wrong way
        "leg-swapped-side.svg": template_svg(
            "left", [Drawn("left", d.segment, d.d) for d in right]
        ),
        "leg-outside-coverage.svg": template_svg("right", right, coverage="right:POP-BK"),
        "leg-undeclared.svg": template_svg("right", right, coverage=""),
        "leg-below-knee.svg": template_svg(
            "right",
            [d for d in right if d.segment in BELOW_KNEE],
            coverage="right:TPT right:ATA-P",
        ),
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--fixtures", action="store_true", help="also write test fixtures")
    args = parser.parse_args()
    for side in ("right", "left"):
        out = ROOT / "templates_svg" / f"infrainguinal-{side}.svg"
        out.write_text(template_svg(side), encoding="utf-8")
        print(f"wrote {out.relative_to(ROOT)}")
    if args.fixtures:
        folder = ROOT / "tests" / "data" / "templates"
        folder.mkdir(parents=True, exist_ok=True)
        for name, text in fixtures().items():
            (folder / name).write_text(text, encoding="utf-8")
            print(f"wrote {(folder / name).relative_to(ROOT)}")
    print(f"scale {units_per_cm():.3f} units per cm; smallest turn radius ok: {_gentle()}")


def _gentle(min_radius: float = 12.0) -> bool:
    """Return True when no vessel turns tighter than ``min_radius`` units (tubes stay clean)."""
    for d in vessels("right"):
        g = PathGeometry.from_d(d.d)
        n = max(int(g.length() / 2), 2)
        for i in range(1, n - 1):
            a, b, c = (g.point_at(g.length() * k / n) for k in (i - 1, i, i + 1))
            area = abs((b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0]))
            sides = math.dist(a, b) * math.dist(b, c) * math.dist(a, c)
            if area > 0 and sides / (2 * area) < min_radius:
                return False
    return True


if __name__ == "__main__":
    main()
