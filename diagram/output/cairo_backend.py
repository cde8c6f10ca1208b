"""Render a Scene straight onto cairo (pycairo): one renderer per output, PDF and PNG.

The shape follows plotting libraries' backends: ``CairoRenderer`` implements the Scene's
primitives (rectangle, polygon, path, polyline, circle, one line of text) on a cairo context;
``pdf_bytes`` and ``png_bytes`` give it the surface of their output. What it paints matches the
SVG route (``output.svg`` converted by CairoSVG), which stays the reference: SVG's stroke
defaults (butt caps, miter joins, miter limit 4), a band's plain colour under its texture, the
band textures as repeating patterns of one tile (vector tiles in a PDF), and text in the shipped
DejaVu Sans with hinted metrics off, so a string is as wide at every resolution as the layout
measured. Text stays text: a PDF's words are extractable.
"""

from __future__ import annotations

import functools
import io
import math
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import cairo

from diagram.drawing.scene import (
    Anchor,
    Circle,
    Group,
    Item,
    Line,
    PathCommand,
    PathItem,
    Polygon,
    Rect,
    Scene,
    Text,
    Weight,
)
from diagram.drawing.style import BandStyle, Hatch
from diagram.output.fonts import FAMILY, use_shipped_fonts
from diagram.output.pathdraw import trace_path
from diagram.output.svg import clean_text

if TYPE_CHECKING:
    from collections.abc import Sequence

RGB = tuple[float, float, float]
SVG_MITER_LIMIT = 4.0  # SVG's default stroke-miterlimit (cairo's own default is 10)


@functools.cache
def rgb(colour: str) -> RGB:
    """Return a ``#rrggbb`` (or ``#rgb``) colour as cairo's three fractions."""
    text = colour.lstrip("#")
    if len(text) == 3:
        text = "".join(c * 2 for c in text)
    if not colour.startswith("#") or len(text) != 6:
        raise ValueError(f"not a #rrggbb colour: {colour!r}")  # the style module validated it
    value = int(text, 16)
    return ((value >> 16) / 255.0, ((value >> 8) & 0xFF) / 255.0, (value & 0xFF) / 255.0)


@functools.cache
def font_face(bold: bool) -> cairo.ToyFontFace:
    """Return the shipped DejaVu Sans face (regular or bold), looked up once per process."""
    use_shipped_fonts()
    weight = cairo.FONT_WEIGHT_BOLD if bold else cairo.FONT_WEIGHT_NORMAL
    return cairo.ToyFontFace(FAMILY, cairo.FONT_SLANT_NORMAL, weight)


@functools.cache
def font_options() -> cairo.FontOptions:
    """Return font options with hinted metrics off (widths the same at every resolution)."""
    options = cairo.FontOptions()
    options.set_hint_metrics(cairo.HINT_METRICS_OFF)
    options.set_hint_style(cairo.HINT_STYLE_NONE)
    return options


TILE_UNITS = 100  # a tile's side in its own units: cairo rounds a recording's extents to integers


def band_pattern(band: BandStyle) -> cairo.SurfacePattern:
    """Return the band's texture: one tile of ``spacing_pt``, turned by its angle, repeated.

    The tile is recorded (vectors, kept as such in a PDF) on a square of ``TILE_UNITS``, drawn
    scaled up from points, and the pattern's matrix scales it back, so the spacing is exact
    whatever it is.
    """
    s = band.spacing_pt
    factor = TILE_UNITS / s
    extents = cairo.Rectangle(0, 0, TILE_UNITS, TILE_UNITS)
    tile = cairo.RecordingSurface(cairo.CONTENT_COLOR_ALPHA, extents)
    ctx = cairo.Context(tile)
    ctx.scale(factor, factor)
    ctx.set_source_rgb(*rgb(band.ink if band.hatch is Hatch.SOLID else band.tint))
    ctx.paint()
    ctx.set_source_rgb(*rgb(band.ink))
    half, weight = s / 2, band.weight_pt
    if band.hatch is Hatch.DOTS:
        ctx.arc(half, half, weight, 0, 2 * math.pi)
        ctx.fill()
    elif band.hatch is Hatch.RINGS:
        ctx.arc(half, half, weight, 0, 2 * math.pi)
        ctx.set_line_width(weight * 0.55)
        ctx.stroke()
    elif band.hatch in (Hatch.LINES, Hatch.CROSS):
        ctx.set_line_width(weight)
        ctx.move_to(-weight, half)  # past the tile's edges: no gaps at the seams
        ctx.line_to(s + weight, half)
        if band.hatch is Hatch.CROSS:
            ctx.move_to(half, -weight)
            ctx.line_to(half, s + weight)
        ctx.stroke()
    pattern = cairo.SurfacePattern(tile)
    pattern.set_extend(cairo.EXTEND_REPEAT)
    matrix = cairo.Matrix()  # tile ➜ page: turn, then scale back to points
    if band.angle_deg:
        matrix.rotate(math.radians(band.angle_deg))
    matrix.scale(1 / factor, 1 / factor)
    matrix.invert()  # a pattern's matrix maps the page onto the tile
    pattern.set_matrix(matrix)
    return pattern


class CairoRenderer:
    """Draw one Scene page's items on a cairo context whose user units are page points."""

    def __init__(self, ctx: cairo.Context[Any], bands: Sequence[BandStyle]) -> None:
        self.ctx = ctx
        self.bands: Mapping[str, BandStyle] = {band.id: band for band in bands}
        self._patterns: dict[str, cairo.SurfacePattern] = {}
        ctx.set_miter_limit(SVG_MITER_LIMIT)
        ctx.set_line_cap(cairo.LINE_CAP_BUTT)
        ctx.set_line_join(cairo.LINE_JOIN_MITER)
        ctx.set_fill_rule(cairo.FILL_RULE_WINDING)
        ctx.set_font_options(font_options())

    def draw_page(self, scene: Scene) -> None:
        """Draw every item of one page, in paint order, then its insets."""
        for item in scene.items:
            self.draw_item(item)
        ctx = self.ctx
        for inset in scene.insets:
            ctx.save()
            ctx.translate(inset.x, inset.y)
            ctx.scale(inset.scale, inset.scale)
            ctx.rectangle(0, 0, inset.scene.width_pt, inset.scene.height_pt)
            ctx.clip()  # as a nested SVG viewport clips its content
            CairoRenderer(ctx, inset.scene.bands).draw_page(inset.scene)
            ctx.restore()

    def draw_item(self, item: Item) -> None:
        """Draw one item (a group's members in order)."""
        if isinstance(item, Group):
            for child in item.items:
                self.draw_item(child)
        elif isinstance(item, Text):
            self.draw_text(item)
        elif isinstance(item, Rect):
            self.ctx.rectangle(item.x, item.y, item.w, item.h)
            self._banded(item.band, item.fill, item.stroke, item.stroke_width, item.dash)
        elif isinstance(item, Polygon):
            self._polyline(item.points)
            self.ctx.close_path()
            self._banded(item.band, item.fill, item.stroke, item.stroke_width, item.dash)
        elif isinstance(item, PathItem):
            self.draw_path(item.commands)
            self._finish(item.fill, item.stroke, item.stroke_width, item.dash)
        elif isinstance(item, Line):
            self._polyline(item.points)
            self._finish("none", item.stroke, item.stroke_width, item.dash)
        elif isinstance(item, Circle):
            self.ctx.new_sub_path()
            self.ctx.arc(item.cx, item.cy, item.r, 0, 2 * math.pi)
            self.ctx.close_path()
            self._finish(item.fill, item.stroke, item.stroke_width, ())
        else:
            raise TypeError(f"not a scene item: {item!r}")  # a bug in layout, not a user error

    def draw_path(self, commands: tuple[PathCommand, ...]) -> None:
        """Trace SVG path commands (absolute or relative, arcs included) as the current path."""
        trace_path(self.ctx, commands)

    def draw_text(self, item: Text) -> None:
        """Show one line of text, ``y`` its baseline, placed by its anchor."""
        text = clean_text(item.text)
        if not text:
            return
        ctx = self.ctx
        ctx.set_font_face(font_face(item.weight is Weight.BOLD))
        ctx.set_font_size(item.size)
        x = item.x
        if item.anchor is not Anchor.START:
            advance = ctx.text_extents(text).x_advance
            x -= advance / 2 if item.anchor is Anchor.MIDDLE else advance
        ctx.move_to(x, item.y)
        ctx.set_source_rgb(*rgb(item.fill))
        ctx.show_text(text)
        ctx.new_path()

    def _polyline(self, points: tuple[tuple[float, float], ...]) -> None:
        ctx = self.ctx
        ctx.new_path()
        if not points:
            return
        ctx.move_to(*points[0])
        for point in points[1:]:
            ctx.line_to(*point)

    def _banded(
        self, band_id: str | None, fill: str, stroke: str, width: float, dash: tuple[float, ...]
    ) -> None:
        if band_id is None:
            self._finish(fill, stroke, width, dash)
            return
        band = self.bands[band_id]
        ctx = self.ctx
        # The band's plain colour under its texture, as on the SVG route (no seams show paper).
        ctx.set_source_rgb(*rgb(band.ink if band.hatch is Hatch.SOLID else band.tint))
        ctx.fill_preserve()
        pattern = self._patterns.get(band_id)
        if pattern is None:
            pattern = self._patterns[band_id] = band_pattern(band)
        ctx.set_source(pattern)
        ctx.fill_preserve()
        self._finish("none", stroke, width, dash)

    def _finish(self, fill: str, stroke: str, width: float, dash: tuple[float, ...]) -> None:
        """Fill and stroke the current path as SVG would, then clear it."""
        ctx = self.ctx
        if fill != "none":
            ctx.set_source_rgb(*rgb(fill))
            ctx.fill_preserve()
        if stroke != "none" and width > 0:
            ctx.set_source_rgb(*rgb(stroke))
            ctx.set_line_width(width)
            ctx.set_dash(dash if dash and any(dash) else ())
            ctx.stroke_preserve()
        ctx.new_path()


def pdf_bytes(scene: Scene, *, title: str = "", date: str | None = None) -> bytes:
    """Return a PDF of every page of the sheet, each page sized from its Scene.

    ``title`` (the scene's own when empty) goes into the document's Title; ``date`` (ISO 8601)
    replaces the clock in its creation and modification dates, for byte-identical output.
    """
    out = io.BytesIO()
    first = scene.pages()[0]
    surface = cairo.PDFSurface(out, first.width_pt, first.height_pt)
    if title or scene.title:
        surface.set_metadata(cairo.PDFMetadata.TITLE, title or scene.title)
    if date is not None:
        surface.set_metadata(cairo.PDFMetadata.CREATE_DATE, date)
        surface.set_metadata(cairo.PDFMetadata.MOD_DATE, date)
    for page in scene.pages():
        surface.set_size(page.width_pt, page.height_pt)
        ctx = cairo.Context(surface)
        CairoRenderer(ctx, page.bands).draw_page(page)
        ctx.show_page()
    surface.finish()
    if date is None:
        return out.getvalue()
    from diagram.output.docmeta import pdf_dates_prefixed

    return pdf_dates_prefixed(out.getvalue(), date)


def png_page(scene: Scene, dpi: float) -> bytes:
    """Return one page as a PNG on white at ``dpi``.

    The size in pixels is rounded and the page fitted into it centred, as CairoSVG does with
    the SVG's size and viewBox, so the two routes give images of the same size.
    """
    width = max(1, round(scene.width_pt * dpi / 72.0))
    height = max(1, round(scene.height_pt * dpi / 72.0))
    scale = min(width / scene.width_pt, height / scene.height_pt)
    surface = cairo.ImageSurface(cairo.FORMAT_ARGB32, width, height)
    ctx = cairo.Context(surface)
    ctx.set_source_rgb(1.0, 1.0, 1.0)
    ctx.paint()
    ctx.translate((width - scene.width_pt * scale) / 2, (height - scene.height_pt * scale) / 2)
    ctx.scale(scale, scale)
    CairoRenderer(ctx, scene.bands).draw_page(scene)
    surface.flush()
    out = io.BytesIO()
    surface.write_to_png(out)
    return out.getvalue()


def png_pages(scene: Scene, dpi: float) -> tuple[bytes, ...]:
    """Return every page of the sheet as a PNG, page 1 first."""
    return tuple(png_page(page, dpi) for page in scene.pages())
