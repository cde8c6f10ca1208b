"""SVG rendering: deterministic text, valid XML, band patterns, and what the pixels show."""

from __future__ import annotations

import io
import itertools
import shutil
import subprocess
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
from PIL import Image
from test_layout import crowded, make_template

from diagram.drawing.layout import layout
from diagram.drawing.scene import Anchor, Box, Rect, Scene, Text, fmt
from diagram.drawing.style import SEVERITY_ORDER, default_style
from diagram.drawing.template.mapfile import Template
from diagram.drawing.textmetrics import text_width
from diagram.output.svg import clean_text, pattern_id, render_svg

SVG = "{http://www.w3.org/2000/svg}"


@pytest.fixture(scope="module")
def template() -> Template:
    return make_template()


@pytest.fixture(scope="module")
def scene(template: Template) -> Scene:
    return layout(crowded(), template, version="0.0.0")


@pytest.fixture(scope="module")
def svg(scene: Scene) -> str:
    return render_svg(scene)


# ----------------------------------------------------------------------------- text and numbers


@pytest.mark.parametrize(
    ("value", "text"),
    [
        (1.0, "1"),
        (1.5, "1.5"),
        (1.25, "1.25"),
        (1.005, "1"),  # two decimals at most (float 1.005 is just below the half)
        (1.006, "1.01"),
        (-0.001, "0"),  # no "-0"
        (0.0, "0"),
        (595.2755905511812, "595.28"),
        (-12.3, "-12.3"),
    ],
)
def test_fmt(value: float, text: str) -> None:
    assert fmt(value) == text


@pytest.mark.parametrize(
    ("raw", "clean"),
    [
        ("Demo\x00, Ada", "Demo, Ada"),
        ("line\nbreak\ttab\rcr", "line break tab cr"),
        ("bell\x07 esc\x1b del\x7f", "bell esc del"),
        ("<b>&amp;</b>", "<b>&amp;</b>"),  # kept: svgwrite escapes markup characters
        ("non-char\ufffe\uffff", "non-char"),
        ("Müller → ½", "Müller → ½"),
    ],
)
def test_clean_text(raw: str, clean: str) -> None:
    assert clean_text(raw) == clean


def test_hostile_patient_text_still_gives_well_formed_svg(template: Template) -> None:
    from dataclasses import replace

    a = crowded()
    patient = replace(a.study.patient, name='Evil <svg onload="x"> & \x01\x02 "name"')
    scene = layout(replace(a, study=replace(a.study, patient=patient)), template, version="x")
    root = ET.fromstring(render_svg(scene).encode())
    shown = [(t.text or "").strip() for t in root.iter() if t.tag in (f"{SVG}text", f"{SVG}tspan")]
    assert 'Evil <svg onload="x"> &  "name"' in shown  # the controls dropped, nothing else
    assert not list(root.iter(f"{SVG}script"))


# ----------------------------------------------------------------------------- the SVG document


def test_render_is_deterministic(template: Template) -> None:
    one = render_svg(layout(crowded(), template, version="0.0.0"))
    two = render_svg(layout(crowded(), template, version="0.0.0"))
    assert one.encode() == two.encode()


def test_svg_parses_and_states_its_page(svg: str, scene: Scene) -> None:
    root = ET.fromstring(svg.encode())
    assert root.tag == f"{SVG}svg"
    assert root.get("width") == "210mm" and root.get("height") == "297mm"  # ISO 216 A4
    assert root.get("viewBox") == "0 0 595.28 841.89"


def test_letter_page_is_stated_in_inches(template: Template) -> None:
    root = ET.fromstring(render_svg(layout(crowded(), template, page="letter", version="x")))
    assert (root.get("width"), root.get("height")) == ("8.5in", "11in")  # ANSI Letter


def test_every_band_has_a_pattern(svg: str, scene: Scene) -> None:
    root = ET.fromstring(svg.encode())
    patterns = {p.get("id"): p for p in root.iter(f"{SVG}pattern")}
    for band in scene.bands:
        pat = patterns[pattern_id(band.id)]
        assert pat.get("patternUnits") == "userSpaceOnUse"
        assert len(list(pat)) >= 1
    assert {pattern_id(b) for b in (*SEVERITY_ORDER, "not-assessed")} <= set(patterns)


def test_every_element_has_a_unique_explicit_id(svg: str) -> None:
    root = ET.fromstring(svg.encode())
    ids = [el.get("id") for el in root.iter() if el.tag not in (f"{SVG}svg", f"{SVG}defs")]
    assert None not in ids
    assert len(ids) == len(set(ids))
    assert not any(i.startswith("id") and i[2:].isdigit() for i in ids if i)  # no svgwrite ids


def test_only_the_shipped_font_family(svg: str) -> None:
    root = ET.fromstring(svg.encode())
    families = {el.get("font-family") for el in root.iter() if el.get("font-family")}
    assert families == {"DejaVu Sans, sans-serif"}


def test_no_hidden_text_carriers(svg: str) -> None:
    import re

    root = ET.fromstring(svg.encode())
    for tag in ("title", "desc", "metadata", "script", "foreignObject"):
        assert not list(root.iter(f"{SVG}{tag}")), tag
    assert "<!--" not in svg
    # the one style element carries the embedded font and nothing else
    (style,) = root.iter(f"{SVG}style")
    face = r'@font-face\{font-family:"DejaVu Sans";font-weight:(normal|bold);font-style:normal;'
    face += r'src:url\(data:font/woff;base64,[A-Za-z0-9+/=]+\) format\("woff"\)\}'
    precise = r"@supports \(text-rendering:geometricPrecision\)\{text\{text-rendering:geometricPrecision\}\}"
    assert re.fullmatch(f"(?:{face})+{precise}", style.text or ""), (style.text or "")[:200]


def test_numbers_have_at_most_two_decimals(svg: str) -> None:
    import re

    assert not re.search(r"\d\.\d{3,}", svg)


# ----------------------------------------------------------------------------- rendered pixels


def _png(svg: str, px_per_pt: float, width_pt: float) -> Image.Image:
    import cairosvg

    data = cairosvg.svg2png(
        bytestring=svg.encode(),
        output_width=round(width_pt * px_per_pt),
        background_color="white",
    )
    return Image.open(io.BytesIO(data)).convert("L")


def test_band_swatches_differ_in_greyscale(svg: str, scene: Scene) -> None:
    """Each swatch printed in grey must differ from every other by tone or by texture."""
    from PIL import ImageStat

    k = 8.0  # pixels per point
    image = _png(svg, k, scene.width_pt)
    stats: dict[str, tuple[float, float]] = {}
    for item in scene.walk():
        if isinstance(item, Rect) and item.id.startswith("legend-swatch") and item.band:
            inset = 1.5  # leave the outline out
            box = (
                round((item.x + inset) * k),
                round((item.y + inset) * k),
                round((item.x + item.w - inset) * k),
                round((item.y + item.h - inset) * k),
            )
            st = ImageStat.Stat(image.crop(box))
            stats[item.band] = (st.mean[0], st.stddev[0])
    # design margin, own choice (not a published figure): neighbouring bands at least 20 of
    # 255 grey levels apart on average, or 15 apart in texture (standard deviation)
    means = [stats[b][0] for b in SEVERITY_ORDER]
    for milder, worse in itertools.pairwise(means):
        assert milder - worse >= 20, stats
    bands = list(stats)
    for i, a in enumerate(bands):
        for b in bands[i + 1 :]:
            tone = abs(stats[a][0] - stats[b][0])
            texture = abs(stats[a][1] - stats[b][1])
            assert tone >= 20 or texture >= 15, (a, b, stats[a], stats[b])
    # not assessed must never read as a clean normal lumen: it carries a visible texture
    assert stats["not-assessed"][1] - stats["normal"][1] >= 15, stats


def _ink_columns(image: Image.Image) -> tuple[int, int]:
    bbox = image.point(lambda v: 255 if v < 128 else 0).getbbox()
    assert bbox is not None
    return bbox[0], bbox[2]


@pytest.mark.parametrize(
    ("text", "bold"),
    [("PSV 390 / EDV 40 / Vr 4.2", False), ("Occl. 6 cm → POP-BK", True), ("SFA-P 88", False)],
)
def test_text_width_matches_the_rendered_advance(text: str, bold: bool) -> None:
    """Set the text ending at x (cairo measures) and starting at x - text_width (we measure)."""
    size, x = 20.0, 380.0
    images = []
    for anchor, tx in ((Anchor.END, x), (Anchor.START, x - text_width(text, size, bold))):
        weight = "bold" if bold else "normal"
        item = Text("t", tx, 40, text, size, anchor=anchor)
        scene = Scene(
            "map",
            400,
            60,
            "mm",
            "DejaVu Sans",
            (),
            (
                Rect("bg", 0, 0, 400, 60, fill="#FFFFFF"),
                item
                if not bold
                else Text("t", tx, 40, text, size, weight=type(item.weight)(weight), anchor=anchor),
            ),
            Box(0, 0, 1, 1),
            Box(0, 0, 1, 1),
            (),
            (),
        )
        images.append(_png(render_svg(scene), 1.0, 400))
    (a0, a1), (b0, b1) = (_ink_columns(im) for im in images)
    assert abs(a0 - b0) <= 3 and abs(a1 - b1) <= 3  # PNG rounds glyph positions (libraries.md)


def test_text_width_sums_and_scales() -> None:
    assert text_width("PSV 390", 7) == pytest.approx(text_width("PSV", 7) + text_width(" 390", 7))
    assert text_width("SFA-M", 14) == pytest.approx(2 * text_width("SFA-M", 7))
    assert text_width("SFA-M", 7, bold=True) > text_width("SFA-M", 7)
    assert text_width("", 7) == 0
    assert text_width("WWW", 7) > text_width("iii", 7)


@pytest.mark.skipif(shutil.which("rsvg-convert") is None, reason="rsvg-convert not installed")
def test_rsvg_renders_the_sheet(svg: str, tmp_path: Path) -> None:
    src = tmp_path / "sheet.svg"
    src.write_text(svg, encoding="utf-8")
    out = tmp_path / "sheet.png"
    run = subprocess.run(
        ["rsvg-convert", "-o", str(out), str(src)], capture_output=True, timeout=60, check=False
    )
    assert run.returncode == 0, run.stderr
    assert run.stderr == b""
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def _rsvg_png(svg: str, width_px: int, tmp_path: Path) -> Image.Image:

    src = tmp_path / "sheet.svg"
    src.write_text(svg, encoding="utf-8")
    out = tmp_path / "rsvg.png"
    subprocess.run(
        ["rsvg-convert", "-w", str(width_px), "-b", "white", "-o", str(out), str(src)],
        check=True,
        timeout=60,
    )
    return Image.open(out).convert("L")


@pytest.mark.skipif(shutil.which("rsvg-convert") is None, reason="rsvg-convert not installed")
def test_cairosvg_and_rsvg_paint_the_same_graphics(svg: str, scene: Scene, tmp_path: Path) -> None:
    """Vessels, patterns, leaders and legend agree block by block between the two renderers."""
    import re

    from PIL import ImageChops

    graphics = re.sub(r"<text[^>]*>.*?</text>", "", svg)  # glyph hinting differs by design
    assert "<tspan" not in graphics and "<text" not in graphics
    width = round(scene.width_pt * 2)
    theirs, ours = _rsvg_png(graphics, width, tmp_path), _png(graphics, 2.0, scene.width_pt)
    h = min(theirs.height, ours.height)

    def blocks(im: Image.Image) -> Image.Image:  # 8 x 8 pixel averages: anti-aliasing evens out
        box = (0, 0, width, h)
        return im.crop(box).resize((width // 8, h // 8), Image.Resampling.BOX)

    diff = ImageChops.difference(blocks(theirs), blocks(ours))
    # measured: at most 3 grey levels apart; a sheet without its lesions differs by over 200
    _, high = diff.getextrema()
    assert isinstance(high, int | float) and high <= 12


@pytest.mark.skipif(shutil.which("rsvg-convert") is None, reason="rsvg-convert not installed")
def test_cairosvg_and_rsvg_set_the_text_in_the_same_place(scene: Scene, tmp_path: Path) -> None:
    from dataclasses import replace

    only_text = replace(
        scene,
        items=tuple(
            i for i in scene.items if i.id in ("page", "labels", "header", "footer", "caution")
        ),
    )
    svg = render_svg(only_text)
    width = round(scene.width_pt * 2)
    theirs, ours = _rsvg_png(svg, width, tmp_path), _png(svg, 2.0, scene.width_pt)
    for a, b in zip(_ink_rows(theirs), _ink_rows(ours), strict=True):
        assert abs(a - b) <= 3


def _ink_rows(image: Image.Image) -> tuple[int, int, int, int]:
    bbox = image.point(lambda v: 255 if v < 160 else 0).getbbox()
    assert bbox is not None
    return bbox


def test_busy_sheet_with_the_shipped_map_keeps_labels_apart(tmp_path: Path) -> None:
    """The crowded study on the shipped template (its time is in the stages benchmark)."""
    from diagram.drawing.template.mapfile import load_template

    shipped = load_template()
    a = crowded()
    render_svg(layout(a, shipped, version="x"))  # warm the font caches (metrics, embedded subset)
    scene = layout(a, shipped, version="0.0.0")
    text = render_svg(scene)
    ET.fromstring(text.encode())
    for i, p in enumerate(scene.label_boxes):
        assert not p.box.intersects(scene.vessel_box), p.text
        for q in scene.label_boxes[i + 1 :]:
            assert not p.box.intersects(q.box), (p.text, q.text)


def test_default_style_is_what_the_scene_carries(scene: Scene) -> None:
    style = default_style()
    assert scene.font_family == style.font_family
    by_id = {b.id: b for b in scene.bands}
    for band in style.bands:
        assert by_id[band.id].hatch == band.hatch
