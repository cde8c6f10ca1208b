"""Arc length of a cubic Bézier by Gauss-Legendre quadrature on an adaptive table.

The speed |B'(t)| of a cubic is integrated with 10-point Gauss-Legendre quadrature (nodes found by
Newton's method on the Legendre polynomial). ``length_table`` splits [0, 1] at the speed's local
extremes (a cusp among them, where the speed has a kink), then halves each interval until the two
halves agree with the whole to about 1e-9 units. The results are deterministic: same input, same
floats.
"""

from __future__ import annotations

import itertools
import math

from diagram.drawing.template.pathdata import Point

GL_ORDER = 10  # nodes of the Gauss-Legendre rule
_TABLE_TOL = 1e-9  # units: how closely each table interval's length must agree on refinement
_TABLE_MAX_DEPTH = 40


def _legendre_nodes(n: int) -> tuple[tuple[float, ...], tuple[float, ...]]:
    """Return the Gauss-Legendre nodes and weights on [-1, 1] (Newton on P_n)."""
    nodes: list[float] = []
    weights: list[float] = []
    for i in range(1, n + 1):
        x = math.cos(math.pi * (i - 0.25) / (n + 0.5))
        for _ in range(100):
            p0, p1 = 1.0, x
            for k in range(2, n + 1):
                p0, p1 = p1, ((2 * k - 1) * x * p1 - (k - 1) * p0) / k
            dp = n * (x * p1 - p0) / (x * x - 1)
            dx = p1 / dp
            x -= dx
            if abs(dx) < 1e-16:
                break
        p0, p1 = 1.0, x
        for k in range(2, n + 1):
            p0, p1 = p1, ((2 * k - 1) * x * p1 - (k - 1) * p0) / k
        dp = n * (x * p1 - p0) / (x * x - 1)
        nodes.append(x)
        weights.append(2 / ((1 - x * x) * dp * dp))
    return tuple(nodes), tuple(weights)


_GL_X, _GL_W = _legendre_nodes(GL_ORDER)


_GL_PAIRS = tuple(zip(_GL_X, _GL_W, strict=True))


def gauss_legendre(speed: Speed, t0: float, t1: float) -> float:
    """Return the integral of the speed over [t0, t1] by Gauss-Legendre quadrature."""
    half = 0.5 * (t1 - t0)
    mid = 0.5 * (t1 + t0)
    ax, ay, bx, by, cx, cy = speed.ax, speed.ay, speed.bx, speed.by, speed.cx, speed.cy
    hypot = math.hypot
    total = 0.0
    for x, w in _GL_PAIRS:  # inlined |B'(t)|: this loop is the hot path of every query
        t = mid + half * x
        total += w * hypot((ax * t + bx) * t + cx, (ay * t + by) * t + cy)
    return half * total


class Speed:
    """|B'(t)| of a cubic with B'(t) = A·t² + B·t + C."""

    __slots__ = ("ax", "ay", "bx", "by", "cx", "cy")

    def __init__(self, p0: Point, p1: Point, p2: Point, p3: Point) -> None:
        self.cx, self.cy = 3 * (p1[0] - p0[0]), 3 * (p1[1] - p0[1])
        self.bx = 6 * (p2[0] - 2 * p1[0] + p0[0])
        self.by = 6 * (p2[1] - 2 * p1[1] + p0[1])
        self.ax = 3 * (p3[0] - 3 * p2[0] + 3 * p1[0] - p0[0])
        self.ay = 3 * (p3[1] - 3 * p2[1] + 3 * p1[1] - p0[1])

    def __call__(self, t: float) -> float:
        dx = (self.ax * t + self.bx) * t + self.cx
        dy = (self.ay * t + self.by) * t + self.cy
        return math.hypot(dx, dy)


def quadratic_roots(a: float, b: float, c: float) -> list[float]:
    if abs(a) < 1e-12:
        return [] if abs(b) < 1e-12 else [-c / b]
    disc = b * b - 4 * a * c
    if disc < 0:
        return []
    root = math.sqrt(disc)
    return [(-b - root) / (2 * a), (-b + root) / (2 * a)]


def _speed_turns(sp: Speed) -> list[float]:
    """Return the parameters in (0, 1) where the speed has a local extreme.

    They are the roots of d|B'|²/dt = 2·B'·B'', a cubic. A cusp (B' = 0) is among them, and there
    the speed has a kink that quadrature must not straddle.
    """
    a2 = sp.ax * sp.ax + sp.ay * sp.ay
    ab = sp.ax * sp.bx + sp.ay * sp.by
    coef = (
        2 * a2,
        3 * ab,
        sp.bx * sp.bx + sp.by * sp.by + 2 * (sp.ax * sp.cx + sp.ay * sp.cy),
        sp.bx * sp.cx + sp.by * sp.cy,
    )

    def f(t: float) -> float:
        return ((coef[0] * t + coef[1]) * t + coef[2]) * t + coef[3]

    # Between the cubic's own critical points it is monotone: one sign change at most.
    cuts = sorted(
        {0.0, 1.0, *(t for t in quadratic_roots(3 * coef[0], 2 * coef[1], coef[2]) if 0 < t < 1)}
    )
    roots: list[float] = []
    for lo, hi in itertools.pairwise(cuts):
        flo, fhi = f(lo), f(hi)
        if flo == 0 or flo * fhi > 0:
            continue
        for _ in range(60):
            mid = 0.5 * (lo + hi)
            if (f(mid) > 0) == (fhi > 0):
                hi = mid
            else:
                lo = mid
        root = 0.5 * (lo + hi)
        if 1e-9 < root < 1 - 1e-9:
            roots.append(root)
    return roots


def length_table(speed: Speed) -> tuple[tuple[float, ...], tuple[float, ...]]:
    """Return parameters and cumulative lengths where each interval's quadrature has converged."""
    ts = [0.0]
    ss = [0.0]
    marks = [0.0, *_speed_turns(speed), 1.0]
    for a0, b0 in itertools.pairwise(marks):
        # Depth-first, left to right, so the table comes out sorted.
        stack: list[tuple[float, float, float, int]] = [(a0, b0, gauss_legendre(speed, a0, b0), 0)]
        while stack:
            a, b, whole, depth = stack.pop()
            m = 0.5 * (a + b)
            left, right = gauss_legendre(speed, a, m), gauss_legendre(speed, m, b)
            converged = abs(left + right - whole) <= _TABLE_TOL * max(1.0, whole)
            if (converged and depth >= 1) or depth >= _TABLE_MAX_DEPTH:
                ts.extend((m, b))
                ss.extend((ss[-1] + left, ss[-1] + left + right))
            else:
                stack.append((m, b, right, depth + 1))
                stack.append((a, m, left, depth + 1))
    return tuple(ts), tuple(ss)
