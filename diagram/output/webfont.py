"""The shipped font carried inside an SVG: a subset as an ``@font-face`` data URL.

A browser that lacks DejaVu Sans would otherwise set the labels in its own default face (often a
serif) and every label would change width. The SVG therefore carries the glyphs it uses, per
weight, as WOFF (zlib only) in a ``<style>`` rule under the sheet's family name, followed by the
generic ``sans-serif`` for any renderer that ignores ``@font-face`` (CairoSVG and librsvg use
the installed face of that name). Every page carries the same subset, cut once per process: the
characters a sheet usually holds (ASCII, Latin-1, Latin Extended-A and the symbols the sheet
prints, about 15 kB of WOFF per weight), widened only for a page with characters outside it.
Subsets are deterministic (no timestamps, no hinting).
"""

from __future__ import annotations

import base64
import functools
import io

from diagram.output.fonts import FONT_DIR, FONT_FILES

# Name records kept: copyright, family, style, id, full name, version, PostScript name, and the
# licence with its address (the DejaVu licence asks the notice to travel with the font).
_NAME_IDS = (0, 1, 2, 3, 4, 5, 6, 13, 14)
BASE_CHARS = frozenset(
    "".join(chr(c) for c in (*range(0x20, 0x7F), *range(0xA0, 0x180)))
    + "\u2190\u2191\u2192\u2193\u2264\u2265\u2248\u2260\u00b7\u2013\u2014"
    + "\u2018\u2019\u201c\u201d\u2026\u2022\u0394\u2206"
)


@functools.lru_cache(maxsize=64)
def woff_subset(chars: str, bold: bool) -> bytes:
    """Return the shipped font (regular or bold) cut down to ``chars``, as WOFF."""
    from fontTools import subset
    from fontTools.ttLib import TTFont

    options = subset.Options()
    options.flavor = "woff"
    options.layout_features = []  # cairo applies no kerning or ligatures either
    options.hinting = False
    options.name_IDs = list(_NAME_IDS)
    options.recalc_timestamp = False
    options.notdef_outline = True
    # no kerning (kern, GPOS), ligatures or maths: cairo applies none; FFTM is an editor's stamp
    options.drop_tables = [*options.drop_tables, "FFTM", "GDEF", "GPOS", "GSUB", "MATH", "kern"]
    out = io.BytesIO()
    path = FONT_DIR / FONT_FILES[1 if bold else 0]
    with TTFont(path, lazy=True, recalcTimestamp=False) as font:  # bytes alike on every run
        subsetter = subset.Subsetter(options)
        subsetter.populate(text=chars)
        subsetter.subset(font)
        font.flavor = "woff"
        font.save(out)
    return out.getvalue()


def font_face_css(family: str, regular: set[str], bold: set[str]) -> str:
    """Return the ``@font-face`` rules carrying the glyphs of ``regular`` and ``bold`` text."""
    rules = []
    for weight, chars in (("normal", regular), ("bold", bold)):
        if not chars:
            continue
        wanted = BASE_CHARS if chars <= BASE_CHARS else BASE_CHARS | chars
        data = base64.b64encode(woff_subset("".join(sorted(wanted)), weight == "bold"))
        rules.append(
            f'@font-face{{font-family:"{family}";font-weight:{weight};font-style:normal;'
            f'src:url(data:font/woff;base64,{data.decode("ascii")}) format("woff")}}'
        )
    # Unhinted advances in browsers, as the layout measured them (Chromium rounds small text
    # otherwise, 2-3% narrower). Inside @supports, which CairoSVG skips: it would turn the
    # property into its best-antialias mode, which garbles its text at 72 dpi.
    rules.append(
        "@supports (text-rendering:geometricPrecision){text{text-rendering:geometricPrecision}}"
    )
    return "".join(rules)


def family_list(family: str) -> str:
    """Return the font-family value: the sheet's family, then the generic sans-serif."""
    return f"{family}, sans-serif"
