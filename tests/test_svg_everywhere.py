"""The SVG looks the same outside our renderer: the font travels inside it.

Checked with tools nobody here wrote: fontTools reads the embedded WOFF back, and Debian's
headless Chromium, with a fontconfig that holds no DejaVu at all, sets every label within 2% of
the width the layout measured with the shipped font.
"""

from __future__ import annotations

import base64
import html
import io
import json
import os
import re
import shutil
import subprocess
from functools import cache
from pathlib import Path

import pytest

from diagram.drawing.scene import Scene, Text, Weight
from diagram.drawing.textmetrics import text_width
from diagram.output.svg import render_svg
from diagram.pipeline import draw
from diagram.reading.load import load_study

ROOT = Path(__file__).resolve().parent.parent
FACE = re.compile(r'@font-face\{font-family:"([^"]+)";font-weight:(\w+);.*?base64,([^)]+)\)')
WIDTH_TOLERANCE = 0.02  # the bound: within 2% of the design width


@cache
def page_one(stem: str) -> Scene:
    scene = draw(load_study(ROOT / "examples" / f"{stem}.yaml")).scene
    assert scene is not None
    return scene


def test_svg_carries_a_deterministic_subset_of_the_shipped_font_per_weight() -> None:
    from fontTools.ttLib import TTFont

    scene = page_one("clti-multilevel")
    svg = render_svg(scene)
    assert svg == render_svg(scene)
    faces = FACE.findall(svg)
    assert [(family, weight) for family, weight, _ in faces] == [
        ("DejaVu Sans", "normal"),
        ("DejaVu Sans", "bold"),
    ]
    assert 'font-family="DejaVu Sans, sans-serif"' in svg
    used = {c for item in scene.walk() if isinstance(item, Text) for c in item.text}
    for _, weight, data in faces:
        font = TTFont(io.BytesIO(base64.b64decode(data)))
        assert font.flavor == "woff"
        names = {r.nameID: r.toUnicode() for r in font["name"].names}
        assert names[1] == "DejaVu Sans"
        assert names[2] == ("Bold" if weight == "bold" else "Book")
        assert "Bitstream" in names[0] and 13 in names  # the copyright and licence travel along
        cmap = font.getBestCmap()
        assert {ord(c) for c in used if not c.isspace()} <= set(cmap)
        assert len(cmap) < 800  # a subset, not the whole font (about 6,000 characters)


def test_characters_outside_the_base_subset_are_added() -> None:
    from dataclasses import replace

    from fontTools.ttLib import TTFont

    from diagram.drawing.scene import Box

    whole = Box(0, 0, 100, 40)
    label = Text("t", 5, 20, "Ωmega ŋ ǅ", 9.0)
    scene = Scene("map", 100, 40, "mm", "DejaVu Sans", (), (label,), whole, whole, (), ())
    (_, _, data), *_ = FACE.findall(render_svg(scene))
    cmap = TTFont(io.BytesIO(base64.b64decode(data))).getBestCmap()
    assert {ord(c) for c in "Ωŋǅ"} <= set(cmap)
    plain = replace(scene, items=(replace(label, text="plain"),))
    (_, _, base), *_ = FACE.findall(render_svg(plain))
    assert ord("Ω") not in TTFont(io.BytesIO(base64.b64decode(base))).getBestCmap()


CHROMIUM = shutil.which("chromium")
PAGE = """<!doctype html><html><body>{svg}<pre id="out"></pre><script>
document.fonts.ready.then(() => {{
  const rows = [];
  for (const t of document.querySelectorAll("svg text, svg tspan")) {{
    if (t.querySelector("tspan")) continue;  // a line of runs: each run is measured
    const lead = t.textContent.length - t.textContent.trimStart().length;
    const x = t.getNumberOfChars() > lead ? t.getStartPositionOfChar(lead).x : 0;
    rows.push([t.id, t.getComputedTextLength(), x, t.textContent]);
  }}
  document.getElementById("out").textContent = JSON.stringify(rows);
}});
</script></body></html>"""
NO_DEJAVU = """<?xml version="1.0"?>
<!DOCTYPE fontconfig SYSTEM "urn:fontconfig:fonts.dtd">
<fontconfig><dir>{fonts}</dir><cachedir>{cache}</cachedir></fontconfig>
"""


def _chromium_widths(svg: str, tmp: Path) -> dict[str, tuple[float, float, str]]:
    """Return each run's width, where its first glyph starts and its text with the spaces
    written around it, as headless Chromium sets them with no DejaVu installed (a run is a
    <text> of its own or a <tspan> of a line)."""
    fonts = tmp / "fonts"
    fonts.mkdir()
    for other in Path("/usr/share/fonts").rglob("LiberationSerif-Regular.ttf"):
        shutil.copy(other, fonts)  # a face to fall back to that is not DejaVu
    conf = tmp / "fonts.conf"
    conf.write_text(NO_DEJAVU.format(fonts=fonts, cache=tmp / "cache"), encoding="utf-8")
    page = tmp / "page.html"
    page.write_text(PAGE.format(svg=svg.split("?>", 1)[1]), encoding="utf-8")
    env = {**os.environ, "FONTCONFIG_FILE": str(conf), "HOME": str(tmp)}
    flags = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
             "--disable-background-networking", "--disable-component-update", "--disable-sync",
             f"--user-data-dir={tmp / 'profile'}", "--virtual-time-budget=5000"]  # fmt: skip
    assert CHROMIUM is not None
    done = subprocess.run(
        [CHROMIUM, *flags, "--dump-dom", page.as_uri()],
        capture_output=True, text=True, env=env, timeout=180,
    )  # fmt: skip
    found = re.search(r'<pre id="out">(.*?)</pre>', done.stdout, re.S)
    assert found and found.group(1), done.stderr[-2000:]
    rows = json.loads(html.unescape(found.group(1)))  # the DOM is dumped as HTML
    return {name: (float(width), float(x), str(text)) for name, width, x, text in rows}


@pytest.mark.skipif(CHROMIUM is None, reason="needs Debian's chromium")
def test_chromium_without_dejavu_sets_labels_at_the_design_width(tmp_path: Path) -> None:
    scene = page_one("clti-multilevel")
    runs = _chromium_widths(render_svg(scene), tmp_path)
    texts = [i for i in scene.walk() if isinstance(i, Text) and i.text.strip()]
    assert len(texts) > 80 and {t.id for t in texts} <= set(runs)
    following = 0
    for item in texts:
        width, x, written = runs[item.id]
        assert written.strip(" ") == item.text
        # a run of a line also holds the spaces written around it, in its own font
        design = text_width(written, item.size, item.weight is Weight.BOLD)
        assert abs(width - design) <= WIDTH_TOLERANCE * design + 0.05, (
            item.text, width, design,
        )  # fmt: skip
        if item.anchor.value == "start":  # its first glyph where the layout put it
            assert abs(x - item.x) <= 0.05 + WIDTH_TOLERANCE * max(0.0, item.x - 28), (
                item.id, item.text, x, item.x,
            )  # fmt: skip
            following += written.startswith(" ")
    assert following >= 10  # the header's fields and the tables' mixed lines were measured
