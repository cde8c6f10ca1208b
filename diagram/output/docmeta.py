"""What an output file says about itself: a PDF's dates, a PNG's resolution.

A PDF's creation and modification dates come from ``SOURCE_DATE_EPOCH`` when it is set (the
reproducible-builds convention, https://reproducible-builds.org/specs/source-date-epoch/): the
same study then gives the same bytes on every run. A PNG records its resolution in a ``pHYs``
chunk (PNG specification, W3C 2003, section 11.3.5.3: pixels per metre, unit 1), so a viewer
or printer sizes it as drawn.
"""

from __future__ import annotations

import datetime as dt
import os
import struct
import zlib

from diagram.errors import ExportError

EPOCH_VARIABLE = "SOURCE_DATE_EPOCH"
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
METRES_PER_INCH = 0.0254  # exact by definition (1959 international inch)


def fixed_date() -> str | None:
    """Return the date every PDF states (ISO 8601, UTC) from ``SOURCE_DATE_EPOCH``, or None.

    The specification asks a tool to stop on a malformed value rather than guess: a value that
    is not a whole number of seconds since 1970 is refused in one line.
    """
    raw = os.environ.get(EPOCH_VARIABLE)
    if raw is None or raw == "":
        return None
    if not raw.isascii() or not raw.isdigit() or len(raw) > 11:
        raise ExportError(
            f"{EPOCH_VARIABLE}={raw[:40]!r}: must be a whole number of seconds since "
            "1970-01-01 UTC (e.g. 1767225600); unset it to date files by the clock."
        )
    when = dt.datetime.fromtimestamp(int(raw), tz=dt.UTC)
    if when.year > 9999:
        raise ExportError(f"{EPOCH_VARIABLE}={raw}: lies after the year 9999.")
    return when.strftime("%Y-%m-%dT%H:%M:%S+00:00")


def pdf_dates_prefixed(pdf: bytes, date: str) -> bytes:
    """Return the PDF with the dates cairo wrote from ``date`` in the PDF form ``D:…Z``.

    cairo 1.16 writes a date it is given without the ``D:`` prefix PDF 1.7 (7.9.4) asks for, as
    ``(YYYYMMDDHHmmSS+00'00)``. The same bytes are rewritten in place as ``(D:YYYYMMDDHHmmSSZ)``
    and a space, one byte fewer each, so every offset in the cross-reference table still holds.
    A cairo that writes the prefix itself leaves nothing to rewrite.
    """
    digits = date[:19].replace("-", "").replace("T", "").replace(":", "").encode("ascii")
    for key in (b"/CreationDate", b"/ModDate"):
        old = key + b" (" + digits + b"+00'00)"
        new = key + b" (D:" + digits + b"Z)"
        if pdf.count(old) == 1:
            pdf = pdf.replace(old, new + b" " * (len(old) - len(new)))
    return pdf


def _chunk(kind: bytes, data: bytes) -> bytes:
    crc = zlib.crc32(kind + data) & 0xFFFFFFFF
    return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", crc)


def png_with_dpi(png: bytes, dpi: float) -> bytes:
    """Return the PNG with one ``pHYs`` chunk for ``dpi`` after IHDR (any old one dropped)."""
    if not png.startswith(PNG_SIGNATURE):
        raise ValueError("not a PNG")
    per_metre = round(dpi / METRES_PER_INCH)
    phys = _chunk(b"pHYs", struct.pack(">IIB", per_metre, per_metre, 1))
    out = [PNG_SIGNATURE]
    pos = len(PNG_SIGNATURE)
    while pos < len(png):
        (length,) = struct.unpack(">I", png[pos : pos + 4])
        kind = png[pos + 4 : pos + 8]
        end = pos + 12 + length
        if kind != b"pHYs":
            out.append(png[pos:end])
        if kind == b"IHDR":
            out.append(phys)
        pos = end
    return b"".join(out)
