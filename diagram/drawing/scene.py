"""The Scene: a laid-out sheet as drawing primitives, the contract between layout and renderers.

Coordinates are page points (1/72 in) with the origin at the top left and y growing downwards.
Items are listed in paint order. Every item carries an id derived from what it shows, so the same
study always gives the same ids. A fill may name a band (``band``): the renderer paints the band's
tint and texture from ``Scene.bands`` instead of the plain ``fill``.
"""

from __future__ import annotations

import hashlib
import re
from collections.abc import Iterator
from dataclasses import dataclass
from enum import StrEnum

from diagram.drawing.style import BandStyle

Point = tuple[float, float]

MM_PER_PT = 25.4 / 72.0


class Anchor(StrEnum):
    """Where a text's x lies on its line."""

    START = "start"
    MIDDLE = "middle"
    END = "end"


class Weight(StrEnum):
    """Font weight of a text."""

    NORMAL = "normal"
    BOLD = "bold"


@dataclass(frozen=True)
class Box:
    """An axis-aligned rectangle: left, top, width, height."""

    x: float
    y: float
    w: float
    h: float

    @property
    def right(self) -> float:
        return self.x + self.w

    @property
    def bottom(self) -> float:
        return self.y + self.h

    def intersects(self, other: Box) -> bool:
        """Return True when the two boxes share interior area (touching edges do not count)."""
        return (
            self.x < other.right
            and other.x < self.right
            and self.y < other.bottom
            and other.y < self.bottom
        )

    def union(self, other: Box) -> Box:
        """Return the smallest box holding both."""
        x, y = min(self.x, other.x), min(self.y, other.y)
        return Box(x, y, max(self.right, other.right) - x, max(self.bottom, other.bottom) - y)


PathCommand = tuple[str, tuple[float, ...]]  # ("M", (x, y)), ("C", (...)), ...


@dataclass(frozen=True)
class Fit:
    """Map template user units to page points: a uniform scale, then a translation."""

    scale: float
    tx: float
    ty: float

    def point(self, p: Point) -> Point:
        """Return the page point of template point ``p``."""
        return (p[0] * self.scale + self.tx, p[1] * self.scale + self.ty)


@dataclass(frozen=True)
class Rect:
    """A rectangle."""

    id: str
    x: float
    y: float
    w: float
    h: float
    fill: str = "none"
    stroke: str = "none"
    stroke_width: float = 0.0
    band: str | None = None
    dash: tuple[float, ...] = ()


@dataclass(frozen=True)
class Polygon:
    """A closed polygon, e.g. a stretch of vessel."""

    id: str
    points: tuple[Point, ...]
    fill: str = "none"
    stroke: str = "none"
    stroke_width: float = 0.0
    band: str | None = None
    dash: tuple[float, ...] = ()


@dataclass(frozen=True)
class PathItem:
    """A path as absolute SVG commands in page points: ``("M", (x, y))``, ``("C", (...))``, ..."""

    id: str
    commands: tuple[PathCommand, ...]
    fill: str = "none"
    stroke: str = "none"
    stroke_width: float = 0.0
    dash: tuple[float, ...] = ()


@dataclass(frozen=True)
class Line:
    """An open polyline, e.g. a leader line or a tick."""

    id: str
    points: tuple[Point, ...]
    stroke: str
    stroke_width: float
    dash: tuple[float, ...] = ()


@dataclass(frozen=True)
class Circle:
    """A circle."""

    id: str
    cx: float
    cy: float
    r: float
    fill: str = "none"
    stroke: str = "none"
    stroke_width: float = 0.0


@dataclass(frozen=True)
class Text:
    """One line of text; ``y`` is the baseline."""

    id: str
    x: float
    y: float
    text: str
    size: float
    weight: Weight = Weight.NORMAL
    anchor: Anchor = Anchor.START
    fill: str = "#000000"


@dataclass(frozen=True)
class Group:
    """Items that belong together (a vessel, a label, the legend); ``role`` names what it is."""

    id: str
    items: tuple[Item, ...]
    role: str = ""


Item = Rect | Polygon | PathItem | Line | Circle | Text | Group


@dataclass(frozen=True)
class Inset:
    """Another page drawn inside this one, scaled uniformly (the gallery's specimen sheet).

    ``x``, ``y`` are where the inset page's top left corner lies on this page; the inset is
    clipped to its own page, as a nested SVG viewport is.
    """

    id: str
    x: float
    y: float
    scale: float
    scene: Scene

    @property
    def box(self) -> Box:
        """Return the area the inset covers on the page."""
        scene = self.scene
        return Box(self.x, self.y, scene.width_pt * self.scale, scene.height_pt * self.scale)


@dataclass(frozen=True)
class LabelBox:
    """A placed margin label: its text box and the point on the vessel its leader reaches."""

    id: str
    side: str  # "right" / "left": the patient's leg whose margin holds it
    kind: str  # "segment", "lesion" or "reconstitution"
    target: str  # vessel key the label points at
    text: str
    box: Box
    anchor: Point


@dataclass(frozen=True)
class Region:
    """An area of the sheet that belongs to one leg (the ankle pressure boxes)."""

    id: str
    side: str
    box: Box


@dataclass(frozen=True)
class Block:
    """Where one top-level block of a page lies (header, map, legend, a table ...)."""

    id: str
    box: Box


@dataclass(frozen=True)
class Scene:
    """A laid-out page of a sheet; page 1 carries the further pages in ``more``.

    A sheet whose tables do not fit beside the map continues on further pages, each a Scene of
    its own (``pages()`` lists them in order); every renderer draws each page separately. A
    further page holds no map: its ``map_box`` and ``vessel_box`` are empty boxes at the origin.
    """

    page: str  # "a4", "letter" or "map"
    width_pt: float
    height_pt: float
    unit: str  # "mm" or "in": the unit the SVG states its size in
    font_family: str
    bands: tuple[BandStyle, ...]  # every band an item may name, in legend order
    items: tuple[Item, ...]
    map_box: Box  # where the template's viewBox sits on the page
    vessel_box: Box  # bounding box of the drawn vessels
    label_boxes: tuple[LabelBox, ...]
    pressure_regions: tuple[Region, ...]  # the ankle pressure boxes; empty without pressures
    blocks: tuple[Block, ...] = ()  # the top-level blocks, which never overlap
    page_number: int = 1
    page_count: int = 1
    more: tuple[Scene, ...] = ()  # pages 2 .. page_count (on page 1 only)
    title: str = ""  # the document title (PDF metadata): kind of sheet and lab, no identifier
    insets: tuple[Inset, ...] = ()  # other pages drawn scaled over the items, in order

    def pages(self) -> tuple[Scene, ...]:
        """Return every page of the sheet, this one first."""
        return (self, *self.more)

    def walk(self) -> Iterator[Item]:
        """Yield every item, groups before their members, in paint order."""
        stack: list[Item] = list(reversed(self.items))
        while stack:
            item = stack.pop()
            yield item
            if isinstance(item, Group):
                stack.extend(reversed(item.items))

    def size_in_unit(self) -> tuple[float, float]:
        """Return the page size in ``unit``."""
        factor = MM_PER_PT if self.unit == "mm" else 1.0 / 72.0
        return self.width_pt * factor, self.height_pt * factor


def fmt(value: float) -> str:
    """Return ``value`` with at most two decimals and no trailing zeros (the one number format)."""
    text = f"{value:.2f}".rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


_UNSAFE = re.compile(r"[^A-Za-z0-9_-]+")


def make_id(*parts: object) -> str:
    """Return an XML-safe id built from ``parts``; a short digest keeps rewritten parts unique."""
    raw = "-".join(str(p) for p in parts)
    safe = _UNSAFE.sub("_", raw)
    if safe != raw:
        safe += "_" + hashlib.sha1(raw.encode("utf-8")).hexdigest()[:6]
    if not safe[:1].isalpha():
        safe = "i" + safe
    return safe


@dataclass(frozen=True)
class CaseHeader:
    """What a de-identified (teaching) sheet shows in place of the patient and exam header.

    ``layout(..., case=CaseHeader(...))`` prints only these fields: no name, id, dates beyond the
    year, site, operator or accession, whatever the study holds.
    """

    case_id: str
    year: int | None = None
    age: str | None = None  # whole years at the exam, or "90+"
    sex: str | None = None
    free_text: str | None = None  # what became of the study's notes and comments: "withheld" …


def _path_points(commands: tuple[PathCommand, ...]) -> list[Point]:
    """Return the end and control points of a path, relative commands resolved."""
    out: list[Point] = []
    cx = cy = 0.0
    for cmd, args in commands:
        up, rel = cmd.upper(), cmd.islower()
        if up == "H":
            cx = args[0] + (cx if rel else 0.0)
        elif up == "V":
            cy = args[0] + (cy if rel else 0.0)
        elif up == "A":
            cx, cy = args[5] + (cx if rel else 0.0), args[6] + (cy if rel else 0.0)
        elif up != "Z":
            ox, oy = (cx, cy) if rel else (0.0, 0.0)
            pairs = [(args[k] + ox, args[k + 1] + oy) for k in range(0, len(args) - 1, 2)]
            out.extend(pairs[:-1])
            cx, cy = pairs[-1]
        out.append((cx, cy))
    return out


def bounds(item: Item) -> Box | None:
    """Return the area ``item`` paints (strokes and text extents included), None if nothing."""
    from diagram.drawing.textmetrics import line_extents, text_width

    if isinstance(item, Group):
        found = [b for b in (bounds(i) for i in item.items) if b is not None]
        if not found:
            return None
        out = found[0]
        for b in found[1:]:
            out = out.union(b)
        return out
    if isinstance(item, Text):
        bold = item.weight is Weight.BOLD
        w = text_width(item.text, item.size, bold)
        asc, desc = line_extents(item.size, bold)
        shift = {Anchor.START: 0.0, Anchor.MIDDLE: w / 2, Anchor.END: w}[item.anchor]
        return Box(item.x - shift, item.y - asc, w, asc + desc)
    if isinstance(item, Rect):
        pad = item.stroke_width / 2 if item.stroke != "none" else 0.0
        return Box(item.x - pad, item.y - pad, item.w + 2 * pad, item.h + 2 * pad)
    if isinstance(item, Circle):
        r = item.r + (item.stroke_width / 2 if item.stroke != "none" else 0.0)
        return Box(item.cx - r, item.cy - r, 2 * r, 2 * r)
    if isinstance(item, PathItem):
        points = _path_points(item.commands)
        pad = item.stroke_width / 2 if item.stroke != "none" else 0.0
    else:
        points = list(item.points)
        pad = item.stroke_width / 2 if item.stroke != "none" else 0.0
    if not points:
        return None
    xs, ys = [p[0] for p in points], [p[1] for p in points]
    return Box(
        min(xs) - pad, min(ys) - pad, max(xs) - min(xs) + 2 * pad, max(ys) - min(ys) + 2 * pad
    )
