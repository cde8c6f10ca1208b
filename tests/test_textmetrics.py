"""The advance table read straight from the shipped font equals fontTools' reading of it.

fontTools (a library nobody here wrote) is the reference for the OpenType tables.
"""

from __future__ import annotations

import pytest
from fontTools.ttLib import TTFont

from diagram.drawing import textmetrics
from diagram.drawing.textmetrics import FONT_DIR, FONT_FILES


@pytest.mark.parametrize("bold", [False, True])
def test_face_equals_fonttools_reading(bold: bool) -> None:
    face = textmetrics._face(bold)
    with TTFont(str(FONT_DIR / FONT_FILES[bold]), lazy=True) as font:
        hmtx = font["hmtx"]
        expected = {code: hmtx[glyph][0] for code, glyph in font.getBestCmap().items()}
        assert face.by_char == expected
        assert len(expected) > 5000  # the whole repertoire, not the Latin part only
        assert face.missing == hmtx[".notdef"][0]
        assert face.units_per_em == font["head"].unitsPerEm == 2048
        assert (face.ascent, face.descent) == (font["hhea"].ascent, -font["hhea"].descent)


@pytest.mark.parametrize(
    ("text", "bold", "units"),
    [
        ("SFA", False, 1300 + 1178 + 1401),  # advances of S, F, A in DejaVu Sans (fontTools)
        ("", False, 0),
    ],
)
def test_width_is_the_sum_of_advances(text: str, bold: bool, units: int) -> None:
    assert textmetrics.text_width(text, 2048.0, bold) == pytest.approx(units)
