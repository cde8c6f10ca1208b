"""Trace parsed SVG path commands onto a cairo context (lines and cubic curves only).

The Scene keeps a path as SVG's commands (``("M", (x, y))``, relative ones in lower case); cairo
draws straight lines and cubic Béziers. Quadratic curves are raised to cubics, the smooth
variants reflect the previous control point, and elliptical arcs are converted to cubic
segments of at most 90° with the endpoint-to-centre method of SVG 1.1, appendix F.6.
"""

from __future__ import annotations

import math
from typing import Protocol

from diagram.drawing.scene import PathCommand

Point = tuple[float, float]


class PathSink(Protocol):
    """What a path is traced onto (a cairo context has these methods)."""

    def move_to(self, x: float, y: float) -> None: ...
    def line_to(self, x: float, y: float) -> None: ...
    def curve_to(
        self, x1: float, y1: float, x2: float, y2: float, x3: float, y3: float
    ) -> None: ...
    def close_path(self) -> None: ...
    def new_path(self) -> None: ...


def _reflect(about: Point, p: Point | None) -> Point:
    return about if p is None else (2 * about[0] - p[0], 2 * about[1] - p[1])


class _Tracer:
    def __init__(self, sink: PathSink) -> None:
        self.sink = sink
        self.cur: Point = (0.0, 0.0)
        self.start: Point = (0.0, 0.0)
        self.cubic: Point | None = None  # last cubic control point, for S
        self.quad: Point | None = None  # last quadratic control point, for T

    def cubic_to(self, c1: Point, c2: Point, end: Point) -> None:
        self.sink.curve_to(*c1, *c2, *end)
        self.cubic, self.quad, self.cur = c2, None, end

    def quad_to(self, q: Point, end: Point) -> None:
        x0, y0 = self.cur
        c1 = (x0 + 2 / 3 * (q[0] - x0), y0 + 2 / 3 * (q[1] - y0))
        c2 = (end[0] + 2 / 3 * (q[0] - end[0]), end[1] + 2 / 3 * (q[1] - end[1]))
        self.sink.curve_to(*c1, *c2, *end)
        self.cubic, self.quad, self.cur = None, q, end

    def line_to(self, end: Point) -> None:
        self.sink.line_to(*end)
        self.cubic = self.quad = None
        self.cur = end

    def step(self, cmd: str, args: tuple[float, ...]) -> None:
        up = cmd.upper()
        ox, oy = self.cur if cmd.islower() else (0.0, 0.0)
        pts = [(args[k] + ox, args[k + 1] + oy) for k in range(0, len(args) - 1, 2)]
        if up == "M":
            self.sink.move_to(*pts[0])
            self.cur = self.start = pts[0]
            self.cubic = self.quad = None
        elif up == "L":
            self.line_to(pts[0])
        elif up == "H":
            self.line_to((args[0] + ox, self.cur[1]))
        elif up == "V":
            self.line_to((self.cur[0], args[0] + (self.cur[1] if cmd.islower() else 0.0)))
        elif up == "C":
            self.cubic_to(pts[0], pts[1], pts[2])
        elif up == "S":
            self.cubic_to(_reflect(self.cur, self.cubic), pts[0], pts[1])
        elif up == "Q":
            self.quad_to(pts[0], pts[1])
        elif up == "T":
            self.quad_to(_reflect(self.cur, self.quad), pts[0])
        elif up == "A":
            self.arc(args, (args[5] + ox, args[6] + oy))
        elif up == "Z":
            self.sink.close_path()
            self.cur, self.cubic, self.quad = self.start, None, None

    def arc(self, args: tuple[float, ...], end: Point) -> None:
        rx, ry, rot, large, sweep = abs(args[0]), abs(args[1]), args[2], args[3], args[4]
        if rx == 0 or ry == 0 or end == self.cur:
            if end != self.cur:
                self.line_to(end)
            return
        for c1, c2, p in arc_to_cubics(self.cur, end, rx, ry, rot, bool(large), bool(sweep)):
            self.cubic_to(c1, c2, p)


def arc_to_cubics(
    start: Point, end: Point, rx: float, ry: float, rot_deg: float, large: bool, sweep: bool
) -> list[tuple[Point, Point, Point]]:
    """Return an SVG elliptical arc as cubic Bézier segments (SVG 1.1, appendix F.6.5)."""
    phi = math.radians(rot_deg)
    cos_p, sin_p = math.cos(phi), math.sin(phi)
    dx, dy = (start[0] - end[0]) / 2, (start[1] - end[1]) / 2
    x1p, y1p = cos_p * dx + sin_p * dy, -sin_p * dx + cos_p * dy
    lam = (x1p / rx) ** 2 + (y1p / ry) ** 2
    if lam > 1:  # radii too small: scaled up just enough (F.6.6)
        rx, ry = rx * math.sqrt(lam), ry * math.sqrt(lam)
    num = rx * rx * ry * ry - rx * rx * y1p * y1p - ry * ry * x1p * x1p
    den = rx * rx * y1p * y1p + ry * ry * x1p * x1p
    coef = math.sqrt(max(0.0, num / den)) * (-1 if large == sweep else 1)
    cxp, cyp = coef * rx * y1p / ry, -coef * ry * x1p / rx
    cx = cos_p * cxp - sin_p * cyp + (start[0] + end[0]) / 2
    cy = sin_p * cxp + cos_p * cyp + (start[1] + end[1]) / 2
    theta = math.atan2((y1p - cyp) / ry, (x1p - cxp) / rx)
    delta = math.atan2((-y1p - cyp) / ry, (-x1p - cxp) / rx) - theta
    if sweep and delta < 0:
        delta += 2 * math.pi
    elif not sweep and delta > 0:
        delta -= 2 * math.pi
    n = max(1, math.ceil(abs(delta) / (math.pi / 2) - 1e-9))
    step = delta / n
    k = 4 / 3 * math.tan(step / 4)

    def at(t: float) -> Point:
        x, y = rx * math.cos(t), ry * math.sin(t)
        return (cx + cos_p * x - sin_p * y, cy + sin_p * x + cos_p * y)

    def tangent(t: float) -> Point:
        x, y = -rx * math.sin(t), ry * math.cos(t)
        return (cos_p * x - sin_p * y, sin_p * x + cos_p * y)

    out = []
    for i in range(n):
        t0, t1 = theta + i * step, theta + (i + 1) * step
        p0, p1 = at(t0), at(t1)
        d0, d1 = tangent(t0), tangent(t1)
        c1 = (p0[0] + k * d0[0], p0[1] + k * d0[1])
        c2 = (p1[0] - k * d1[0], p1[1] - k * d1[1])
        out.append((c1, c2, end if i == n - 1 else p1))
    return out


def trace_path(sink: PathSink, commands: tuple[PathCommand, ...]) -> None:
    """Make ``commands`` the sink's current path (any previous path is dropped)."""
    sink.new_path()
    tracer = _Tracer(sink)
    for cmd, args in commands:
        tracer.step(cmd, args)
