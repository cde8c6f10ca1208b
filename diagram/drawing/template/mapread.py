"""Read a map template's layers: vessel centre lines by name and side, outlines, coverage.

``MapReader`` rides on the safe reader of :mod:`diagram.drawing.template.svgread`. Each centre
line is named by ``data-segment`` (with ``data-side``, which may sit on an ancestor group),
failing that by its ``id`` (``right-SFA-M``, ``R_SFA-M``, ``SFA-M-left``), failing that by
``inkscape:label``; aliases are resolved with ``anatomy.resolve``. Outlines are kept as absolute
path data with every transform applied. What it collects is checked by ``mapfile``.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from diagram import anatomy
from diagram.drawing.template.coverage import side_word
from diagram.drawing.template.pathdata import Affine, transform_path_d
from diagram.drawing.template.svgread import SVG_NS, Element, SvgReader, clip

if TYPE_CHECKING:
    from diagram.drawing.template.svgread import Attributes

INKSCAPE_NS = "http://www.inkscape.org/namespaces/inkscape"
NameResult = tuple[str | None, str | None, list[tuple[str, str | None, str | None]]]
_LAYERS = ("silhouette", "landmarks", "vessels")
_CENTRE_LINES = frozenset({"path", "line", "polyline"})
_OUTLINE_SHAPES = frozenset({"path", "line", "polyline", "polygon", "rect", "circle", "ellipse"})
_NAMED = re.compile(
    r"^(?:(?P<pre>right|left|rt|lt|r|l)[\s_.:-]+)?(?P<name>.+?)"
    r"(?:[\s_.:-]+(?P<post>right|left|rt|lt|r|l))?$",
    re.IGNORECASE,
)


@dataclass(frozen=True)
class RawVessel:
    line: int | None
    where: str
    segment: str
    side: str | None
    d: str
    transform: Affine
    length: str | None
    diameter: str | None


@dataclass
class MapReader(SvgReader):
    """The safe reader, collecting vessels, outlines and the declared coverage on the way."""

    vessels: list[RawVessel] = field(default_factory=list)
    silhouette: list[str] = field(default_factory=list)
    landmarks: list[str] = field(default_factory=list)
    coverage: tuple[str, int | None] | None = None  # data-coverage of the root, with its line
    # Per open element: its layer ("silhouette", "landmarks", "vessels" or "") and data-side.
    _scopes: list[tuple[str, str | None]] = field(default_factory=list)

    def element(self, el: Element) -> None:
        parent = self._scopes[-1] if self._scopes else None
        if parent is None and "data-coverage" in el.plain:
            self.coverage = (el.plain["data-coverage"], self.root_line)
        tag, plain = el.tag, el.plain
        group = parent[0] if parent else ""
        label = el.attrs.get((INKSCAPE_NS, "label"), "") if tag == "g" else ""
        for layer_name in (plain.get("id", ""), label):
            if tag == "g" and layer_name.strip().lower() in _LAYERS:
                group = layer_name.strip().lower()
        side = parent[1] if parent else None
        if "data-side" in plain and tag not in _CENTRE_LINES:
            side = side_word(plain["data-side"]) or side
        self._scopes.append((group, side))
        if el.uri == SVG_NS and tag in _OUTLINE_SHAPES | _CENTRE_LINES:
            self.shape(tag, el.where, plain, el.attrs, el.transform, group, el.hidden, side)

    def end_element(self) -> None:
        self._scopes.pop()

    def shape(
        self,
        tag: str,
        where: str,
        plain: dict[str, str],
        attrs: Attributes,
        transform: Affine,
        group: str,
        hidden: bool,
        side: str | None,
    ) -> None:
        named = _name(plain, attrs, side)
        if named is None and group == "vessels" and tag in _CENTRE_LINES and not hidden:
            self.problem(
                where,
                None,
                "a vessel needs a segment id",
                'add data-segment="..." and data-side="right|left"',
            )
        if group in ("silhouette", "landmarks") and named is None:
            d = self.shape_d(tag, where, plain)
            if d is not None and not hidden:
                self.outline(group, where, d, transform)
            return
        if named is None:
            return
        segment, own_side, problems = named
        for rule, value, hint in problems:
            self.problem(where, value, rule, hint)
        if segment is None or tag not in _CENTRE_LINES:
            if segment is not None:
                self.problem(where, None, "a vessel centre line must be a <path>")
            return
        if hidden:
            self.problem(
                where,
                None,
                f"is inside <{self.hidden_tag()}> and never drawn",
                "move it into the vessels layer",
            )
            return
        d = self.shape_d(tag, where, plain)
        if d is not None:
            self.vessels.append(
                RawVessel(
                    self.line(),
                    where,
                    segment,
                    own_side,
                    d,
                    transform,
                    plain.get("data-length-cm"),
                    plain.get("data-diameter-mm"),
                )
            )

    def outline(self, group: str, where: str, d: str, transform: Affine) -> None:
        try:
            absolute = transform_path_d(d, transform)
        except ValueError as exc:
            self.problem(f"{where}.d", clip(d), str(exc))
            return
        (self.silhouette if group == "silhouette" else self.landmarks).append(absolute)


def _name(plain: dict[str, str], attrs: Attributes, inherited: str | None) -> NameResult | None:
    """Return (segment, side, problems) for a vessel, or None when the element names none."""
    problems: list[tuple[str, str | None, str | None]] = []
    if "data-segment" in plain:
        raw = plain["data-segment"]
        segment = anatomy.resolve(raw)
        if segment is None:
            guess = anatomy.suggest(raw)
            problems.append(
                ("is not a segment id", raw, f"did you mean {guess}?" if guess else None)
            )
        explicit = plain.get("data-side")
        side = side_word(explicit) if explicit is not None else inherited
        if explicit is not None and side is None:
            problems.append(("data-side must be right or left", explicit, None))
        if segment is not None:
            side = _check_side(segment, side, explicit is not None, problems)
        return segment, side, problems
    label = attrs.get((INKSCAPE_NS, "label")) if (INKSCAPE_NS, "label") in attrs else None
    for text in (plain.get("id"), label):
        if not text:
            continue
        m = _NAMED.match(text.strip())
        segment = anatomy.resolve(m.group("name")) if m else None
        if m is None or segment is None:
            continue
        word = m.group("pre") or m.group("post")
        side = side_word(word) if word else inherited
        return segment, _check_side(segment, side, False, problems), problems
    return None


def _check_side(
    segment: str,
    side: str | None,
    explicit: bool,
    problems: list[tuple[str, str | None, str | None]],
) -> str | None:
    if segment in anatomy.UNPAIRED:
        if explicit:
            problems.append(
                (f"{segment} is unpaired and takes no data-side", side, "remove data-side")
            )
        return None
    if side is None:
        problems.append(
            (f"{segment} needs a side", None, 'add data-side="right" or data-side="left"')
        )
    return side
