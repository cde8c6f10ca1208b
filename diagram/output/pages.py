"""A sheet of several pages as one SVG or one PNG file: the pages stacked top to bottom.

A PDF (and the DICOM that wraps it) keeps real pages (``render.pdf_from_svgs``). An SVG or PNG
holds one picture, so a sheet whose tables continue on a second page is written as one tall
picture with the pages one under the other and a gap between them, which keeps one output file
per study in every format.
"""

from __future__ import annotations

import io
import re
from collections.abc import Sequence

GAP_PT = 24.0  # space between stacked pages, in the pages' own user units (points)

_ROOT = re.compile(r"<svg\b[^>]*>", re.S)
_ATTR = re.compile(r'\s(width|height|viewBox)="([^"]*)"')


def _root(svg: str) -> tuple[int, int, dict[str, str]]:
    match = _ROOT.search(svg)
    if match is None:
        raise ValueError("not an SVG document: no <svg> element")
    return match.start(), match.end(), dict(_ATTR.findall(match.group(0)))


def _unit(length: str) -> tuple[float, str]:
    m = re.fullmatch(r"\s*([0-9.]+)\s*([a-z%]*)\s*", length)
    if m is None:
        raise ValueError(f"cannot read the page length {length!r}")
    return float(m.group(1)), m.group(2)


def _prefix_ids(body: str, prefix: str) -> str:
    """Give every id (and every reference to one) a page prefix, so ids stay unique."""
    body = re.sub(r'\bid="([^"]+)"', rf'id="{prefix}\1"', body)
    body = re.sub(r"url\(#([^)]+)\)", rf"url(#{prefix}\1)", body)
    return re.sub(r'href="#([^"]+)"', rf'href="#{prefix}\1"', body)


def _fmt(value: float) -> str:
    text = f"{value:.2f}".rstrip("0").rstrip(".")
    return text or "0"


def stack_svgs(svgs: Sequence[str]) -> str:
    """Return one SVG document holding every page, stacked with a gap; one page as it is."""
    if len(svgs) == 1:
        return svgs[0]
    backs, pages = [], []
    y = width_pt = 0.0
    unit_per_pt, unit = 1.0, ""
    for k, svg in enumerate(svgs, start=1):
        _, end, attrs = _root(svg)
        _, _, w, h = (float(v) for v in attrs["viewBox"].split())
        width_len, unit = _unit(attrs["width"])
        unit_per_pt, width_pt = width_len / w, max(width_pt, w)
        box = f'x="0" y="{_fmt(y)}" width="{_fmt(w)}" height="{_fmt(h)}"'
        backs.append(f'<rect {box} fill="#FFFFFF"/>')
        inner = _prefix_ids(svg[end : svg.rindex("</svg>")], f"p{k}-")
        pages.append(f'<svg {box} viewBox="{attrs["viewBox"]}" overflow="hidden">{inner}</svg>')
        y += h + GAP_PT
    height_pt = y - GAP_PT
    head = (
        '<?xml version="1.0" encoding="utf-8" ?>\n'
        '<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink" '
        f'version="1.1" width="{_fmt(width_pt * unit_per_pt)}{unit}" '
        f'height="{_fmt(height_pt * unit_per_pt)}{unit}" '
        f'viewBox="0 0 {_fmt(width_pt)} {_fmt(height_pt)}">'
        f'<rect x="0" y="0" width="{_fmt(width_pt)}" height="{_fmt(height_pt)}" fill="#D8D8D8"/>'
    )
    return head + "".join(backs) + "".join(pages) + "</svg>\n"


def stack_pngs(pngs: Sequence[bytes], gap_px: int) -> bytes:
    """Return one PNG with every page image stacked, a grey gap between pages."""
    if len(pngs) == 1:
        return pngs[0]
    from PIL import Image

    images = [Image.open(io.BytesIO(p)).convert("RGB") for p in pngs]
    width = max(im.width for im in images)
    height = sum(im.height for im in images) + gap_px * (len(images) - 1)
    sheet = Image.new("RGB", (width, height), (216, 216, 216))
    y = 0
    for im in images:
        sheet.paste(im, (0, y))
        y += im.height + gap_px
    out = io.BytesIO()
    sheet.save(out, format="PNG", optimize=False)
    return out.getvalue()
