"""The cairo route (Scene painted directly) against the reference route (SVG through CairoSVG).

Every example and the style gallery (its specimen sheet a scaled inset) are rendered both ways. Pixels at 72 dpi (the coarsest screen resolution, where
any misplaced shape or texture shows most): outside the text boxes the two images may differ
only where anti-aliasing of an edge rounds differently, i.e. no pixel by more than half the grey
range and at most 0.05% of the pixels by more than 40 of 255 levels; inside the text boxes (padded
for CairoSVG's hinted widths at 72 dpi, up to 6% wider) the amount of ink per line may differ by
at most 25% (CairoSVG hints the outlines, cairo here does not: its stems and baselines snap to
whole pixels, up to 21% more or less ink on a line of small bold text). The PDFs must give the same words through poppler's pdftotext, the same page sizes, and embed only the
shipped DejaVu Sans.
"""

from __future__ import annotations

import io
import shutil
import subprocess
from collections.abc import Iterator
from functools import cache
from pathlib import Path

import pytest
from PIL import Image, ImageChops, ImageDraw

from diagram.drawing.scene import Scene, Text, bounds
from diagram.output.export import Drawing, ExportOptions, render_bytes
from diagram.pipeline import draw
from diagram.reading.load import load_study

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = sorted(p.stem for p in (ROOT / "examples").glob("*.yaml"))
SHEETS = [*EXAMPLES, "gallery"]
DPI = 72.0
EDGE_LEVEL = 40  # a grey difference above this is more than an edge's anti-aliasing
MAX_LEVEL = 128
MAX_EDGE_SHARE = 0.0005
TEXT_INK_RATIO = 0.25
CAIROSVG = ExportOptions(png_dpi=DPI, renderer="cairosvg")
CAIRO = ExportOptions(png_dpi=DPI, renderer="cairo")


@cache
def drawing(stem: str) -> Drawing:
    if stem == "gallery":
        from diagram.design.gallery import gallery_scene

        return Drawing(results={}, scene=gallery_scene())
    return draw(load_study(ROOT / "examples" / f"{stem}.yaml"))


def _texts(scene: Scene) -> Iterator[tuple[Text, float, float, float]]:
    """Yield every text of the page with the scale and offset it is drawn at (insets too)."""
    for item in scene.walk():
        if isinstance(item, Text):
            yield item, 1.0, 0.0, 0.0
    for inset in scene.insets:
        for text, scale, dx, dy in _texts(inset.scene):
            yield text, scale * inset.scale, inset.x + dx * inset.scale, inset.y + dy * inset.scale


def _pages(png: bytes, scenes: tuple[Scene, ...]) -> list[Image.Image]:
    """Split a stacked PNG back into its pages (grey luminance)."""
    image = Image.open(io.BytesIO(png)).convert("L")
    out, y = [], 0
    for scene in scenes:
        h = round(scene.height_pt * DPI / 72)
        out.append(image.crop((0, y, image.width, y + h)))
        y += h + round(24 * DPI / 72)
    return out


def _text_boxes(scene: Scene) -> list[tuple[float, float, float, float]]:
    """Return the pixel box of every line of text, padded by 6% of its width (CairoSVG's hinted
    widths) and 3 pixels: texts on one baseline that touch are merged, and so are the runs the
    SVG writes as one line (``follows_on``: there CairoSVG's widths add up along the line)."""
    from diagram.output.svg import follows_on

    k, pad = DPI / 72, 3.0
    rows: dict[float, list[tuple[list[float], Text, float]]] = {}
    for item, scale, dx, dy in sorted(_texts(scene), key=lambda t: t[0].x * t[1] + t[2]):
        b = bounds(item)
        if b is None or not item.text.strip():
            continue
        box = [b.x * scale + dx, b.y * scale + dy, b.right * scale + dx, b.bottom * scale + dy]
        line = rows.setdefault(round(item.y * scale + dy, 1), [])
        if line:
            last, before, before_scale = line[-1]
            grow = (last[2] - last[0]) * 0.06 + pad / k
            joined = before_scale == scale and follows_on(before, item) is not None
            if joined or box[0] <= last[2] + grow:
                merged = [last[0], min(last[1], box[1]), max(last[2], box[2]), max(last[3], box[3])]
                line[-1] = (merged, item, scale)
                continue
        line.append((box, item, scale))
    boxes = []
    for (x, y, right, bottom), _, _ in (entry for line in rows.values() for entry in line):
        grow = (right - x) * 0.06
        boxes.append(
            ((x - grow) * k - pad, y * k - pad, (right + grow) * k + pad, bottom * k + pad)
        )
    return boxes


def _ink(image: Image.Image, box: tuple[float, float, float, float]) -> int:
    crop = image.crop(tuple(round(v) for v in box))  # type: ignore[arg-type]
    return sum(count * (255 - level) for level, count in enumerate(crop.histogram()))


@pytest.mark.parametrize("stem", SHEETS)
def test_pixels_differ_only_by_text_antialiasing(stem: str) -> None:
    d = drawing(stem)
    assert d.scene is not None
    scenes = d.scene.pages()
    ours = _pages(render_bytes(d, "png", CAIRO), scenes)
    reference = _pages(render_bytes(d, "png", CAIROSVG), scenes)
    for scene, a, b in zip(scenes, ours, reference, strict=True):
        assert a.size == b.size
        boxes = _text_boxes(scene)
        mask = Image.new("L", a.size, 1)
        painter = ImageDraw.Draw(mask)
        for box in boxes:
            painter.rectangle(box, fill=0)
        outside = ImageChops.multiply(ImageChops.difference(a, b), mask).histogram()
        worst = max(level for level, count in enumerate(outside) if count)
        edge = sum(outside[EDGE_LEVEL + 1 :]) / (a.width * a.height)
        assert worst <= MAX_LEVEL, (stem, scene.page_number, worst)
        assert edge <= MAX_EDGE_SHARE, (stem, scene.page_number, edge)
        for box in boxes:
            ink_a, ink_b = _ink(a, box), _ink(b, box)
            assert abs(ink_a - ink_b) <= TEXT_INK_RATIO * max(ink_a, ink_b), (stem, box)


def _pdftotext(pdf: bytes, tmp: Path, name: str) -> list[str]:
    path = tmp / f"{name}.pdf"
    path.write_bytes(pdf)
    out = subprocess.run(["pdftotext", str(path), "-"], capture_output=True, text=True, check=True)
    return out.stdout.split()


@pytest.mark.skipif(shutil.which("pdftotext") is None, reason="needs poppler's pdftotext")
@pytest.mark.parametrize("stem", SHEETS)
def test_pdf_gives_the_same_words_pages_and_fonts(stem: str, tmp_path: Path) -> None:
    from pypdf import PdfReader

    d = drawing(stem)
    ours = render_bytes(d, "pdf", CAIRO)
    reference = render_bytes(d, "pdf", CAIROSVG)
    words = _pdftotext(ours, tmp_path, "ours")
    assert "Schematic" in words and len(words) > 100
    assert sorted(words) == sorted(_pdftotext(reference, tmp_path, "reference"))
    readers = PdfReader(io.BytesIO(ours)), PdfReader(io.BytesIO(reference))
    sizes = [
        [(float(p.mediabox.width), float(p.mediabox.height)) for p in r.pages] for r in readers
    ]
    assert sizes[0] == pytest.approx(sizes[1], abs=0.01)
    assert len(sizes[0]) == d.scene.page_count if d.scene else 0
    fonts = {
        str(f["/BaseFont"]).split("+")[-1]
        for p in readers[0].pages
        for f in p["/Resources"]["/Font"].values()  # type: ignore[index]
    }
    assert fonts <= {"DejaVuSans", "DejaVuSans-Bold"} and "DejaVuSans" in fonts


@pytest.mark.skipif(shutil.which("qpdf") is None, reason="needs qpdf")
def test_multi_page_pdf_passes_qpdf_check(tmp_path: Path) -> None:
    d = drawing("clti-multilevel")
    assert d.scene is not None and d.scene.page_count == 2
    path = tmp_path / "m.pdf"
    path.write_bytes(render_bytes(d, "pdf", CAIRO))
    check = subprocess.run(["qpdf", "--check", str(path)], capture_output=True, text=True)
    assert check.returncode == 0, check.stdout + check.stderr
    assert "No syntax or stream encoding errors" in check.stdout


def test_png_text_width_does_not_depend_on_the_dpi() -> None:
    """Hinted metrics are off: a right-aligned label's left edge scales exactly with the dpi."""
    from diagram.drawing.scene import Anchor, Box, Weight
    from diagram.drawing.textmetrics import text_width

    label = Text("t", 200.0, 30.0, "SFA-M 75-99% PSV 385", 10.0, Weight.NORMAL, Anchor.END)
    whole = Box(0, 0, 220, 40)
    scene = Scene("map", 220, 40, "mm", "DejaVu Sans", (), (label,), whole, whole, (), ())
    design = text_width(label.text, label.size, False)
    for dpi in (72.0, 144.0, 288.0):
        png = render_bytes(Drawing(results={}, scene=scene), "png", ExportOptions(png_dpi=dpi))
        image = Image.open(io.BytesIO(png)).convert("L")
        k = dpi / 72
        ink = image.point(lambda v: 255 if v < 200 else 0).getbbox()
        assert ink is not None
        left = ink[0] / k
        assert left == pytest.approx(200 - design, abs=1.5 / k + 0.6), dpi


class _Sink:
    """Records what a path tracer asks for."""

    def __init__(self) -> None:
        self.calls: list[tuple[str, tuple[float, ...]]] = []

    def move_to(self, x: float, y: float) -> None:
        self.calls.append(("M", (x, y)))

    def line_to(self, x: float, y: float) -> None:
        self.calls.append(("L", (x, y)))

    def curve_to(self, x1: float, y1: float, x2: float, y2: float, x3: float, y3: float) -> None:
        self.calls.append(("C", (x1, y1, x2, y2, x3, y3)))

    def close_path(self) -> None:
        self.calls.append(("Z", ()))

    def new_path(self) -> None:
        self.calls.clear()


@pytest.mark.parametrize(
    ("commands", "end"),
    [
        ((("M", (1, 2)), ("l", (3, 4))), (4, 6)),
        ((("M", (1, 2)), ("h", (5,)), ("v", (-2,))), (6, 0)),
        ((("M", (1, 2)), ("H", (5,)), ("V", (9,))), (5, 9)),
        ((("M", (0, 0)), ("c", (1, 1, 2, 1, 3, 0)), ("s", (2, -1, 3, 0))), (6, 0)),
        ((("M", (0, 0)), ("q", (1, 1, 2, 0)), ("t", (2, 0))), (4, 0)),
        ((("M", (0, 0)), ("l", (1, 0)), ("z", ()), ("l", (0, 2))), (0, 2)),
        ((("M", (1, 0)), ("A", (1, 1, 0, 0, 1, 0, 1))), (0, 1)),
        ((("M", (1, 0)), ("a", (1, 1, 0, 1, 1, -2, 0))), (-1, 0)),
        ((("M", (0, 0)), ("A", (0, 1, 0, 0, 1, 3, 4))), (3, 4)),  # zero radius: a line
    ],
)
def test_path_tracer_ends_where_svg_says(
    commands: tuple[tuple[str, tuple[float, ...]], ...], end: tuple[float, float]
) -> None:
    from diagram.output.pathdraw import trace_path

    sink = _Sink()
    trace_path(sink, commands)
    last = sink.calls[-1][1]
    assert last[-2:] == pytest.approx(end)


# (start, end, rx, ry, rotation, large-arc, sweep, a point the arc passes through)
ARCS = [
    ((1, 0), (0, 1), 1, 1, 0, False, True, (2**-0.5, 2**-0.5)),  # quarter circle, y down: sweep=1
    ((1, 0), (0, 1), 1, 1, 0, True, False, (-1, 0)),  # the other three quarters
    ((0, 0), (4, 0), 1, 1, 0, False, True, (2, -2)),  # radius too small: scaled up (SVG F.6.6)
    ((2, 0), (-2, 0), 2, 1, 0, False, True, (0, 1)),  # half an ellipse
    ((0, 2), (0, -2), 2, 1, 90, False, False, (1, 0)),  # the same ellipse turned by 90°
]


@pytest.mark.parametrize(("start", "end", "rx", "ry", "rot", "large", "sweep", "through"), ARCS)
def test_arc_to_cubics_follows_the_ellipse(
    start: tuple[float, float],
    end: tuple[float, float],
    rx: float,
    ry: float,
    rot: float,
    large: bool,
    sweep: bool,
    through: tuple[float, float],
) -> None:
    """Sample the cubics densely: they pass within 1% of the radius of the expected point."""
    from diagram.output.pathdraw import arc_to_cubics

    cubics = arc_to_cubics(start, end, rx, ry, rot, large, sweep)
    assert cubics[-1][2] == pytest.approx(end)
    points, p0 = [], start
    for c1, c2, p3 in cubics:
        for k in range(101):
            t = k / 100
            points.append(
                tuple(
                    (1 - t) ** 3 * p0[i]
                    + 3 * (1 - t) ** 2 * t * c1[i]
                    + 3 * (1 - t) * t**2 * c2[i]
                    + t**3 * p3[i]
                    for i in range(2)
                )
            )
        p0 = p3
    nearest = min(((x - through[0]) ** 2 + (y - through[1]) ** 2) ** 0.5 for x, y in points)
    assert nearest < 0.01 * max(rx, ry, 1.0)


# --------------------------------------------------------------- textures visible on screens

MIN_SPREAD = 10.0  # standard deviation of grey levels inside a hatched swatch; a flat tint is ~0


def _swatch_scene() -> tuple[Scene, list[tuple[str, float, float, float, float]]]:
    """Return a small page holding only the legend's band swatches of the default style."""
    from dataclasses import replace

    from diagram.drawing.scene import Box, Rect

    full = drawing("claudicant-sfa").scene
    assert full is not None
    legend = [i for i in full.walk() if isinstance(i, Rect) and i.id.startswith("legend-swatch")]
    assert {r.band for r in legend} >= {"lt50", "50-74", "75-99"}
    placed, boxes = [], []
    for k, rect in enumerate(legend):
        x, y = 10.0 + k * 40.0, 10.0
        placed.append(replace(rect, x=x, y=y))
        assert rect.band is not None
        boxes.append((rect.band, x, y, rect.w, rect.h))
    page = Box(0, 0, 20 + 40 * len(legend), 30)
    scene = Scene("map", page.w, page.h, "mm", full.font_family, full.bands, tuple(placed),
                  page, page, (), ())  # fmt: skip
    return scene, boxes


def _spread(image: Image.Image, box: tuple[float, float, float, float], k: float) -> float:
    from PIL import ImageStat

    x, y, w, h = box
    inner = (round(x * k) + 2, round(y * k) + 2, round((x + w) * k) - 2, round((y + h) * k) - 2)
    return float(ImageStat.Stat(image.crop(inner)).stddev[0])


@pytest.mark.skipif(shutil.which("rsvg-convert") is None, reason="needs librsvg's rsvg-convert")
@pytest.mark.parametrize("dpi", [72, 96])
def test_every_hatched_band_keeps_its_texture_on_screen(dpi: int) -> None:
    from diagram.drawing.style import Hatch
    from diagram.output.svg import render_svg

    scene, boxes = _swatch_scene()
    svg = render_svg(scene)
    sheet = Drawing(results={}, scene=scene)
    rsvg = subprocess.run(
        ["rsvg-convert", "-d", str(dpi), "-p", str(dpi), "-b", "white"],
        input=svg.encode(), capture_output=True, check=True,
    ).stdout  # fmt: skip
    images = {
        "rsvg-convert": rsvg,
        "cairosvg": render_bytes(sheet, "png", ExportOptions(png_dpi=dpi, renderer="cairosvg")),
        "cairo": render_bytes(sheet, "png", ExportOptions(png_dpi=dpi)),
    }
    hatched = {b.id for b in scene.bands if b.hatch not in (Hatch.NONE, Hatch.SOLID)}
    for name, png in images.items():
        image = Image.open(io.BytesIO(png)).convert("L")
        for band, *box in boxes:
            if band in hatched:
                spread = _spread(image, (box[0], box[1], box[2], box[3]), dpi / 72)
                assert spread >= MIN_SPREAD, (name, band, dpi, spread)
