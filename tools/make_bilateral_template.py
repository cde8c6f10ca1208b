"""Write the shipped bilateral map template (templates_svg/bilateral.svg) and its test fixtures.

Run from the repository root::

    python tools/make_bilateral_template.py            # writes templates_svg/bilateral.svg
    python tools/make_bilateral_template.py --fixtures # also rewrites tests/data/templates/*.svg

The artwork is this project's own schematic: an anterior view, patient's right on the viewer's
left. Each vessel is one cubic Bézier from its parent's distal end, shaped by three angles (start
tangent, chord, end tangent; 0° is straight down, positive is lateral) and scaled so its arc length
is the anatomy's nominal length times the drawing scale. The script is not part of the package.
"""

from __future__ import annotations

import argparse
import math
import sys
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from diagram import anatomy  # noqa: E402
from diagram.drawing.template.geometry import (  # noqa: E402
    Affine,
    Cubic,
    PathGeometry,
    Point,
    format_number,
    parse_transform,
    transform_path_d,
)
from diagram.drawing.template.nominal import NOMINAL_DIAMETER_MM  # noqa: E402

VIEW_W, VIEW_H = 400.0, 1000.0
MID_X = VIEW_W / 2
LIMB_UNITS_PER_CM = 8.5  # from the groin down
PELVIS_UNITS_PER_CM = 7.0  # aorta and iliacs, compressed so the pelvis stays short
PELVIC = frozenset({"AO", "CIA", "IIA", "EIA"})
HANDLE = 0.36  # control-handle length as a fraction of the chord

# segment: (start tangent or None to continue the parent's end tangent, chord, end tangent), in
# degrees from straight down, positive toward the patient's lateral side.
SHAPES: dict[str, tuple[float | None, float, float]] = {
    "AO": (0.0, 0.0, 0.0),
    "CIA": (18.0, 32.0, 42.0),
    "IIA": (-8.0, -24.0, -42.0),
    "EIA": (None, 36.0, 18.0),
    "CFA": (None, 8.0, 2.0),
    "PFA": (34.0, 20.0, 6.0),
    "SFA-P": (None, -4.0, -6.0),
    "SFA-M": (None, -5.0, -4.0),
    "SFA-D": (None, -3.0, -1.0),
    "POP-AK": (None, 1.0, 2.0),
    "POP-BK": (None, 1.0, 0.0),
    "TPT": (-8.0, -10.0, -12.0),
    "ATA-P": (50.0, 16.0, 2.0),
    "ATA-M": (None, 0.0, -2.0),
    "ATA-D": (None, -5.0, -9.0),
    "PTA-P": (None, -6.0, 0.0),
    "PTA-M": (None, 0.0, 0.0),
    "PTA-D": (None, 0.0, -2.0),
    "PER-P": (14.0, 8.0, 0.0),
    "PER-M": (None, 0.0, 0.0),
    "PER-D": (None, -1.0, -3.0),
    "DPA": (None, -14.0, -20.0),
    "PLA": (None, 4.0, 16.0),
}
AORTA_TOP = (MID_X, 50.0)


@dataclass(frozen=True)
class Drawn:
    """One vessel as drawn: its key, side, segment and centre line."""

    side: str | None
    segment: str
    curve: Cubic
    end_angle: float


def _direction(angle_deg: float, side: str | None) -> Point:
    """Return the unit vector for an angle from straight down, positive toward lateral."""
    lateral = -1.0 if side == "right" else 1.0  # the right leg's lateral side is the viewer's left
    a = math.radians(angle_deg)
    return (lateral * math.sin(a), math.cos(a))


def _shaped(
    start: Point,
    side: str | None,
    start_deg: float,
    chord_deg: float,
    end_deg: float,
    target: float,
) -> Cubic:
    """Return the cubic with this shape whose arc length is ``target`` units."""

    def build(chord: float) -> Cubic:
        cx, cy = _direction(chord_deg, side)
        end = (start[0] + chord * cx, start[1] + chord * cy)
        u0, u1 = _direction(start_deg, side), _direction(end_deg, side)
        h = HANDLE * chord
        return Cubic(
            start,
            (start[0] + h * u0[0], start[1] + h * u0[1]),
            (end[0] - h * u1[0], end[1] - h * u1[1]),
            end,
        )

    # The shape is fixed by the angles, so the arc length scales linearly with the chord.
    unit = build(1.0).length()
    return build(target / unit)


def vessels() -> list[Drawn]:
    """Return every vessel, the aorta first, then the right and left trees in anatomy order."""
    out: list[Drawn] = []
    seg = anatomy.SEGMENTS["AO"]
    _, chord_deg, end_deg = SHAPES["AO"]
    aorta = _shaped(AORTA_TOP, None, 0.0, chord_deg, end_deg, seg.length_cm * PELVIS_UNITS_PER_CM)
    out.append(Drawn(None, "AO", aorta, end_deg))
    for side in ("right", "left"):
        drawn: dict[str, Drawn] = {"AO": out[0]}
        for seg_id in anatomy.SEGMENT_IDS:
            if seg_id == "AO":
                continue
            seg = anatomy.SEGMENTS[seg_id]
            assert seg.parent is not None
            parent = drawn[seg.parent]
            start_deg_opt, chord_deg, end_deg = SHAPES[seg_id]
            start_deg = parent.end_angle if start_deg_opt is None else start_deg_opt
            scale = PELVIS_UNITS_PER_CM if seg_id in PELVIC else LIMB_UNITS_PER_CM
            curve = _shaped(
                parent.curve.p3, side, start_deg, chord_deg, end_deg, seg.length_cm * scale
            )
            drawn[seg_id] = Drawn(side, seg_id, curve, end_deg)
            out.append(drawn[seg_id])
    return out


# --------------------------------------------------------------------------- silhouette

# The right half of the outline (viewer's left), from the waist down the outer side, round the
# foot and up the inner side to the crotch: (x, y) in the viewBox.
_RIGHT_HALF: tuple[Point, ...] = (
    (80, 10),
    (72, 70),
    (62, 130),
    (56, 190),
    (60, 262),
    (71, 360),
    (85, 450),
    (95, 512),
    (94, 562),
    (90, 622),
    (97, 700),
    (110, 780),
    (118, 824),
    (116, 850),
    (114, 876),
    (110, 906),
    (111, 932),
    (116, 950),
    (128, 960),
    (145, 968),
    (163, 974),
    (177, 974),
    (185, 963),
    (187, 945),
    (186, 910),
    (181, 878),
    (180, 852),
    (178, 832),
    (175, 812),
    (179, 750),
    (193, 662),
    (195, 612),
    (190, 562),
    (193, 512),
    (190, 462),
    (195, 350),
    (198, 272),
    (MID_X, 244),
)
# Toe clefts on the right foot: the x where each cleft meets the front of the toes.
_TOE_CLEFTS_X: tuple[float, ...] = (125.0, 138.0, 151.0, 165.0)
_CORNERS = frozenset({0, len(_RIGHT_HALF) - 1})


def _catmull_rom(points: tuple[Point, ...]) -> list[tuple[Point, Point, Point]]:
    """Return cubic segments (c1, c2, end) of a smooth open curve through ``points``."""
    out = []
    n = len(points)
    for i in range(n - 1):
        p0 = points[i - 1] if i > 0 else points[i]
        p1, p2 = points[i], points[i + 1]
        p3 = points[i + 2] if i + 2 < n else points[i + 1]
        c1 = (p1[0] + (p2[0] - p0[0]) / 6, p1[1] + (p2[1] - p0[1]) / 6)
        c2 = (p2[0] - (p3[0] - p1[0]) / 6, p2[1] - (p3[1] - p1[1]) / 6)
        out.append((c1, c2, p2))
    return out


def _mirror(p: Point) -> Point:
    return (VIEW_W - p[0], p[1])


def _pt(p: Point) -> str:
    return f"{format_number(p[0])} {format_number(p[1])}"


def silhouette_d() -> str:
    """Return the closed outline of the lower trunk, both legs and both feet."""
    right = _RIGHT_HALF
    left = tuple(_mirror(p) for p in reversed(right))
    parts = [f"M {_pt(right[0])}"]
    for chain in (right, left):
        parts.extend(f"C {_pt(c1)} {_pt(c2)} {_pt(end)}" for c1, c2, end in _catmull_rom(chain))
    # The waist is cut with a shallow curve rather than a ruler line.
    parts.append(f"C {_pt((270, 12))} {_pt((130, 12))} {_pt(right[0])} Z")
    return " ".join(parts)


def landmarks_d(drawn: list[Drawn]) -> list[str]:
    """Return the quiet landmark strokes: inguinal ligaments through the EIA/CFA junctions, toes."""
    out = []
    for d in drawn:
        if d.segment != "CFA":
            continue
        x, y = d.curve.p0
        lateral = -1.0 if d.side == "right" else 1.0
        asis = (x + lateral * 62, y - 50)
        pubic = (x - lateral * 52, y + 26)
        mid1 = (x + lateral * 24, y - 22)
        out.append(f"M {_pt(asis)} Q {_pt(mid1)} {_pt((x, y))} T {_pt(pubic)}")
    toes = [
        p
        for p in PathGeometry.from_d(silhouette_d()).polyline(0, 1e9, 0.25)
        if p[1] > 940 and p[0] < MID_X
    ]
    for x in _TOE_CLEFTS_X:
        y = min(toes, key=lambda p: abs(p[0] - x))[1]
        p, q = (x, y), (x + 0.6, y - 9)
        out.append(f"M {_pt(p)} L {_pt(q)}")
        out.append(f"M {_pt(_mirror(p))} L {_pt(_mirror(q))}")
    return out


# --------------------------------------------------------------------------- SVG text


def _d(curve: Cubic) -> str:
    return f"M {_pt(curve.p0)} C {_pt(curve.p1)} {_pt(curve.p2)} {_pt(curve.p3)}"


def _vessel_element(d: Drawn) -> str:
    seg = anatomy.SEGMENTS[d.segment]
    diameter = NOMINAL_DIAMETER_MM[d.segment]
    attrs = [
        f'id="{d.segment if d.side is None else d.side + "-" + d.segment}"',
        f'data-segment="{d.segment}"',
    ]
    if d.side is not None:
        attrs.append(f'data-side="{d.side}"')
    attrs += [
        f'data-length-cm="{format_number(seg.length_cm)}"',
        f'data-diameter-mm="{format_number(diameter)}"',
        f'stroke-width="{format_number(diameter * 0.55)}"',
        f'd="{_d(d.curve)}"',
    ]
    return f"    <path {' '.join(attrs)}/>"


def template_svg() -> str:
    """Return the bilateral template's SVG text."""
    drawn = vessels()
    marks = landmarks_d(drawn)
    lines = [
        '<?xml version="1.0" encoding="UTF-8"?>',
        '<svg xmlns="http://www.w3.org/2000/svg" version="1.1" viewBox="0 0 400 1000" '
        'width="400" height="1000" '
        f'data-units-per-cm="{format_number(LIMB_UNITS_PER_CM)}">',
        "  <title>limbchart bilateral leg-artery map</title>",
        "  <desc>Original schematic: anterior view of the leg arteries from the distal aorta to "
        "the feet, patient's right on the viewer's left. Vessel centre lines run proximal to "
        f"distal; {format_number(LIMB_UNITS_PER_CM)} units per cm from the groin down, "
        f"{format_number(PELVIS_UNITS_PER_CM)} in the pelvis.</desc>",
        '  <g id="silhouette" fill="none" stroke="#b9b9b2" stroke-width="1.2" '
        'stroke-linejoin="round">',
        f'    <path id="body-outline" d="{silhouette_d()}"/>',
        "  </g>",
        '  <g id="landmarks" fill="none" stroke="#cdcdc6" stroke-width="0.8">',
        *(f'    <path stroke-dasharray="3 3" d="{d}"/>' for d in marks[:2]),
        *(f'    <path d="{d}"/>' for d in marks[2:]),
        "  </g>",
        '  <g id="vessels" fill="none" stroke="#a8322a" stroke-linecap="round" '
        'stroke-linejoin="round">',
        *(_vessel_element(d) for d in drawn),
        "  </g>",
        "</svg>",
        "",
    ]
    return "\n".join(lines)


# --------------------------------------------------------------------------- test fixtures


def _fixture_with(
    drop: str | None = None,
    move: tuple[str, Point] | None = None,
    swap_sides: bool = False,
    duplicate: str | None = None,
) -> str:
    """Return the template text with one deliberate defect."""
    drawn = vessels()
    rows = []
    for d in drawn:
        key = anatomy.vessel_key(d.side, d.segment) if d.side else d.segment
        if key == drop:
            continue
        curve = d.curve
        if move is not None and key == move[0]:
            dx, dy = move[1]  # shift only the start, so exactly one join breaks
            p0, p1 = curve.p0, curve.p1
            curve = Cubic((p0[0] + dx, p0[1] + dy), (p1[0] + dx, p1[1] + dy), curve.p2, curve.p3)
        side = d.side
        if swap_sides and side is not None:
            side = "left" if side == "right" else "right"
        row = _vessel_element(Drawn(side, d.segment, curve, d.end_angle))
        rows.append(row)
        if key == duplicate:
            rows.append(row)
    return _wrap(rows)


def _wrap(rows: list[str]) -> str:
    return "\n".join(
        [
            '<?xml version="1.0" encoding="UTF-8"?>',
            '<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 400 1000">',
            '  <g id="vessels" fill="none" stroke="#a8322a">',
            *rows,
            "  </g>",
            '  <g id="silhouette" fill="none" stroke="#b9b9b2">',
            f'    <path d="{silhouette_d()}"/>',
            "  </g>",
            "</svg>",
            "",
        ]
    )


def _exact(v: float) -> str:
    return repr(v)


def _xpt(p: Point) -> str:
    return f"{_exact(p[0])} {_exact(p[1])}"


def _transformed_fixture() -> str:
    """Return a valid template whose coordinates only come right through nested transforms.

    The vessel layer is mirrored, each side's group is rotated, scaled and skewed, and every path
    carries its own matrix; the path data is written in relative commands in the inverse frame, so
    the geometry after transforms equals the shipped template. Names come from ids and
    inkscape:label as well as data-segment.
    """
    layer_text = "translate(400 0) scale(-1 1)"
    layer = parse_transform(layer_text)
    group_text = {
        None: "translate(5,-3)",
        "right": "rotate(30 120 500) scale(1.25, 0.8)",
        "left": "skewX(20),translate(-7 11) skewY(-4)",
    }
    groups = {side: parse_transform(text) for side, text in group_text.items()}
    outline_inverse = parse_transform("translate(10 20) scale(0.5)").inverse()
    rows: dict[str | None, list[str]] = {None: [], "right": [], "left": []}
    for i, d in enumerate(vessels()):
        own = Affine(0.9, 0.1, -0.2, 1.1, 3 + i, -2 * i)
        total = layer @ groups[d.side] @ own
        local = d.curve.transformed(total.inverse())
        p0, p1, p2, p3 = local.p0, local.p1, local.p2, local.p3
        rel = (
            f"m {_xpt(p0)} c {_xpt((p1[0] - p0[0], p1[1] - p0[1]))} "
            f"{_xpt((p2[0] - p0[0], p2[1] - p0[1]))} {_xpt((p3[0] - p0[0], p3[1] - p0[1]))}"
        )
        matrix = " ".join(_exact(v) for v in (own.a, own.b, own.c, own.d, own.e, own.f))
        seg = anatomy.SEGMENTS[d.segment]
        meta = (
            f'data-length-cm="{format_number(seg.length_cm)}" '
            f'data-diameter-mm="{format_number(NOMINAL_DIAMETER_MM[d.segment])}"'
        )
        if d.side is None:
            name = f'data-segment="{d.segment}"'
        elif i % 3 == 0:
            name = f'id="{d.side}-{d.segment}"'
        elif i % 3 == 1:
            name = f'id="{d.side[0].upper()}_{d.segment}"'
        else:
            label = f"{d.side.title()} {d.segment.replace('-', ' ')}"
            name = f'id="path{i}" inkscape:label="{label}"'
        rows[d.side].append(f'      <path {name} {meta} transform="matrix({matrix})" d="{rel}"/>')

    def group(side: str | None) -> list[str]:
        return [f'    <g transform="{group_text[side]}">', *rows[side], "    </g>"]

    return "\n".join(
        [
            '<?xml version="1.0" encoding="UTF-8"?>',
            '<svg xmlns="http://www.w3.org/2000/svg" '
            'xmlns:inkscape="http://www.inkscape.org/namespaces/inkscape" viewBox="0 0 400 1000">',
            f'  <g id="vessels" transform="{layer_text}">',
            *group(None),
            *group("right"),
            *group("left"),
            "  </g>",
            # An editor's layer: named by its label, moved by a transform the path data undoes.
            '  <g inkscape:groupmode="layer" inkscape:label="Silhouette" id="layer1" '
            'transform="translate(10 20) scale(0.5)">',
            f'    <path d="{transform_path_d(silhouette_d(), outline_inverse)}"/>',
            "  </g>",
            "</svg>",
            "",
        ]
    )


def fixtures() -> dict[str, str]:
    """Return the broken and valid fixture files by name."""
    return {
        "missing-segment.svg": _fixture_with(drop="left/PER-M"),
        "gap.svg": _fixture_with(move=("right/POP-BK", (0.0, 4.0))),
        "swapped-sides.svg": _fixture_with(swap_sides=True),
        "duplicate.svg": _fixture_with(duplicate="right/SFA-M"),
        "transformed.svg": _transformed_fixture(),
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--fixtures", action="store_true", help="also write test fixtures")
    args = parser.parse_args()
    out = ROOT / "templates_svg" / "bilateral.svg"
    out.write_text(template_svg(), encoding="utf-8")
    print(f"wrote {out.relative_to(ROOT)}")
    if args.fixtures:
        folder = ROOT / "tests" / "data" / "templates"
        folder.mkdir(parents=True, exist_ok=True)
        for name, text in fixtures().items():
            (folder / name).write_text(text, encoding="utf-8")
            print(f"wrote {(folder / name).relative_to(ROOT)}")
    for d in vessels():
        geom = PathGeometry((d.curve,))
        assert geom.length() > 0


if __name__ == "__main__":
    main()
