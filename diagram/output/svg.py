"""Render a Scene as SVG text with svgwrite (the only module that imports it).

The output is deterministic: ids come from the Scene, every number goes through ``fmt``, svgwrite
sorts attributes, and nothing depends on time or process state. Band textures are ``<pattern>``
definitions in page units, which cairosvg and rsvg-convert both paint.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Mapping, Sequence
from typing import TYPE_CHECKING, Any

from diagram.drawing.scene import (
    Circle,
    Group,
    Item,
    Line,
    PathItem,
    Point,
    Polygon,
    Rect,
    Scene,
    Text,
    Weight,
    fmt,
    make_id,
)
from diagram.drawing.style import BandStyle, Hatch
from diagram.drawing.textmetrics import text_width

if TYPE_CHECKING:
    import svgwrite

# Extra attributes for an item's element (for example ``data-segment`` on each drawn vessel, so
# that a page can tell which segment was clicked); None or an empty mapping adds nothing.
Annotate = Callable[[Item], Mapping[str, str] | None]

# C0 controls (tab, newline, carriage return become spaces), DEL, lone surrogates and the two
# non-characters XML 1.0 forbids.
_FORBIDDEN = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f\ud800-\udfff\ufffe\uffff]")
_SPACES = re.compile("[\t\n\r]")


def clean_text(text: str) -> str:
    """Return user text without the characters that would make the XML ill-formed."""
    return _FORBIDDEN.sub("", _SPACES.sub(" ", text))


def pattern_id(band_id: str) -> str:
    """Return the id of a band's ``<pattern>``."""
    return make_id("band", band_id)


def _points(points: tuple[Point, ...]) -> list[tuple[str, str]]:
    # svgwrite writes each pair as "x,y" from these strings (it would str() raw floats).
    return [(fmt(x), fmt(y)) for x, y in points]


def _dash(dash: tuple[float, ...]) -> str:
    return " ".join(fmt(d) for d in dash)


def _paint(el: Any, fill: str, stroke: str, width: float, dash: tuple[float, ...]) -> None:
    el["fill"] = fill
    el["stroke"] = stroke
    if stroke != "none":
        el["stroke-width"] = fmt(width)
        if dash:
            el["stroke-dasharray"] = _dash(dash)


# cairosvg paints a pattern tile from a raster one user unit per pixel, whatever the output
# resolution: a 2.4 pt tile would be a blurred 2-pixel image. Tiles are therefore drawn TILE_SCALE
# times larger and scaled back by patternTransform (crisp up to about 10 pixels per point).
TILE_SCALE = 10


def _pattern(dwg: svgwrite.Drawing, band: BandStyle) -> Any:
    k = TILE_SCALE
    s = band.spacing_pt * k
    pat = dwg.pattern(id=pattern_id(band.id))
    pat["patternUnits"] = "userSpaceOnUse"
    pat["x"], pat["y"] = "0", "0"
    pat["width"], pat["height"] = fmt(s), fmt(s)
    turn = f"rotate({fmt(band.angle_deg)}) " if band.angle_deg else ""
    pat["patternTransform"] = f"{turn}scale({fmt(1 / k)})"
    ground = band.ink if band.hatch is Hatch.SOLID else band.tint
    bg = dwg.rect(id=make_id("band", band.id, "ground"))
    bg.update({"x": "0", "y": "0", "width": fmt(s), "height": fmt(s), "fill": ground})
    pat.add(bg)
    half = fmt(s / 2)
    weight = band.weight_pt * k
    if band.hatch in (Hatch.DOTS, Hatch.RINGS):
        dot = dwg.circle(id=make_id("band", band.id, "mark"))
        dot.update({"cx": half, "cy": half, "r": fmt(weight)})
        if band.hatch is Hatch.DOTS:
            dot["fill"] = band.ink
        else:
            dot.update({"fill": "none", "stroke": band.ink, "stroke-width": fmt(weight * 0.55)})
        pat.add(dot)
    if band.hatch in (Hatch.LINES, Hatch.CROSS):
        # Lines a little longer than the tile so that anti-aliasing leaves no gaps at the seams.
        over = fmt(-weight), fmt(s + weight)
        across = dwg.line(id=make_id("band", band.id, "mark"))
        across.update({"x1": over[0], "y1": half, "x2": over[1], "y2": half})
        marks = [across]
        if band.hatch is Hatch.CROSS:
            down = dwg.line(id=make_id("band", band.id, "mark2"))
            down.update({"x1": half, "y1": over[0], "x2": half, "y2": over[1]})
            marks.append(down)
        for mark in marks:
            mark.update({"stroke": band.ink, "stroke-width": fmt(weight)})
            pat.add(mark)
    return pat


def _shape(dwg: svgwrite.Drawing, item: Rect | Polygon, element_id: str) -> Any:
    if isinstance(item, Rect):
        el = dwg.rect(id=element_id)
        el.update({"x": fmt(item.x), "y": fmt(item.y), "width": fmt(item.w), "height": fmt(item.h)})
        return el
    return dwg.polygon(_points(item.points), id=element_id)


def _elements(
    dwg: svgwrite.Drawing,
    item: Item,
    bands: Mapping[str, BandStyle],
    annotate: Annotate | None = None,
) -> list[Any]:
    """Return the SVG elements of one item (a banded shape gives two)."""
    out = _item_elements(dwg, item, bands, annotate)
    if not isinstance(item, Text):  # a text is annotated in _text_line, run by run
        _annotate(out[-1], item, annotate)
    return out


def _item_elements(
    dwg: svgwrite.Drawing,
    item: Item,
    bands: Mapping[str, BandStyle],
    annotate: Annotate | None,
) -> list[Any]:
    if isinstance(item, Group):
        el = dwg.g(id=item.id)
        if item.role:
            el["class"] = item.role
        for sub in _children(dwg, item.items, bands, annotate):
            el.add(sub)
        return [el]
    if isinstance(item, Rect | Polygon):
        out = []
        if item.band:
            # The band's plain colour under its texture: some PDF viewers leave hairline seams
            # between pattern tiles, which then show this colour instead of white paper.
            band = bands[item.band]
            under = _shape(dwg, item, f"{item.id}-under")
            _paint(under, band.ink if band.hatch is Hatch.SOLID else band.tint, "none", 0, ())
            out.append(under)
        el = _shape(dwg, item, item.id)
        fill = f"url(#{pattern_id(item.band)})" if item.band else item.fill
        _paint(el, fill, item.stroke, item.stroke_width, item.dash)
        return [*out, el]
    if isinstance(item, PathItem):
        d = " ".join(" ".join((cmd, *(fmt(v) for v in args))) for cmd, args in item.commands)
        el = dwg.path(d=d, id=item.id)
        _paint(el, item.fill, item.stroke, item.stroke_width, item.dash)
        return [el]
    if isinstance(item, Line):
        el = dwg.polyline(_points(item.points), id=item.id)
        _paint(el, "none", item.stroke, item.stroke_width, item.dash)
        return [el]
    if isinstance(item, Circle):
        el = dwg.circle(id=item.id)
        el.update({"cx": fmt(item.cx), "cy": fmt(item.cy), "r": fmt(item.r)})
        _paint(el, item.fill, item.stroke, item.stroke_width, ())
        return [el]
    if isinstance(item, Text):
        return [_text_line(dwg, (item,), (), annotate)]
    raise TypeError(f"not a scene item: {item!r}")  # a bug in layout, not a user error


# --- lines of text ------------------------------------------------------------------------------
# A line whose weight or size changes is laid out as several Texts, each placed where the one
# before it ends (plus the spaces between words). Written as one <text> of <tspan>s with no x of
# their own, each run follows on from the one before in whatever font the viewer uses, so a
# substituted font changes the line's length but never opens a gap inside it. xml:space keeps a
# run's leading spaces (librsvg drops them otherwise).
_FOLLOW_TOLERANCE_PT = 0.01
_MOST_SPACES = 5  # the header's fields are five spaces apart


def _children(
    dwg: svgwrite.Drawing,
    items: Sequence[Item],
    bands: Mapping[str, BandStyle],
    annotate: Annotate | None,
) -> list[Any]:
    """Return the elements of ``items`` in order, runs of one line joined into one ``<text>``."""
    out: list[Any] = []
    line: list[Text] = []
    spaces: list[tuple[int, int]] = []  # (trailing, leading) between each run and the next
    for item in items:
        if isinstance(item, Text) and line and (joined := follows_on(line[-1], item)) is not None:
            line.append(item)
            spaces.append(joined)
            continue
        if line:
            out.append(_text_line(dwg, line, spaces, annotate))
            line, spaces = [], []
        if isinstance(item, Text) and item.anchor.value == "start":
            line = [item]
        else:
            out += _elements(dwg, item, bands, annotate)
    if line:
        out.append(_text_line(dwg, line, spaces, annotate))
    return out


def follows_on(before: Text, after: Text) -> tuple[int, int] | None:
    """Return how many spaces end ``before`` and begin ``after`` when ``after`` follows on from
    ``before`` on its line (up to five in all, each in its run's own font), else None."""
    if after.anchor.value != "start" or after.y != before.y:
        return None
    end = before.x + text_width(clean_text(before.text), before.size, before.weight is Weight.BOLD)
    gap = after.x - end
    if gap < -_FOLLOW_TOLERANCE_PT:
        return None
    space_before = text_width(" ", before.size, before.weight is Weight.BOLD)
    space_after = text_width(" ", after.size, after.weight is Weight.BOLD)
    for trailing in range(_MOST_SPACES + 1):
        for leading in range(_MOST_SPACES + 1 - trailing):
            if abs(gap - trailing * space_before - leading * space_after) <= _FOLLOW_TOLERANCE_PT:
                return trailing, leading
    return None


def _text_line(
    dwg: svgwrite.Drawing,
    runs: Sequence[Text],
    spaces: Sequence[tuple[int, int]],
    annotate: Annotate | None,
) -> Any:
    """Return one ``<text>`` for a line: a lone run carries its own font, several are tspans
    (``spaces`` says how many spaces end each run and begin the next)."""
    first = runs[0]
    if len(runs) == 1:
        el = dwg.text(clean_text(first.text), id=first.id)
        el.update({"x": fmt(first.x), "y": fmt(first.y)})
        _font_attrs(el, first)
        if first.anchor.value != "start":
            el["text-anchor"] = first.anchor.value
        _annotate(el, first, annotate)
        return el
    el = dwg.text("", id=make_id(first.id, "line"))
    el.update({"x": fmt(first.x), "y": fmt(first.y), "xml:space": "preserve"})
    for i, run in enumerate(runs):
        lead = spaces[i - 1][1] if i else 0
        trailing = spaces[i][0] if i < len(spaces) else 0
        span = dwg.tspan(" " * lead + clean_text(run.text) + " " * trailing, id=run.id)
        _font_attrs(span, run)
        _annotate(span, run, annotate)
        el.add(span)
    return el


def _font_attrs(el: Any, run: Text) -> None:
    el.update({"font-size": fmt(run.size), "fill": run.fill})
    if run.weight is Weight.BOLD:
        el["font-weight"] = "bold"


def _annotate(el: Any, item: Item, annotate: Annotate | None) -> None:
    extra = annotate(item) if annotate is not None else None
    if extra:
        el.update(dict(sorted(extra.items())))


def _text_chars(scene: Scene) -> tuple[set[str], set[str]]:
    """Return the characters of the page's regular and bold text."""
    regular: set[str] = set()
    bold: set[str] = set()
    for item in scene.walk():
        if isinstance(item, Text):
            (bold if item.weight is Weight.BOLD else regular).update(clean_text(item.text))
    return regular, bold


def render_svg(scene: Scene, annotate: Annotate | None = None) -> str:
    """Return the SVG text of ``scene``, carrying the subset of the shipped font it uses;
    ``annotate`` may add attributes to items' elements."""
    text = _render_page(scene, annotate)
    return _with_insets(text, scene) if scene.insets else text


def _with_insets(outer: str, scene: Scene) -> str:
    """Nest each inset's own SVG after the page's items, as a scaled viewport.

    The page's sheet group and font faces are renamed after the page, so the ids of the nested
    sheet stay unique in the document.
    """
    outer = outer.replace('id="sheet"', f'id="{scene.page}-sheet"', 1)
    outer = outer.replace('id="font-faces"', f'id="{scene.page}-font-faces"', 1)
    nested = []
    for inset in scene.insets:
        inner = render_svg(inset.scene).split("?>", 1)[1].strip()
        head, rest = inner.split(">", 1)
        head = re.sub(r'\s(width|height)="[^"]*"', "", head)
        box = inset.box
        head += f' x="{box.x:.2f}" y="{box.y:.2f}" width="{box.w:.2f}" height="{box.h:.2f}"'
        nested.append(f"{head}>{rest}\n")
    return outer.replace("</svg>\n", f"{''.join(nested)}</svg>\n")


def _render_page(scene: Scene, annotate: Annotate | None) -> str:
    import svgwrite

    from diagram.output.webfont import family_list, font_face_css

    width, height = scene.size_in_unit()
    dwg = svgwrite.Drawing(profile="full", debug=False)
    dwg["width"] = f"{fmt(width)}{scene.unit}"
    dwg["height"] = f"{fmt(height)}{scene.unit}"
    dwg["viewBox"] = f"0 0 {fmt(scene.width_pt)} {fmt(scene.height_pt)}"
    regular, bold = _text_chars(scene)
    if regular or bold:
        dwg.defs.add(dwg.style(font_face_css(scene.font_family, regular, bold), id="font-faces"))
    for band in scene.bands:
        dwg.defs.add(_pattern(dwg, band))
    sheet = dwg.g(id="sheet")
    sheet["font-family"] = family_list(scene.font_family)
    bands = {band.id: band for band in scene.bands}
    for el in _children(dwg, scene.items, bands, annotate):
        sheet.add(el)
    dwg.add(sheet)
    return '<?xml version="1.0" encoding="utf-8"?>\n' + str(dwg.tostring()) + "\n"


def render_pages(scene: Scene) -> tuple[str, ...]:
    """Return the SVG text of every page of the sheet, page 1 first."""
    return tuple(render_svg(page) for page in scene.pages())


def pdf_from_svgs(svgs: Sequence[str], *, title: str = "", date: str | None = None) -> bytes:
    """Return one PDF with a page per SVG text, each page sized from its SVG.

    CairoSVG converts one SVG to one PDF; here every page is drawn by CairoSVG's own surface
    code onto one shared cairo PDF surface (resized per page), so a sheet of several pages
    becomes a single document. CairoSVG runs in its safe mode: entities and every resource
    that is not a ``data:`` URL are refused. The caller points fontconfig at the shipped
    fonts first (``diagram.output.export`` does). ``title`` goes into the document's Title;
    ``date`` (ISO 8601) replaces the clock in its creation and modification dates.
    """
    import io

    import cairocffi
    from cairosvg.parser import Tree
    from cairosvg.surface import PDFSurface

    if not svgs:
        raise ValueError("a PDF needs at least one page")
    out = io.BytesIO()
    shared = cairocffi.PDFSurface(out, 1, 1)
    if title:
        shared.set_metadata(cairocffi.PDF_METADATA_TITLE, title)
    if date is not None:
        shared.set_metadata(cairocffi.PDF_METADATA_CREATE_DATE, date)
        shared.set_metadata(cairocffi.PDF_METADATA_MOD_DATE, date)

    class _Page(PDFSurface):  # type: ignore[misc]
        def _create_surface(self, width: float, height: float) -> tuple[Any, float, float]:
            shared.set_size(width, height)
            return shared, width, height

    for svg in svgs:
        page = _Page(Tree(bytestring=svg.encode("utf-8"), unsafe=False), None, 96)
        page.context.show_page()
    shared.finish()
    if date is None:
        return out.getvalue()
    from diagram.output.docmeta import pdf_dates_prefixed

    return pdf_dates_prefixed(out.getvalue(), date)
