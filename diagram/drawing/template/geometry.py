"""Arc-length geometry of SVG path data (stdlib only).

Coordinates are SVG user units with y pointing down. Path data is read by
:mod:`diagram.drawing.template.pathdata` (re-exported here: ``parse_transform``,
``transform_path_d``, ``Affine``, ``IDENTITY``,
``format_number``) and represented exactly: lines stay lines, quadratic Béziers are raised to
cubics (an exact identity), and elliptical arcs become cubics of at most 45° each; arc-length
queries are then exact on the approximating cubics.

Arc length is integrated by :mod:`diagram.drawing.template.quadrature` (Gauss-Legendre on an
adaptive table per cubic, converged to about 1e-9 units); a length is turned back into a curve
parameter by Newton's method guarded by bisection. The results are deterministic: same input,
same floats.
"""

from __future__ import annotations

import bisect
import functools
import itertools
import math
from dataclasses import dataclass, field

# Path data reading lives in diagram.drawing.template.pathdata; these names stay importable from
# here.
from diagram.drawing.template.pathdata import IDENTITY as IDENTITY
from diagram.drawing.template.pathdata import Affine as Affine
from diagram.drawing.template.pathdata import Bezier, format_point, read_path
from diagram.drawing.template.pathdata import Point as Point
from diagram.drawing.template.pathdata import format_number as format_number
from diagram.drawing.template.pathdata import parse_transform as parse_transform
from diagram.drawing.template.pathdata import transform_path_d as transform_path_d
from diagram.drawing.template.quadrature import Speed, gauss_legendre, length_table, quadratic_roots

_CORNER_COS = math.cos(math.radians(1.0))  # joins turning more than 1° get a bevel in outline()


@dataclass(frozen=True)
class Line:
    """A straight piece from ``p0`` to ``p1``."""

    p0: Point
    p1: Point

    @property
    def start(self) -> Point:
        return self.p0

    @property
    def end(self) -> Point:
        return self.p1

    def length(self) -> float:
        return math.hypot(self.p1[0] - self.p0[0], self.p1[1] - self.p0[1])

    def point(self, t: float) -> Point:
        return (
            self.p0[0] + (self.p1[0] - self.p0[0]) * t,
            self.p0[1] + (self.p1[1] - self.p0[1]) * t,
        )

    def direction(self, t: float) -> Point:
        return _unit((self.p1[0] - self.p0[0], self.p1[1] - self.p0[1]))

    def param_at(self, s: float) -> float:
        total = self.length()
        return 0.0 if total == 0 else min(1.0, max(0.0, s / total))

    def split(self, t0: float, t1: float) -> Line:
        return Line(self.point(t0), self.point(t1))

    def reversed(self) -> Line:
        return Line(self.p1, self.p0)

    def transformed(self, m: Affine) -> Line:
        return Line(m.apply(self.p0), m.apply(self.p1))

    def extrema_params(self) -> tuple[float, ...]:
        return ()

    def d(self) -> str:
        return f"L {format_point(self.p1)}"


@dataclass(frozen=True)
class Cubic:
    """A cubic Bézier piece; its arc-length table is built on first use (not part of equality)."""

    p0: Point
    p1: Point
    p2: Point
    p3: Point

    # Derived data, computed on first use (outline path data never needs lengths).
    @functools.cached_property
    def _speed(self) -> Speed:
        return Speed(self.p0, self.p1, self.p2, self.p3)

    @functools.cached_property
    def _table(self) -> tuple[tuple[float, ...], tuple[float, ...]]:
        return length_table(self._speed)

    @property
    def start(self) -> Point:
        return self.p0

    @property
    def end(self) -> Point:
        return self.p3

    def length(self) -> float:
        return self._table[1][-1]

    def point(self, t: float) -> Point:
        u = 1 - t
        b0, b1, b2, b3 = u * u * u, 3 * u * u * t, 3 * u * t * t, t * t * t
        return (
            b0 * self.p0[0] + b1 * self.p1[0] + b2 * self.p2[0] + b3 * self.p3[0],
            b0 * self.p0[1] + b1 * self.p1[1] + b2 * self.p2[1] + b3 * self.p3[1],
        )

    def direction(self, t: float) -> Point:
        """Return the unit tangent at ``t``; at a stationary point, the forward limit."""
        sp = self._speed
        first = ((sp.ax * t + sp.bx) * t + sp.cx, (sp.ay * t + sp.by) * t + sp.cy)
        if math.hypot(*first) > 1e-9 * (1 + self._scale()):
            return _unit(first)
        # B'(t0) = 0: near t0, B'(t) ≈ B''(t0)·(t - t0), so the direction of travel is +B''(t0)
        # just after t0 and -B''(t0) just before it (the only side there is at t = 1).
        second = (2 * sp.ax * t + sp.bx, 2 * sp.ay * t + sp.by)
        if math.hypot(*second) > 1e-12:
            ux, uy = _unit(second)
            return (ux, uy) if t < 1.0 else (-ux, -uy)
        return _unit((self.p3[0] - self.p0[0], self.p3[1] - self.p0[1]))

    def _scale(self) -> float:
        return max(abs(v) for p in (self.p0, self.p1, self.p2, self.p3) for v in p)

    def param_at(self, s: float) -> float:
        """Return t with arc length ``s`` from the start (Newton guarded by bisection)."""
        ts, ss = self._table
        if s <= 0:
            return 0.0
        if s >= ss[-1]:
            return 1.0
        i = max(0, bisect.bisect_right(ss, s) - 1)
        i = min(i, len(ss) - 2)
        lo, hi = ts[i], ts[i + 1]
        base_t, base_s = ts[i], ss[i]
        span = ss[i + 1] - ss[i]
        t = lo + (hi - lo) * ((s - base_s) / span if span > 0 else 0.5)
        for _ in range(60):
            err = base_s + gauss_legendre(self._speed, base_t, t) - s
            if abs(err) < 1e-9:
                return t
            if err > 0:
                hi = t
            else:
                lo = t
            speed = self._speed(t)
            nxt = t - err / speed if speed > 0 else 0.5 * (lo + hi)
            if not lo < nxt < hi:
                nxt = 0.5 * (lo + hi)
            if hi - lo < 1e-15:
                return nxt
            t = nxt
        return t

    def split(self, t0: float, t1: float) -> Cubic:
        """Return the piece between ``t0`` and ``t1`` (de Casteljau), lying on this curve."""
        pts = (self.p0, self.p1, self.p2, self.p3)
        if t1 < 1.0:
            pts = _casteljau_left(pts, t1)
            t0 = t0 / t1 if t1 > 0 else 0.0
        if t0 > 0.0:
            pts = _casteljau_right(pts, t0)
        return Cubic(*pts)

    def reversed(self) -> Cubic:
        return Cubic(self.p3, self.p2, self.p1, self.p0)

    def transformed(self, m: Affine) -> Cubic:
        return Cubic(m.apply(self.p0), m.apply(self.p1), m.apply(self.p2), m.apply(self.p3))

    def extrema_params(self) -> tuple[float, ...]:
        """Return the parameters in (0, 1) where x or y is stationary."""
        sp = self._speed
        out: list[float] = []
        for a, b, c in ((sp.ax, sp.bx, sp.cx), (sp.ay, sp.by, sp.cy)):
            out.extend(t for t in quadratic_roots(a, b, c) if 0 < t < 1)
        return tuple(sorted(out))

    def d(self) -> str:
        return f"C {format_point(self.p1)} {format_point(self.p2)} {format_point(self.p3)}"


Piece = Line | Cubic


def _unit(v: Point) -> Point:
    n = math.hypot(v[0], v[1])
    if n == 0:
        raise ValueError("a zero-length piece has no direction")
    return (v[0] / n, v[1] / n)


def _lerp(p: Point, q: Point, t: float) -> Point:
    return (p[0] + (q[0] - p[0]) * t, p[1] + (q[1] - p[1]) * t)


Quad = tuple[Point, Point, Point, Point]


def _casteljau_left(pts: Quad, t: float) -> Quad:
    p0, p1, p2, p3 = pts
    a, b, c = _lerp(p0, p1, t), _lerp(p1, p2, t), _lerp(p2, p3, t)
    ab, bc = _lerp(a, b, t), _lerp(b, c, t)
    return (p0, a, ab, _lerp(ab, bc, t))


def _casteljau_right(pts: Quad, t: float) -> Quad:
    p0, p1, p2, p3 = pts
    a, b, c = _lerp(p0, p1, t), _lerp(p1, p2, t), _lerp(p2, p3, t)
    ab, bc = _lerp(a, b, t), _lerp(b, c, t)
    return (_lerp(ab, bc, t), bc, c, p3)


# --------------------------------------------------------------------------- path data


@dataclass(frozen=True)
class Subpath:
    """One subpath of path data: a start point, its pieces, and whether ``Z`` closed it."""

    start: Point
    pieces: tuple[Piece, ...]
    closed: bool

    def transformed(self, m: Affine) -> Subpath:
        return Subpath(
            m.apply(self.start), tuple(p.transformed(m) for p in self.pieces), self.closed
        )

    def d(self) -> str:
        parts = [f"M {format_point(self.start)}", *(p.d() for p in self.pieces)]
        if self.closed:
            parts.append("Z")
        return " ".join(parts)


def parse_path(d: str) -> tuple[Subpath, ...]:
    """Parse SVG path data into absolute subpaths; ValueError naming the offset on bad data."""
    return tuple(
        Subpath(sp.start, tuple(_piece(b) for b in sp.beziers), sp.closed) for sp in read_path(d)
    )


def _piece(bezier: Bezier) -> Piece:
    return Line(*bezier) if len(bezier) == 2 else Cubic(*bezier)


# --------------------------------------------------------------------------- arc-length geometry


@dataclass(frozen=True)
class PathGeometry:
    """One continuous path with exact arc-length queries (immutable, hashable)."""

    pieces: tuple[Piece, ...]
    _cum: tuple[float, ...] = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        if not self.pieces:
            raise ValueError("path has no drawn length")
        cum = [0.0]
        for i, piece in enumerate(self.pieces):
            if i and math.dist(piece.start, self.pieces[i - 1].end) > 1e-9:
                raise ValueError(
                    f"path breaks between pieces {i - 1} and {i}: a centre line must be one "
                    "continuous stroke"
                )
            length = piece.length()
            if not length > 0:
                raise ValueError(f"piece {i} has zero length")
            cum.append(cum[-1] + length)
        object.__setattr__(self, "_cum", tuple(cum))

    @classmethod
    def from_d(cls, d: str, transform: Affine = IDENTITY) -> PathGeometry:
        """Build from path data, with ``transform`` applied; joined subpaths must touch."""
        drawn = [sp for sp in parse_path(d) if sp.pieces]
        if not drawn:
            raise ValueError("path data draws nothing")
        pieces: list[Piece] = []
        for i, sp in enumerate(drawn):
            if i and math.dist(sp.start, drawn[i - 1].pieces[-1].end) > 1e-9:
                raise ValueError(
                    f"path data has {len(drawn)} separate subpaths; a centre line must be one "
                    "continuous stroke"
                )
            pieces.extend(p for p in sp.pieces if p.length() > 0)
        if not pieces:
            raise ValueError("path data has zero length")
        geom = cls(tuple(pieces))
        return geom if transform == IDENTITY else geom.transformed(transform)

    def transformed(self, m: Affine) -> PathGeometry:
        """Return this path with ``m`` applied (exact: Bézier control points map affinely)."""
        return PathGeometry(tuple(p.transformed(m) for p in self.pieces))

    @property
    def start(self) -> Point:
        return self.pieces[0].start

    @property
    def end(self) -> Point:
        return self.pieces[-1].end

    def length(self) -> float:
        return self._cum[-1]

    def _locate(self, s: float) -> tuple[int, float]:
        """Return (piece index, parameter) of arc length ``s`` (clamped)."""
        if not math.isfinite(s):
            raise ValueError(f"arc length {s!r} is not a finite number")
        cum = self._cum
        s = min(max(s, 0.0), cum[-1])
        i = min(bisect.bisect_right(cum, s) - 1, len(self.pieces) - 1)
        return i, self.pieces[i].param_at(s - cum[i])

    def point_at(self, s: float) -> Point:
        """Return the point at arc length ``s`` (clamped to [0, length])."""
        i, t = self._locate(s)
        return self.pieces[i].point(t)

    def tangent_at(self, s: float) -> Point:
        """Return the unit tangent at arc length ``s``; at a join, the tangent leaving it."""
        i, t = self._locate(s)
        return self.pieces[i].direction(t)

    def normal_at(self, s: float) -> Point:
        """Return the unit normal to the left of the direction of travel (y down)."""
        tx, ty = self.tangent_at(s)
        return (ty, -tx)

    def bounds(self) -> tuple[float, float, float, float]:
        """Return the exact bounding box (min-x, min-y, max-x, max-y) of the drawn path."""
        pts: list[Point] = []
        for p in self.pieces:
            pts.extend((p.start, p.end))
            pts.extend(p.point(t) for t in p.extrema_params())
        xs = [p[0] for p in pts]
        ys = [p[1] for p in pts]
        return (min(xs), min(ys), max(xs), max(ys))

    def _stations(self, s0: float, s1: float, step: float) -> list[tuple[float, bool]]:
        """Return arc lengths from s0 to s1 (s0 <= s1), at most ``step`` apart, with joins.

        Each station carries True when it falls on a join between two pieces.
        """
        if not (math.isfinite(step) and step > 0):
            raise ValueError(f"step {step!r} must be a positive number")
        joins = [c for c in self._cum[1:-1] if s0 < c < s1]
        marks = [s0, *joins, s1]
        out: list[tuple[float, bool]] = [(s0, False)]
        for a, b in itertools.pairwise(marks):
            n = max(1, math.ceil((b - a) / step - 1e-9))
            out.extend((a + (b - a) * k / n, False) for k in range(1, n))
            out.append((b, b in joins))
        return out

    def _clamp(self, s: float) -> float:
        if not math.isfinite(s):
            raise ValueError(f"arc length {s!r} is not a finite number")
        return min(max(s, 0.0), self._cum[-1])

    def polyline(self, s0: float, s1: float, step: float) -> tuple[Point, ...]:
        """Return points along the path from ``s0`` to ``s1`` at most ``step`` apart, ends included.

        Joins between pieces are always included; ``s0 > s1`` walks the path backwards.
        """
        a, b = self._clamp(s0), self._clamp(s1)
        pts = tuple(self.point_at(s) for s, _ in self._stations(min(a, b), max(a, b), step))
        return pts if a <= b else pts[::-1]

    def subpath_d(self, s0: float, s1: float) -> str:
        """Return absolute path data for the stretch from ``s0`` to ``s1`` (3 decimals).

        The stretch is cut with de Casteljau, so it lies on the original curve; ``s0 > s1`` gives
        the stretch drawn backwards.
        """
        return self._subpath_d(s0, s1)

    def _subpath_d(self, s0: float, s1: float) -> str:
        pieces = self.subpath_pieces(s0, s1)
        if not pieces:
            return f"M {format_point(self.point_at(s0))}"
        return " ".join([f"M {format_point(pieces[0].start)}", *(p.d() for p in pieces)])

    def subpath_pieces(self, s0: float, s1: float) -> tuple[Piece, ...]:
        """Return the pieces of the stretch from ``s0`` to ``s1`` (empty when they coincide)."""
        a, b = self._clamp(s0), self._clamp(s1)
        lo, hi = min(a, b), max(a, b)
        if hi - lo <= 0:
            return ()
        i0, t0 = self._locate(lo)
        i1, t1 = self._locate(hi)
        if t1 == 0.0 and i1 > i0:  # the stretch ends exactly on a join
            i1, t1 = i1 - 1, 1.0
        out: list[Piece] = []
        for i in range(i0, i1 + 1):
            ta = t0 if i == i0 else 0.0
            tb = t1 if i == i1 else 1.0
            piece = self.pieces[i]
            if ta == 0.0 and tb == 1.0:
                out.append(piece)
            elif tb > ta:
                out.append(piece.split(ta, tb))
        if a > b:
            out = [p.reversed() for p in reversed(out)]
        return tuple(out)

    def to_d(self) -> str:
        """Return the whole path as absolute path data."""
        return self._subpath_d(0.0, self.length())

    def outline(
        self,
        s0: float,
        s1: float,
        half_width: float,
        step: float,
        end_half_width: float | None = None,
    ) -> tuple[Point, ...]:
        """Return a closed polygon around the centre line from ``s0`` to ``s1``.

        The left side (relative to travel from s0 to s1) runs forward, then the right side back.
        The half width tapers linearly to ``end_half_width`` when given. Joins that turn more than
        1° get a bevel. Curves tighter than the half width fold over on their inner side: keep
        ``half_width`` below the smallest radius of curvature.
        """
        if not (math.isfinite(half_width) and half_width >= 0):
            raise ValueError(f"half width {half_width!r} must be a number >= 0")
        w1 = half_width if end_half_width is None else end_half_width
        if not (math.isfinite(w1) and w1 >= 0):
            raise ValueError(f"end half width {end_half_width!r} must be a number >= 0")
        a, b = self._clamp(s0), self._clamp(s1)
        if a > b:
            left, right = self._sides(b, a, w1, half_width, step)
            return (*right[::-1], *left)
        left, right = self._sides(a, b, half_width, w1, step)
        return (*left, *right[::-1])

    def _sides(
        self, a: float, b: float, w0: float, w1: float, step: float
    ) -> tuple[list[Point], list[Point]]:
        left: list[Point] = []
        right: list[Point] = []
        span = b - a
        for s, is_join in self._stations(a, b, step):
            w = w0 if span == 0 else w0 + (w1 - w0) * (s - a) / span
            i, t = self._locate(s)
            piece = self.pieces[i]
            p = piece.point(t)
            tangents = [piece.direction(t)]
            if is_join:
                i = bisect.bisect_left(self._cum, s)
                incoming = self.pieces[i - 1].direction(1.0)
                if incoming[0] * tangents[0][0] + incoming[1] * tangents[0][1] < _CORNER_COS:
                    tangents.insert(0, incoming)
            for tx, ty in tangents:
                left.append((p[0] + w * ty, p[1] - w * tx))
                right.append((p[0] - w * ty, p[1] + w * tx))
        return left, right
