"""Width of a line of text in the shipped DejaVu Sans, from the font's own advance widths.

Advances are summed without kerning, which is what cairo does when it renders the sheet (the PDF
text advances equal these exactly), so labels are placed from the same numbers that draw them.
"""

from __future__ import annotations

import struct
import sys
from array import array
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
    """Read the advance table and line extents of one face (once per process).

    Only the four tables needed are read, straight from the file (OpenType specification,
    "head", "hhea", "hmtx" and the Unicode full-repertoire "cmap" subtable, format 12): a
    full font library costs more to import than the whole table takes to read.
    ``tests/test_textmetrics.py`` checks the result against fontTools' reading of the font.
    """
    data = (FONT_DIR / FONT_FILES[bold]).read_bytes()
    tables = _tables(data)
    head, hhea = tables["head"], tables["hhea"]
    (units_per_em,) = struct.unpack_from(">H", data, head + 18)
    ascent, descent = struct.unpack_from(">hh", data, hhea + 4)
    (metrics,) = struct.unpack_from(">H", data, hhea + 34)
    advances = array("H", data[tables["hmtx"] : tables["hmtx"] + 4 * metrics])
    if sys.byteorder == "little":
        advances.byteswap()
    # (advance, left side bearing) pairs; the glyphs after them take the last advance
    widths = advances[::2].tolist() + [advances[-2]] * 65536
    by_char: dict[int, int] = {}
    for first, last, glyph in _cmap12(data, tables["cmap"]):
        codes = range(first, last + 1)
        by_char.update(zip(codes, widths[glyph : glyph + len(codes)], strict=True))
    return _Face(by_char, widths[0], units_per_em, ascent, -descent)


def _tables(data: bytes) -> dict[str, int]:
    """Return the offset of each table of a TrueType file, by tag."""
    (count,) = struct.unpack_from(">H", data, 4)
    out = {}
    for i in range(count):
        tag, _checksum, offset, _length = struct.unpack_from(">4sIII", data, 12 + 16 * i)
        out[tag.decode("latin-1")] = offset
    return out


def _cmap12(data: bytes, cmap: int) -> list[tuple[int, int, int]]:
    """Return the (first code, last code, first glyph) groups of the Windows full-repertoire
    subtable (platform 3, encoding 10, format 12)."""
    (count,) = struct.unpack_from(">H", data, cmap + 2)
    for i in range(count):
        platform, encoding, offset = struct.unpack_from(">HHI", data, cmap + 4 + 8 * i)
        sub = cmap + offset
        if (platform, encoding) == (3, 10) and struct.unpack_from(">H", data, sub)[0] == 12:
            (groups,) = struct.unpack_from(">I", data, sub + 12)
            return [struct.unpack_from(">III", data, sub + 16 + 12 * g) for g in range(groups)]
    raise ValueError("the shipped font has no Unicode full-repertoire cmap subtable")


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
