"""One line of text is one ``<text>`` in the SVG, its runs ``<tspan>``s that follow on.

A line whose weight or size changes is laid out as several runs, each placed where the one
before it ends plus the spaces between words. The SVG joins them into one ``<text>`` whose
``<tspan>``s carry no position of their own, so a viewer that substitutes another font changes
the line's length but never opens a gap inside it. Checked here: which runs join (a table with
its boundaries), the structure of the joined lines, and where two renderers nobody here wrote
(CairoSVG, librsvg's rsvg-convert) put each run, measured against the page painted by cairo.
"""

from __future__ import annotations

import io
import shutil
import subprocess
import xml.etree.ElementTree as ET
from dataclasses import replace
from functools import cache
from pathlib import Path

import pytest
from PIL import Image

from diagram.drawing.scene import Anchor, Group, Item, Scene, Text, Weight
from diagram.drawing.textmetrics import text_width
from diagram.output.export import Drawing, ExportOptions, render_bytes
from diagram.output.svg import render_svg
from diagram.pipeline import draw
from diagram.reading.load import load_study

ROOT = Path(__file__).resolve().parent.parent
SVG = "{http://www.w3.org/2000/svg}"
SPACE = "{http://www.w3.org/XML/1998/namespace}space"
DPI = 144.0
# Each run's ink in the renderer's image laid over cairo's: the shift that matches them best is
# at most 2.5 pt (CairoSVG and librsvg hint glyphs at 144 dpi, cairo here does not: measured at
# most 1.5 pt and 2.0 pt, as with one <text> per run). Searched within 6 pt either way.
PLACE_TOLERANCE_PT = 2.5
SEARCH_PT = 6.0


@cache
def page(stem: str, number: int) -> Scene:
    scene = draw(load_study(ROOT / "examples" / f"{stem}.yaml")).scene
    assert scene is not None
    return scene.pages()[number - 1]


def _space(size: float, bold: bool = False) -> float:
    return text_width(" ", size, bold)


def _run(x: float, text: str = "PSV", *, size: float = 8.0, bold: bool = False, y: float = 50.0,
         anchor: Anchor = Anchor.START) -> Text:  # fmt: skip
    return Text(f"r{x:.3f}", x, y, text, size, Weight.BOLD if bold else Weight.NORMAL, anchor)


def _lines(scene: Scene) -> list[ET.Element]:
    root = ET.fromstring(render_svg(scene).encode("utf-8"))
    return [t for t in root.iter(f"{SVG}text") if t.find(f"{SVG}tspan") is not None]


END = 10.0 + text_width("PSV", 8.0)  # where a first run "PSV" at x = 10 ends

JOINS = [
    # (second run, joined?) after "PSV" at x = 10, 8 pt regular
    (_run(END), True),  # no space between: a change of weight inside a word
    (_run(END + _space(8.0)), True),
    (_run(END + 2 * _space(8.0)), True),
    (_run(END + 5 * _space(8.0)), True),  # the header's fields, five spaces apart
    (_run(END + 6 * _space(8.0)), False),  # a column, not a following run
    (_run(END + _space(8.0) + 0.009), True),  # within 0.01 pt
    (_run(END + _space(8.0) + 0.011), False),
    (_run(END - 0.011), False),  # overlapping the run before
    (_run(END + _space(6.5), size=6.5), True),  # a leading space in the next run's own size
    (_run(END + _space(8.0, True), bold=True), True),  # a bold space begins a bold run
    (_run(END, y=50.001), False),  # another baseline
    (_run(END, anchor=Anchor.MIDDLE), False),
    (_run(END, anchor=Anchor.END), False),
]


@pytest.mark.parametrize(("second", "joined"), JOINS)
def test_a_run_joins_the_line_only_where_the_layout_put_it_after_the_one_before(
    second: Text, joined: bool
) -> None:
    from diagram.drawing.scene import Box

    first = _run(10.0)
    box = Box(0, 0, 200, 100)
    scene = Scene("map", 200, 100, "mm", "DejaVu Sans", (), (first, second), box, box, (), ())
    lines = _lines(scene)
    assert len(lines) == (1 if joined else 0)
    if joined:
        spans = lines[0].findall(f"{SVG}tspan")
        assert [s.get("id") for s in spans] == [first.id, second.id]
        # the spaces between the runs are written out, in the run whose font they were measured in
        content = "".join(s.text or "" for s in spans)
        assert content.replace(" ", "") == "PSVPSV"
        set_width = sum(
            text_width(s.text or "", float(s.get("font-size", "0")), s.get("font-weight") == "bold")
            for s in spans
        )
        assert set_width == pytest.approx(second.x + text_width("PSV", second.size,
                                          second.weight is Weight.BOLD) - first.x, abs=0.011)  # fmt: skip


def _texts(items: tuple[Item, ...]) -> list[Text]:
    out: list[Text] = []
    for item in items:
        if isinstance(item, Group):
            out += _texts(item.items)
        elif isinstance(item, Text):
            out.append(item)
    return out


@pytest.mark.parametrize(("stem", "number"), [("stent-and-graft", 1), ("stent-and-graft", 2),
                                              ("clti-multilevel", 1)])  # fmt: skip
def test_each_joined_line_is_one_text_whose_tspans_follow_on(stem: str, number: int) -> None:
    scene = page(stem, number)
    by_id = {t.id: t for t in _texts(scene.items)}
    lines = _lines(scene)
    assert len(lines) >= 5  # the header's rows, the tables' mixed lines
    root = ET.fromstring(render_svg(scene).encode("utf-8"))
    written = [el.get("id") for el in root.iter() if el.tag in (f"{SVG}text", f"{SVG}tspan")]
    runs = [i for i in written if i in by_id]
    assert sorted(runs) == sorted(by_id)  # every run written once, as a text or a tspan
    for line in lines:
        spans = line.findall(f"{SVG}tspan")
        assert len(spans) >= 2 and line.get(SPACE) == "preserve"
        assert not any(s.get(a) for s in spans for a in ("x", "y", "dx", "dy"))
        first = by_id[str(spans[0].get("id"))]
        assert (line.get("x"), line.get("y")) == (f"{first.x:.2f}".rstrip("0").rstrip("."),
                                                  f"{first.y:.2f}".rstrip("0").rstrip("."))  # fmt: skip
        x = first.x
        for span in spans:  # each run starts where the written text before it ends
            run = by_id[str(span.get("id"))]
            text = span.text or ""
            lead = len(text) - len(text.lstrip(" "))
            bold = run.weight is Weight.BOLD
            assert text.strip(" ") == run.text
            assert x + lead * _space(run.size, bold) == pytest.approx(run.x, abs=0.011)
            x += text_width(text, run.size, bold)


# --- where the renderers put each run --------------------------------------------------------

PALETTE = ((220, 0, 0), (0, 150, 0), (0, 0, 220), (200, 0, 200), (220, 120, 0), (0, 150, 150))


def _coloured(scene: Scene) -> tuple[Scene, list[list[Text]]]:
    """Return the page with each joined line's runs in turn painted in the palette's colours."""
    colour: dict[str, str] = {}
    lines = []
    by_id = {t.id: t for t in _texts(scene.items)}
    for line in _lines(scene):
        runs = [by_id[str(s.get("id"))] for s in line.findall(f"{SVG}tspan")]
        for k, run in enumerate(runs):
            colour[run.id] = "#{:02X}{:02X}{:02X}".format(*PALETTE[k % len(PALETTE)])
        lines.append(runs)

    def paint(items: tuple[Item, ...]) -> tuple[Item, ...]:
        out: list[Item] = []
        for item in items:
            if isinstance(item, Group):
                out.append(replace(item, items=paint(item.items)))
            elif isinstance(item, Text) and item.id in colour:
                out.append(replace(item, fill=colour[item.id]))
            else:
                out.append(item)
        return tuple(out)

    painted = replace(scene, items=paint(scene.items), more=())
    return painted, [[replace(r, fill=colour[r.id]) for r in runs] for runs in lines]


def _profile(image: Image.Image, run: Text, k: int) -> list[int]:
    """Return, column by column, how many pixels of run ``k``'s colour its ink has: from 5 pt
    before its place (2 pt for a line's first run: a band chip may stand 3 pt before it) to
    5 pt after its end, from half its size above the baseline down to it."""
    scale = DPI / 72.0
    end = run.x + text_width(run.text, run.size, run.weight is Weight.BOLD)
    x0, x1 = int((run.x - (5 if k else 2)) * scale), int((end + 5) * scale)
    y0, y1 = int((run.y - 0.5 * run.size) * scale), int(run.y * scale)
    target = PALETTE[k % len(PALETTE)]
    pixels = image.load()
    assert pixels is not None
    counts = []
    for px in range(x0, x1):
        count = 0
        for py in range(y0, y1):
            r, g, b = pixels[px, py][:3]
            near = min(PALETTE, key=lambda c: (c[0] - r) ** 2 + (c[1] - g) ** 2 + (c[2] - b) ** 2)
            count += near == target and max(r, g, b) - min(r, g, b) > 90
        counts.append(count)
    return counts


def _offset(want: list[int], got: list[int]) -> float:
    """Return the shift (pt) that best lays ``got``'s ink over ``want``'s (glyph outlines and
    hinting differ between renderers; the ink as a whole moves with the run's place)."""
    reach = round(SEARCH_PT * DPI / 72.0)

    def overlap(shift: int) -> int:
        return sum(w * got[i + shift] for i, w in enumerate(want) if 0 <= i + shift < len(got))

    best = max(range(-reach, reach + 1), key=lambda shift: (overlap(shift), -abs(shift)))
    return best * 72.0 / DPI


def _rsvg(svg: str) -> bytes:
    return subprocess.run(
        ["rsvg-convert", "-d", str(DPI), "-p", str(DPI), "-b", "white"],
        input=svg.encode("utf-8"), capture_output=True, check=True, timeout=120,
    ).stdout  # fmt: skip


RENDERERS = ["cairosvg", "rsvg-convert"]


@pytest.mark.parametrize("renderer", RENDERERS)
def test_every_run_of_a_joined_line_is_drawn_where_the_layout_put_it(renderer: str) -> None:
    if renderer == "rsvg-convert" and shutil.which("rsvg-convert") is None:
        pytest.skip("needs librsvg's rsvg-convert")
    scene, lines = _coloured(page("stent-and-graft", 2))
    sheet = Drawing(results={}, scene=scene)
    reference = Image.open(io.BytesIO(render_bytes(sheet, "png", ExportOptions(png_dpi=DPI))))
    if renderer == "cairosvg":
        png = render_bytes(sheet, "png", ExportOptions(png_dpi=DPI, renderer="cairosvg"))
    else:
        png = _rsvg(render_svg(scene))
    image = Image.open(io.BytesIO(png)).convert("RGB")
    reference = reference.convert("RGB")
    assert image.size == reference.size
    worst = 0.0
    measured = 0
    for line in lines:
        for k, run in enumerate(line):
            want = _profile(reference, run, k)
            if sum(want) < 10:
                continue  # punctuation only ("·"): too little ink of its own to place
            got = _profile(image, run, k)
            assert sum(got) >= 10, (renderer, run.id, run.text)
            off = abs(_offset(want, got))
            worst = max(worst, off)
            assert off <= PLACE_TOLERANCE_PT, (renderer, run.id, run.text, off)
            measured += 1
    print(f"{renderer}: {measured} runs placed, the farthest {worst:.2f} pt from cairo's")
    assert measured >= 40, measured  # page 2 of the example holds dozens of mixed lines
