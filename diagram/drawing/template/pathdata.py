"""SVG path data and ``transform`` attributes read into absolute control points (stdlib only).

Path data commands ``M L H V C S Q T A Z`` (absolute and relative) become, per subpath, a start
point and a run of Béziers given by their control points: two for a straight line, four for a
cubic. Quadratic Béziers are raised to cubics (an exact identity). Elliptical arcs are approximated
by cubics spanning at most 45° each; the radial error of that approximation is below 5e-6 of the
radius (0.005 units for a radius of 1000). ``transform`` attribute lists become one :class:`Affine`
map. Bad data raises ``ValueError`` naming the offset where reading stopped.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from types import MappingProxyType

Point = tuple[float, float]
# The control points of one drawn piece: (start, end) for a line, four points for a cubic Bézier.
Bezier = tuple[Point, Point] | tuple[Point, Point, Point, Point]

_ARC_MAX_SWEEP = math.pi / 4


def format_number(value: float) -> str:
    """Format a coordinate for path data: at most 3 decimals, no trailing zeros, no ``-0``."""
    text = f"{value:.3f}".rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def format_point(p: Point) -> str:
    """Format a point for path data: ``x y`` with :func:`format_number`."""
    return f"{format_number(p[0])} {format_number(p[1])}"


# --------------------------------------------------------------------------- affine transforms


@dataclass(frozen=True)
class Affine:
    """A 2-D affine map as SVG's ``matrix(a b c d e f)``: x' = a·x + c·y + e, y' = b·x + d·y + f."""

    a: float = 1.0
    b: float = 0.0
    c: float = 0.0
    d: float = 1.0
    e: float = 0.0
    f: float = 0.0

    def apply(self, p: Point) -> Point:
        """Return the image of point ``p``."""
        x, y = p
        return (self.a * x + self.c * y + self.e, self.b * x + self.d * y + self.f)

    def __matmul__(self, other: Affine) -> Affine:
        """Return ``self ∘ other``: apply ``other`` first, then ``self``."""
        return Affine(
            self.a * other.a + self.c * other.b,
            self.b * other.a + self.d * other.b,
            self.a * other.c + self.c * other.d,
            self.b * other.c + self.d * other.d,
            self.a * other.e + self.c * other.f + self.e,
            self.b * other.e + self.d * other.f + self.f,
        )

    @property
    def determinant(self) -> float:
        return self.a * self.d - self.b * self.c

    def inverse(self) -> Affine:
        """Return the inverse map; ValueError when the map is singular."""
        det = self.determinant
        if det == 0 or not math.isfinite(det):
            raise ValueError(f"transform {self} is singular and cannot be inverted")
        a, b, c, d = self.d / det, -self.b / det, -self.c / det, self.a / det
        return Affine(a, b, c, d, -(a * self.e + c * self.f), -(b * self.e + d * self.f))

    @staticmethod
    def translate(tx: float, ty: float = 0.0) -> Affine:
        return Affine(e=tx, f=ty)

    @staticmethod
    def scale(sx: float, sy: float | None = None) -> Affine:
        return Affine(a=sx, d=sx if sy is None else sy)

    @staticmethod
    def rotate(degrees: float, cx: float = 0.0, cy: float = 0.0) -> Affine:
        rad = math.radians(degrees)
        cos, sin = math.cos(rad), math.sin(rad)
        turn = Affine(cos, sin, -sin, cos)
        return Affine.translate(cx, cy) @ turn @ Affine.translate(-cx, -cy)


IDENTITY = Affine()

_TRANSFORM_FN = re.compile(r"\s*([A-Za-z]+)\s*\(([^()]*)\)\s*,?")
_ARITY = MappingProxyType(
    {
        "matrix": (6,),
        "translate": (1, 2),
        "scale": (1, 2),
        "rotate": (1, 3),
        "skewX": (1,),
        "skewY": (1,),
    }
)


def parse_transform(text: str) -> Affine:
    """Parse an SVG ``transform`` attribute (a list of functions, applied right to left)."""
    result = IDENTITY
    pos = 0
    text = text.strip()
    while pos < len(text):
        m = _TRANSFORM_FN.match(text, pos)
        if m is None:
            raise ValueError(f"transform: cannot read {text[pos : pos + 20]!r} at offset {pos}")
        name, raw_args = m.group(1), m.group(2)
        if name not in _ARITY:
            raise ValueError(
                f"transform: unknown function {name!r}; expected one of {', '.join(_ARITY)}"
            )
        args = _numbers(raw_args, f"transform {name}()")
        if len(args) not in _ARITY[name]:
            want = " or ".join(str(n) for n in _ARITY[name])
            raise ValueError(f"transform: {name}() takes {want} numbers, got {len(args)}")
        result = result @ _transform_fn(name, args)
        pos = m.end()
    return result


def _transform_fn(name: str, args: list[float]) -> Affine:
    if name == "matrix":
        return Affine(*args)
    if name == "translate":
        return Affine.translate(*args)
    if name == "scale":
        return Affine.scale(*args)
    if name == "rotate":
        return Affine.rotate(*args)
    tangent = math.tan(math.radians(args[0]))
    if abs(tangent) > 1e6:
        raise ValueError(f"transform: {name}({args[0]}) is degenerate")
    return Affine(c=tangent) if name == "skewX" else Affine(b=tangent)


_NUMBER = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")


def _numbers(text: str, what: str) -> list[float]:
    """Return the numbers of a comma/space separated list; ValueError on anything else."""
    out: list[float] = []
    pos = 0
    while True:
        while pos < len(text) and text[pos] in " \t\r\n\f,":
            pos += 1
        if pos >= len(text):
            return out
        m = _NUMBER.match(text, pos)
        if m is None:
            raise ValueError(f"{what}: expected a number, found {text[pos : pos + 12]!r}")
        value = float(m.group())
        if not math.isfinite(value):
            raise ValueError(f"{what}: number {m.group()!r} is out of range")
        out.append(value)
        pos = m.end()


# --------------------------------------------------------------------------- path data


@dataclass(frozen=True)
class SubpathData:
    """One subpath of path data: a start point, its Béziers, and whether ``Z`` closed it."""

    start: Point
    beziers: tuple[Bezier, ...]
    closed: bool


_COMMANDS = "MmLlHhVvCcSsQqTtAaZz"
_SEPARATORS = " \t\r\n\f,"


class _Scanner:
    """Reads numbers, flags and command letters from path data, reporting offsets on error."""

    def __init__(self, text: str) -> None:
        self.text = text
        self.pos = 0

    def skip(self) -> None:
        while self.pos < len(self.text) and self.text[self.pos] in _SEPARATORS:
            self.pos += 1

    def at_end(self) -> bool:
        self.skip()
        return self.pos >= len(self.text)

    def at_number(self) -> bool:
        self.skip()
        return self.pos < len(self.text) and self.text[self.pos] in "+-.0123456789"

    def _where(self) -> str:
        found = self.text[self.pos : self.pos + 12] or "the end"
        return f"at offset {self.pos} (found {found!r})"

    def number(self, cmd: str) -> float:
        self.skip()
        m = _NUMBER.match(self.text, self.pos)
        if m is None:
            raise ValueError(f"path data: {cmd} expects a number {self._where()}")
        value = float(m.group())
        if not math.isfinite(value):
            raise ValueError(f"path data: number {m.group()!r} is out of range {self._where()}")
        self.pos = m.end()
        return value

    def flag(self, cmd: str) -> bool:
        self.skip()
        if self.pos < len(self.text) and self.text[self.pos] in "01":
            self.pos += 1
            return self.text[self.pos - 1] == "1"
        raise ValueError(f"path data: {cmd} expects a flag 0 or 1 {self._where()}")

    def point(self, cmd: str, origin: Point) -> Point:
        x = self.number(cmd)
        y = self.number(cmd)
        return (origin[0] + x, origin[1] + y)


class _PathReader:
    """The state of reading one path: the pen, the open subpath, the last control point."""

    def __init__(self, d: str) -> None:
        self.sc = _Scanner(d)
        self.subpaths: list[SubpathData] = []
        self.start: Point = (0.0, 0.0)
        self.cur: Point = (0.0, 0.0)
        self.pieces: list[Bezier] = []
        self.closed = False
        self.open_subpath = False
        self.last_ctrl: Point | None = None  # reflected by S (cubic) or T (quadratic)
        self.last_kind = ""

    def flush(self) -> None:
        if self.open_subpath:
            self.subpaths.append(SubpathData(self.start, tuple(self.pieces), self.closed))
        self.pieces, self.closed, self.open_subpath = [], False, False

    def close(self) -> None:
        if self.pieces and self.cur != self.start:
            self.pieces.append((self.cur, self.start))
        self.closed = True
        self.cur = self.start
        self.flush()
        self.last_ctrl, self.last_kind = None, ""

    def line_to(self, nxt: Point) -> None:
        self.pieces.append((self.cur, nxt))
        self.cur = nxt

    def reflected(self, kind: str) -> Point:
        """Return the last control point reflected through the pen (the pen if none of ``kind``)."""
        if self.last_kind == kind and self.last_ctrl is not None:
            return (2 * self.cur[0] - self.last_ctrl[0], 2 * self.cur[1] - self.last_ctrl[1])
        return self.cur

    def segment(self, cmd: str, first: bool) -> str:
        """Read one set of arguments of ``cmd``; return the kind it draws (for S and T)."""
        sc, upper = self.sc, cmd.upper()
        origin = self.cur if cmd.islower() else (0.0, 0.0)
        if upper == "M" and first:
            self.flush()
            self.cur = self.start = sc.point(cmd, origin)
            self.open_subpath = True
            return "M"
        if upper in "ML":
            self.line_to(sc.point(cmd, origin))
            return "L"
        if upper == "H":
            self.line_to((sc.number(cmd) + (self.cur[0] if cmd.islower() else 0.0), self.cur[1]))
            return "H"
        if upper == "V":
            self.line_to((self.cur[0], sc.number(cmd) + (self.cur[1] if cmd.islower() else 0.0)))
            return "V"
        if upper in "CS":
            c1 = sc.point(cmd, origin) if upper == "C" else self.reflected("C")
            c2 = sc.point(cmd, origin)
            end = sc.point(cmd, origin)
            self.pieces.append((self.cur, c1, c2, end))
            self.cur, self.last_ctrl = end, c2
            return "C"
        if upper in "QT":
            q = sc.point(cmd, origin) if upper == "Q" else self.reflected("Q")
            end = sc.point(cmd, origin)
            self.pieces.append(_quad_to_cubic(self.cur, q, end))
            self.cur, self.last_ctrl = end, q
            return "Q"
        rx, ry, rotation = sc.number(cmd), sc.number(cmd), sc.number(cmd)
        large, sweep = sc.flag(cmd), sc.flag(cmd)
        end = sc.point(cmd, origin)
        self.pieces.extend(_arc_to_cubics(self.cur, rx, ry, rotation, large, sweep, end))
        self.cur = end
        return "A"


def read_path(d: str) -> tuple[SubpathData, ...]:
    """Read SVG path data into absolute subpaths; ValueError naming the offset on bad data."""
    r = _PathReader(d)
    sc = r.sc
    if sc.at_end():
        raise ValueError("path data is empty")
    while not sc.at_end():
        cmd = sc.text[sc.pos]
        if cmd not in _COMMANDS:
            raise ValueError(f"path data: expected a command letter {sc._where()}")
        sc.pos += 1
        if not r.subpaths and not r.open_subpath and cmd not in "Mm":
            raise ValueError(f"path data must start with M or m, not {cmd!r}")
        if cmd.upper() == "Z":
            r.close()
            continue
        if r.closed is False and not r.open_subpath and cmd.upper() != "M":
            # Drawing after Z without M starts a new subpath at the closed subpath's start.
            r.open_subpath = True
        first = True
        while first or sc.at_number():
            kind = r.segment(cmd, first)
            if kind not in "CQ":
                r.last_ctrl = None
            r.last_kind = kind
            first = False
    r.flush()
    return tuple(r.subpaths)


def _quad_to_cubic(p0: Point, q: Point, p3: Point) -> Bezier:
    """Raise a quadratic Bézier to the identical cubic."""
    c1 = (p0[0] + 2 / 3 * (q[0] - p0[0]), p0[1] + 2 / 3 * (q[1] - p0[1]))
    c2 = (p3[0] + 2 / 3 * (q[0] - p3[0]), p3[1] + 2 / 3 * (q[1] - p3[1]))
    return (p0, c1, c2, p3)


def _arc_to_cubics(
    p0: Point, rx: float, ry: float, rotation_deg: float, large: bool, sweep: bool, p1: Point
) -> list[Bezier]:
    """Approximate an SVG elliptical arc by cubics of at most 45° (SVG 1.1 F.6.5-F.6.6)."""
    if p0 == p1:
        return []
    rx, ry = abs(rx), abs(ry)
    if rx == 0 or ry == 0:
        return [(p0, p1)]
    phi = math.radians(rotation_deg)
    cos, sin = math.cos(phi), math.sin(phi)
    dx2, dy2 = (p0[0] - p1[0]) / 2, (p0[1] - p1[1]) / 2
    x1p, y1p = cos * dx2 + sin * dy2, -sin * dx2 + cos * dy2
    lam = (x1p / rx) ** 2 + (y1p / ry) ** 2
    if lam > 1:
        rx, ry = rx * math.sqrt(lam), ry * math.sqrt(lam)
    num = rx * rx * ry * ry - rx * rx * y1p * y1p - ry * ry * x1p * x1p
    den = rx * rx * y1p * y1p + ry * ry * x1p * x1p
    coef = math.sqrt(max(0.0, num / den)) * (-1 if large == sweep else 1)
    cxp, cyp = coef * rx * y1p / ry, -coef * ry * x1p / rx
    cx = cos * cxp - sin * cyp + (p0[0] + p1[0]) / 2
    cy = sin * cxp + cos * cyp + (p0[1] + p1[1]) / 2

    def angle(ux: float, uy: float, vx: float, vy: float) -> float:
        return math.atan2(ux * vy - uy * vx, ux * vx + uy * vy)

    ux, uy = (x1p - cxp) / rx, (y1p - cyp) / ry
    vx, vy = (-x1p - cxp) / rx, (-y1p - cyp) / ry
    theta = angle(1.0, 0.0, ux, uy)
    delta = angle(ux, uy, vx, vy)
    if not sweep and delta > 0:
        delta -= 2 * math.pi
    elif sweep and delta < 0:
        delta += 2 * math.pi
    count = max(1, math.ceil(abs(delta) / _ARC_MAX_SWEEP - 1e-9))
    step = delta / count
    k = 4 / 3 * math.tan(step / 4)

    def on_ellipse(x: float, y: float) -> Point:
        return (cx + cos * rx * x - sin * ry * y, cy + sin * rx * x + cos * ry * y)

    out: list[Bezier] = []
    prev = p0
    for i in range(count):
        a0, a1 = theta + i * step, theta + (i + 1) * step
        c0, s0, c1, s1 = math.cos(a0), math.sin(a0), math.cos(a1), math.sin(a1)
        end = p1 if i == count - 1 else on_ellipse(c1, s1)
        out.append(
            (
                prev,
                on_ellipse(c0 - k * s0, s0 + k * c0),
                on_ellipse(c1 + k * s1, s1 - k * c1),
                end,
            )
        )
        prev = end
    return out


def transform_path_d(d: str, m: Affine = IDENTITY) -> str:
    """Return ``d`` as absolute ``M L C Z`` path data with ``m`` applied."""
    parts: list[str] = []
    for sp in read_path(d):
        parts.append(f"M {format_point(m.apply(sp.start))}")
        for bezier in sp.beziers:
            kind = "L" if len(bezier) == 2 else "C"
            parts.append(" ".join([kind, *(format_point(m.apply(p)) for p in bezier[1:])]))
        if sp.closed:
            parts.append("Z")
    return " ".join(parts)
