"""Width of a line of text in the shipped DejaVu Sans, from the font's own advance widths.

Advances are summed without kerning, which is what cairo does when it renders the sheet (the PDF
text advances equal these exactly), so labels are placed from the same numbers that draw them.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

FONT_DIR = Path(__file__).parent.parent / "fonts"
FONT_FILES = {False: "DejaVuSans.ttf", True: "DejaVuSans-Bold.ttf"}


@dataclass(frozen=True)
class _Face:
    by_char: dict[int, int]  # advance width by code point, font units
    missing: int  # advance of the glyph drawn for a character the font lacks
    units_per_em: int
    ascent: int
    descent: int  # positive, below the baseline


@lru_cache(maxsize=2)
def _face(bold: bool) -> _Face:
    """Read the advance table and line extents of one face (once per process)."""
    from fontTools.ttLib import TTFont

    font = TTFont(str(FONT_DIR / FONT_FILES[bold]), lazy=True)
    try:
        hmtx = font["hmtx"]
        by_char = {code: hmtx[glyph][0] for code, glyph in font.getBestCmap().items()}
        hhea = font["hhea"]
        return _Face(
            by_char=by_char,
            missing=hmtx[".notdef"][0],
            units_per_em=int(font["head"].unitsPerEm),
            ascent=int(hhea.ascent),
            descent=-int(hhea.descent),
        )
    finally:
        font.close()


def text_width(text: str, size_pt: float, bold: bool = False) -> float:
    """Return the advance width of ``text`` set at ``size_pt``, in points."""
    face = _face(bold)
    units = sum(face.by_char.get(ord(ch), face.missing) for ch in text)
    return units * size_pt / face.units_per_em


def line_extents(size_pt: float, bold: bool = False) -> tuple[float, float]:
    """Return (ascent, descent) of a line set at ``size_pt``, in points, both positive."""
    face = _face(bold)
    return face.ascent * size_pt / face.units_per_em, face.descent * size_pt / face.units_per_em


def wrap(text: str, size_pt: float, max_width_pt: float, bold: bool = False) -> tuple[str, ...]:
    """Return ``text`` broken at spaces into lines no wider than ``max_width_pt`` where possible."""
    lines: list[str] = []
    current = ""
    for word in text.split():
        trial = f"{current} {word}" if current else word
        if current and text_width(trial, size_pt, bold) > max_width_pt:
            lines.append(current)
            current = word
        else:
            current = trial
    if current:
        lines.append(current)
    return tuple(lines)


def ellipsize(text: str, size_pt: float, max_width_pt: float, bold: bool = False) -> str:
    """Return ``text`` cut with an ellipsis so that it fits ``max_width_pt``."""
    if text_width(text, size_pt, bold) <= max_width_pt:
        return text
    room = max_width_pt - text_width("…", size_pt, bold)
    used = 0.0
    for i, ch in enumerate(text):
        used += text_width(ch, size_pt, bold)
        if used > room:
            return text[:i].rstrip() + "…"
    return text
