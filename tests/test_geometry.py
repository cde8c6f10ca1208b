"""Arc-length geometry of SVG path data: parsing, transforms, exact length queries, outlines."""

from __future__ import annotations

import dataclasses
import itertools
import math

import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

from diagram.drawing.template.geometry import (
    IDENTITY,
    Affine,
    Cubic,
    Line,
    PathGeometry,
    format_number,
    parse_path,
    parse_transform,
    transform_path_d,
)

# A quarter circle of radius 100 as one cubic: handle k = 4/3·(sqrt(2) - 1)·r (common practice).
K = 4 / 3 * (math.sqrt(2) - 1) * 100
QUARTER = f"M 100 0 C 100 {K} {K} 100 0 100"


def dense_oracle(
    geom: PathGeometry, n: int = 100_000
) -> tuple[list[tuple[float, float]], list[float]]:
    """Return a dense polyline of the path (uniform in each piece's parameter) and its lengths."""
    pts: list[tuple[float, float]] = []
    for piece in geom.pieces:
        start = 0 if not pts else 1
        pts.extend(piece.point(i / n) for i in range(start, n + 1))
    cum = [0.0]
    for a, b in itertools.pairwise(pts):
        cum.append(cum[-1] + math.dist(a, b))
    return pts, cum


def oracle_point(pts: list[tuple[float, float]], cum: list[float], s: float) -> tuple[float, float]:
    import bisect

    i = min(max(bisect.bisect_right(cum, s) - 1, 0), len(pts) - 2)
    f = (s - cum[i]) / (cum[i + 1] - cum[i])
    return (
        pts[i][0] + f * (pts[i + 1][0] - pts[i][0]),
        pts[i][1] + f * (pts[i + 1][1] - pts[i][1]),
    )


def close(p: tuple[float, float], q: tuple[float, float], tol: float = 1e-9) -> bool:
    return math.dist(p, q) <= tol


# --------------------------------------------------------------------------- straight lines


@pytest.mark.parametrize(
    ("d", "length", "end"),
    [
        ("M 0 0 L 30 40", 50.0, (30, 40)),
        ("M0,0L30,40", 50.0, (30, 40)),
        ("m 10 10 l 30 40", 50.0, (40, 50)),
        ("M 0 0 H 10 V 10 H 0", 30.0, (0, 10)),
        ("M 5 5 h 10 v 10 h -10", 30.0, (5, 15)),
        ("M 0 0 10 0 10 10", 20.0, (10, 10)),  # implicit lineto after M
        ("m 0 0 10 0 0 10", 20.0, (10, 10)),  # implicit relative lineto after m
        ("M 0 0 L 10 0 L 10 10 Z", 10 + 10 + math.hypot(10, 10), (0, 0)),
        ("M0 0L1e1 0", 10.0, (10, 0)),
        ("M0 0L.5.5", math.hypot(0.5, 0.5), (0.5, 0.5)),  # ".5.5" is two numbers
        ("M0 0L-3-4", 5.0, (-3, -4)),
        ("M 0 0 L 0 0 L 3 4", 5.0, (3, 4)),  # a zero-length piece is dropped
    ],
)
def test_straight_paths_have_their_euclidean_length(
    d: str, length: float, end: tuple[float, float]
) -> None:
    geom = PathGeometry.from_d(d)
    assert geom.length() == pytest.approx(length, abs=1e-12)
    assert close(geom.end, end)


@pytest.mark.parametrize(
    ("s", "point"),
    [
        (-5.0, (0, 0)),  # clamped below
        (0.0, (0, 0)),
        (50.0, (50, 0)),
        (99.999, (99.999, 0)),
        (100.0, (100, 0)),  # the join
        (100.001, (100, 0.001)),
        (150.0, (100, 50)),
        (200.0, (100, 100)),
        (1e6, (100, 100)),  # clamped above
    ],
)
def test_point_at_on_a_polyline(s: float, point: tuple[float, float]) -> None:
    geom = PathGeometry.from_d("M 0 0 L 100 0 L 100 100")
    assert close(geom.point_at(s), point, 1e-9)


@pytest.mark.parametrize(
    ("s", "tangent"),
    [(0.0, (1, 0)), (99.9, (1, 0)), (100.0, (0, 1)), (150.0, (0, 1)), (200.0, (0, 1))],
)
def test_tangent_at_a_join_is_the_one_leaving_it(s: float, tangent: tuple[float, float]) -> None:
    geom = PathGeometry.from_d("M 0 0 L 100 0 L 100 100")
    assert close(geom.tangent_at(s), tangent)


def test_collinear_cubic_with_uneven_speed_is_parametrised_by_arc_length() -> None:
    # Control points bunched at the start: the curve parameter runs far from the arc length,
    # but on a straight line the arc length is exactly the distance from the start.
    geom = PathGeometry.from_d("M 0 0 C 10 0 20 0 300 0")
    assert geom.length() == pytest.approx(300, abs=1e-9)
    for s in (0.0, 1.0, 75.0, 150.0, 299.0, 300.0):
        assert close(geom.point_at(s), (s, 0), 1e-7)
    assert geom.pieces[0].point(0.5)[0] == pytest.approx(48.75)  # t = 0.5 is nowhere near 150


# --------------------------------------------------------------------------- curves vs oracles


def test_quarter_circle_cubic_length_matches_dense_polyline_oracle() -> None:
    geom = PathGeometry.from_d(QUARTER)
    _pts, cum = dense_oracle(geom, 200_000)
    assert geom.length() == pytest.approx(cum[-1], abs=1e-6)
    # The cubic is an approximation: about 0.027 % longer than the true quarter circle (from
    # memory: radial error 2.7e-4 of the radius for a 90° cubic arc).
    assert geom.length() == pytest.approx(50 * math.pi, rel=3e-4)


@pytest.mark.parametrize("fraction", [0.0, 0.01, 0.25, 0.5, 0.75, 0.99, 1.0])
def test_quarter_circle_point_at_matches_oracle(fraction: float) -> None:
    geom = PathGeometry.from_d(QUARTER)
    pts, cum = dense_oracle(geom)
    s = fraction * geom.length()
    assert close(geom.point_at(s), oracle_point(pts, cum, s * cum[-1] / geom.length()), 1e-4)


def test_quarter_circle_midpoint_is_on_the_diagonal() -> None:
    # By symmetry the arc-length midpoint lies on y = x; curve-parameter midpoints of general
    # cubics do not, which is why point_at inverts the arc length.
    geom = PathGeometry.from_d(QUARTER)
    x, y = geom.point_at(geom.length() / 2)
    assert x == pytest.approx(y, abs=1e-9)
    assert math.hypot(x, y) == pytest.approx(100, rel=3e-4)


def test_parabola_quadratic_has_its_closed_form_length() -> None:
    # y = x² on [0, 1] as a quadratic Bézier, scaled by 100; length ∫√(1 + 4x²) dx
    # = √5/2 + asinh(2)/4 (calculus, common practice).
    geom = PathGeometry.from_d("M 0 0 Q 50 0 100 100")
    exact = 100 * (math.sqrt(5) / 2 + math.asinh(2) / 4)
    assert geom.length() == pytest.approx(exact, abs=1e-7)


def test_cusp_cubic_length_and_tangent() -> None:
    # B'(0.5) = 0: a cusp in the middle of the piece.
    geom = PathGeometry.from_d("M 0 0 C 100 100 0 100 100 0")
    _pts, cum = dense_oracle(geom, 200_000)
    assert geom.length() == pytest.approx(cum[-1], abs=1e-4)
    tx, ty = geom.tangent_at(geom.length() / 2)
    assert math.hypot(tx, ty) == pytest.approx(1.0)


def test_tangent_at_a_start_with_coincident_control_point() -> None:
    geom = PathGeometry.from_d("M 0 0 C 0 0 100 0 100 100")
    assert close(geom.tangent_at(0), (1, 0))
    end = PathGeometry.from_d("M 0 0 C 0 100 100 100 100 100")
    assert close(end.tangent_at(end.length()), (1, 0))


@pytest.mark.parametrize(
    ("d", "length", "tol"),
    [
        ("M 100 0 A 100 100 0 0 1 -100 0 A 100 100 0 0 1 100 0", 200 * math.pi, 0.01),
        ("M 0 0 A 1 1 0 0 1 100 0", 50 * math.pi, 0.005),  # radii scaled up to fit (SVG F.6.6)
        ("M 0 0 a 50 25 0 0 0 100 0", None, 0.0),
        ("M 0 0 A 0 10 0 0 1 30 40", 50.0, 1e-12),  # a zero radius draws a line
        ("M 0 0 A 10 10 0 0 1 0 0 L 3 4", 5.0, 1e-12),  # same endpoints: nothing drawn
    ],
)
def test_arcs_are_approximated_by_cubics(d: str, length: float | None, tol: float) -> None:
    geom = PathGeometry.from_d(d)
    if length is not None:
        assert geom.length() == pytest.approx(length, abs=tol)
    else:  # half an ellipse: Ramanujan's perimeter / 2 (from memory), loose tolerance
        a, b = 50, 25
        h = ((a - b) / (a + b)) ** 2
        half = math.pi * (a + b) * (1 + 3 * h / (10 + math.sqrt(4 - 3 * h))) / 2
        assert geom.length() == pytest.approx(half, rel=1e-4)
        # sweep-flag 0 turns counter-clockwise on the y-down page: from the left end, downwards.
        assert geom.bounds()[1] == pytest.approx(0, abs=1e-9)
        assert geom.bounds()[3] == pytest.approx(25, abs=0.01)


# --------------------------------------------------------------------------- relative forms


@pytest.mark.parametrize(
    ("relative", "absolute"),
    [
        ("M 0 0 c 10 0 20 10 20 20 s 10 20 20 20", "M 0 0 C 10 0 20 10 20 20 C 20 30 30 40 40 40"),
        ("M 0 0 S 10 10 20 0", "M 0 0 C 0 0 10 10 20 0"),  # S without a cubic before: c1 = cur
        ("M 0 0 q 10 20 20 0 t 20 0", "M 0 0 Q 10 20 20 0 Q 30 -20 40 0"),
        ("M 0 0 T 20 0", "M 0 0 Q 0 0 20 0"),
        ("M 0 0 Q 10 20 20 0 L 30 0 T 40 0", "M 0 0 Q 10 20 20 0 L 30 0 Q 30 0 40 0"),
        ("M 10 10 L 20 10 Z l 0 10", "M 10 10 L 20 10 L 10 10 L 10 20"),
    ],
)
def test_relative_and_shorthand_commands_equal_their_absolute_form(
    relative: str, absolute: str
) -> None:
    a = PathGeometry.from_d(relative)
    b = PathGeometry.from_d(absolute)
    assert a.length() == pytest.approx(b.length(), abs=1e-9)
    for f in (0.1, 0.5, 0.9):
        assert close(a.point_at(f * a.length()), b.point_at(f * b.length()), 1e-9)


def test_parse_path_keeps_subpaths_and_closure() -> None:
    subpaths = parse_path("M 0 0 L 10 0 L 10 10 Z M 20 20 L 30 20")
    assert [sp.closed for sp in subpaths] == [True, False]
    assert subpaths[0].pieces[-1] == Line((10, 10), (0, 0))
    assert transform_path_d("M 0 0 L 10 0 Z", Affine.translate(1, 2)) == "M 1 2 L 11 2 L 1 2 Z"


# --------------------------------------------------------------------------- bad path data


@pytest.mark.parametrize(
    ("d", "message"),
    [
        ("", "empty"),
        ("   ", "empty"),
        ("L 10 10", "must start with M"),
        ("M 10", "expects a number at offset 4"),
        ("M 10 10 L", "expects a number"),
        ("M 0 0 X 1 1", "expected a command letter at offset 6"),
        ("M 0 0 L 1e999 0", "out of range"),
        ("M nan 0", "expects a number"),
        ("M 0 0 A 1 1 0 2 0 5 5", "flag 0 or 1"),
        ("M 0 0 L 10 0 Z 5", "expected a command letter"),
        ("M 0 0 C 1 1 2 2", "expects a number"),
    ],
)
def test_bad_path_data_is_refused(d: str, message: str) -> None:
    with pytest.raises(ValueError, match=message):
        PathGeometry.from_d(d)


@pytest.mark.parametrize(
    ("d", "message"),
    [
        ("M 0 0", "draws nothing"),
        ("M 0 0 L 0 0", "zero length"),
        ("M 0 0 L 10 0 M 20 0 L 30 0", "2 separate subpaths"),
    ],
)
def test_paths_that_are_not_one_centre_line_are_refused(d: str, message: str) -> None:
    with pytest.raises(ValueError, match=message):
        PathGeometry.from_d(d)


def test_touching_subpaths_join_into_one_centre_line() -> None:
    assert PathGeometry.from_d("M 0 0 L 10 0 M 10 0 L 10 10").length() == pytest.approx(20)


@pytest.mark.parametrize("bad", [math.nan, math.inf, -math.inf])
def test_queries_refuse_non_finite_lengths(bad: float) -> None:
    geom = PathGeometry.from_d("M 0 0 L 10 0")
    with pytest.raises(ValueError, match="not a finite number"):
        geom.point_at(bad)
    with pytest.raises(ValueError, match="not a finite number"):
        geom.subpath_d(0, bad)


@pytest.mark.parametrize("step", [0.0, -1.0, math.nan])
def test_polyline_refuses_a_bad_step(step: float) -> None:
    with pytest.raises(ValueError, match="step"):
        PathGeometry.from_d("M 0 0 L 10 0").polyline(0, 10, step)


# --------------------------------------------------------------------------- sub-paths


SAMPLE = "M 10 10 C 60 0 90 60 120 120 L 150 160 Q 200 220 260 180"


@pytest.mark.parametrize(
    ("f0", "f1"),
    [(0.0, 1.0), (0.1, 0.2), (0.0, 0.3), (0.3, 0.8), (0.5, 0.95), (0.8, 0.3), (0.42, 0.42)],
)
def test_subpath_endpoints_equal_point_at(f0: float, f1: float) -> None:
    geom = PathGeometry.from_d(SAMPLE)
    s0, s1 = f0 * geom.length(), f1 * geom.length()
    d = geom.subpath_d(s0, s1)
    first = parse_path(d)[0]
    assert close(first.start, geom.point_at(s0), 1e-3)  # path data carries 3 decimals
    if s0 != s1:
        sub = PathGeometry.from_d(d)
        assert close(sub.end, geom.point_at(s1), 1e-3)
        assert sub.length() == pytest.approx(abs(s1 - s0), abs=5e-3)


@pytest.mark.parametrize(("f0", "f1"), [(0.05, 0.6), (0.2, 0.9), (0.9, 0.1)])
def test_subpath_lies_on_the_original_curve(f0: float, f1: float) -> None:
    geom = PathGeometry.from_d(SAMPLE)
    s0, s1 = f0 * geom.length(), f1 * geom.length()
    sub = PathGeometry(geom.subpath_pieces(s0, s1))
    direction = 1 if s1 >= s0 else -1
    assert sub.length() == pytest.approx(abs(s1 - s0), abs=1e-7)
    for u in (0.0, 0.123, 0.5, 0.77, 1.0):
        along = u * sub.length()
        assert close(sub.point_at(along), geom.point_at(s0 + direction * along), 1e-7)


@settings(max_examples=100, deadline=None)
@given(
    pts=st.lists(st.tuples(st.floats(-500, 500), st.floats(-500, 500)), min_size=4, max_size=4),
    f0=st.floats(0, 1),
    f1=st.floats(0, 1),
)
# Out and back along one line: the speed has a kink where the curve turns (found by hypothesis).
@example(pts=[(0.0, 0.0), (6.0, 0.0), (1.0, 0.0), (0.0, 0.0)], f0=0.0, f1=0.75)
def test_any_cubic_subpath_matches_point_at(
    pts: list[tuple[float, float]], f0: float, f1: float
) -> None:
    cubic = Cubic(pts[0], pts[1], pts[2], pts[3])
    if cubic.length() < 1e-3:
        return
    geom = PathGeometry((cubic,))
    s0, s1 = sorted((f0 * geom.length(), f1 * geom.length()))
    pieces = geom.subpath_pieces(s0, s1)
    scale = 1 + max(abs(v) for p in pts for v in p)
    if not pieces:  # a stretch of (almost) no length
        assert s1 - s0 <= 1e-12 * scale
        return
    assert close(pieces[0].start, geom.point_at(s0), 1e-7 * scale)
    assert close(pieces[-1].end, geom.point_at(s1), 1e-7 * scale)
    assert sum(p.length() for p in pieces) == pytest.approx(s1 - s0, abs=1e-6 * scale)


# --------------------------------------------------------------------------- polylines, outlines


def test_polyline_spacing_ends_and_joins() -> None:
    geom = PathGeometry.from_d("M 0 0 L 10 0 L 10 10")
    pts = geom.polyline(2, 17, 3)
    assert close(pts[0], (2, 0)) and close(pts[-1], (10, 7))
    assert (10.0, 0.0) in pts  # the corner is kept
    assert all(math.dist(a, b) <= 3 + 1e-12 for a, b in itertools.pairwise(pts))
    assert geom.polyline(17, 2, 3) == pts[::-1]
    assert geom.polyline(5, 5, 1) == ((5.0, 0.0), (5.0, 0.0))


def test_outline_left_side_runs_forward_then_right_side_back() -> None:
    # Travelling down the page (+y), the left of the direction of travel is +x (y points down).
    geom = PathGeometry.from_d("M 0 0 L 0 100")
    poly = geom.outline(0, 100, 5, 50)
    assert poly == ((5, 0), (5, 50), (5, 100), (-5, 100), (-5, 50), (-5, 0))
    assert geom.normal_at(0) == (1, 0)
    # Backwards travel: the same polygon, starting on the other side.
    back = geom.outline(100, 0, 5, 50)
    assert set(back) == set(poly) and back[0] == (-5, 100)


def test_outline_tapers_and_bevels_corners() -> None:
    geom = PathGeometry.from_d("M 0 0 L 100 0 L 100 100")
    poly = geom.outline(0, 200, 4, 100, end_half_width=2)
    # 3 stations; the corner station gets two offsets per side (incoming and outgoing tangent).
    assert len(poly) == 8
    assert close(poly[0], (0, -4)) and close(poly[3], (102, 100))
    assert close(poly[1], (100, -3)) and close(poly[2], (103, 0))


def test_outline_area_of_a_curved_tube() -> None:
    # A tube's area is its length times its width (Pappus) when the width is under the radius.
    geom = PathGeometry.from_d(QUARTER)
    poly = geom.outline(0, geom.length(), 3, 0.5)
    area = 0.5 * abs(
        sum(a[0] * b[1] - b[0] * a[1] for a, b in zip(poly, poly[1:] + poly[:1], strict=True))
    )
    assert area == pytest.approx(6 * geom.length(), rel=1e-4)


@pytest.mark.parametrize("width", [-1.0, math.nan])
def test_outline_refuses_bad_widths(width: float) -> None:
    with pytest.raises(ValueError, match="half width"):
        PathGeometry.from_d("M 0 0 L 1 0").outline(0, 1, width, 1)


def test_bounds_are_exact_for_curves() -> None:
    assert PathGeometry.from_d(QUARTER).bounds() == pytest.approx((0, 0, 100, 100))
    # An S-curve overshoots its end points: the extremes come from B'(t) = 0.
    xmin, ymin, xmax, ymax = PathGeometry.from_d("M 0 0 C 0 -100 100 200 100 100").bounds()
    assert ymin < -20 and ymax > 110 and (xmin, xmax) == (0, 100)


# --------------------------------------------------------------------------- transforms


@pytest.mark.parametrize(
    ("text", "point", "image"),
    [
        ("", (3, 4), (3, 4)),
        ("translate(10)", (1, 1), (11, 1)),
        ("translate(10,20)", (1, 1), (11, 21)),
        ("translate( 10 , 20 )", (1, 1), (11, 21)),
        ("scale(2)", (1, 3), (2, 6)),
        ("scale(2 3)", (1, 1), (2, 3)),
        ("rotate(90)", (1, 0), (0, 1)),  # clockwise on screen, y down
        ("rotate(90 10 10)", (10, 0), (20, 10)),
        ("rotate(-90, 10, 10)", (10, 0), (0, 10)),
        ("skewX(45)", (0, 10), (10, 10)),
        ("skewY(45)", (10, 0), (10, 10)),
        ("matrix(1 2 3 4 5 6)", (1, 1), (9, 12)),
        ("matrix(1,2,3,4,5,6)", (1, 1), (9, 12)),
        ("translate(10) scale(2)", (1, 1), (12, 2)),  # applied right to left
        ("scale(2) translate(10)", (1, 1), (22, 2)),
        ("translate(10),scale(2)", (1, 1), (12, 2)),
        ("translate(1e1 -1.5e0)", (0, 0), (10, -1.5)),
    ],
)
def test_parse_transform(text: str, point: tuple[float, float], image: tuple[float, float]) -> None:
    assert close(parse_transform(text).apply(point), image, 1e-12)


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("rotate(1,2)", "takes 1 or 3 numbers"),
        ("matrix(1 2 3)", "takes 6 numbers"),
        ("foo(1)", "unknown function 'foo'"),
        ("translate(1", "cannot read"),
        ("scale(a)", "expected a number"),
        ("translate(1e999)", "out of range"),
        ("skewX(90)", "degenerate"),
        ("translate(1) junk", "cannot read"),
    ],
)
def test_bad_transforms_are_refused(text: str, message: str) -> None:
    with pytest.raises(ValueError, match=message):
        parse_transform(text)


def test_affine_inverse_and_singular_matrix() -> None:
    m = parse_transform("rotate(30 5 7) scale(2 0.5) skewX(10) translate(3 -4)")
    round_trip = m @ m.inverse()
    for got, want in zip(
        dataclasses.astuple(round_trip), dataclasses.astuple(IDENTITY), strict=True
    ):
        assert got == pytest.approx(want, abs=1e-12)
    with pytest.raises(ValueError, match="singular"):
        Affine(1, 2, 2, 4).inverse()


@pytest.mark.parametrize(
    ("text", "factor"),
    [("scale(2)", 2.0), ("rotate(37 100 100)", 1.0), ("translate(5 5)", 1.0), ("scale(-3)", 3.0)],
)
def test_transformed_geometry_scales_lengths(text: str, factor: float) -> None:
    plain = PathGeometry.from_d(SAMPLE)
    moved = PathGeometry.from_d(SAMPLE, parse_transform(text))
    assert moved.length() == pytest.approx(factor * plain.length(), rel=1e-9)
    m = parse_transform(text)
    assert close(moved.point_at(factor * 40), m.apply(plain.point_at(40)), 1e-6)


# --------------------------------------------------------------------------- values, determinism


def test_path_geometry_is_immutable_hashable_and_compares_by_value() -> None:
    a = PathGeometry.from_d(SAMPLE)
    b = PathGeometry.from_d(SAMPLE)
    assert a == b and hash(a) == hash(b) and len({a, b}) == 1
    with pytest.raises(dataclasses.FrozenInstanceError):
        a.pieces = ()  # type: ignore[misc]
    assert a.subpath_d(3, 170) == b.subpath_d(3, 170)


@pytest.mark.parametrize(
    ("value", "text"),
    [
        (1.0, "1"),
        (2.5, "2.5"),
        (1.23456, "1.235"),
        (-0.0001, "0"),
        (-0.0, "0"),
        (-12.3, "-12.3"),
        (1e-7, "0"),
        (1234567.0, "1234567"),
    ],
)
def test_format_number(value: float, text: str) -> None:
    assert format_number(value) == text
