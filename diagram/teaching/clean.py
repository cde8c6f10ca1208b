"""Teaching outputs without document metadata: SVG from an allow-list, PDF with an Info
dictionary of one fixed title, PNG without ancillary text chunks, DICOM per the basic
confidentiality profile.

Each cleaner refuses (:class:`CleanError`) rather than guesses when a document is not shaped as
expected: an unknown attribute value in the SVG, an incremental update or an XMP packet in the
PDF, a bad chunk checksum in the PNG. Document facts: /work/shared/reference/standards.md.
"""

from __future__ import annotations

import io
import re
import struct
import zlib
from collections.abc import Mapping
from xml.etree.ElementTree import Element, ParseError
from xml.sax.saxutils import escape, quoteattr

from diagram.teaching.categories import Category

_SVG_NS = "{http://www.w3.org/2000/svg}"
_XML_SPACE = "{http://www.w3.org/XML/1998/namespace}space"
_NUM = r"-?(?:\d+(?:\.\d*)?|\.\d+)(?:e-?\d+)?"
_LENGTH = rf"{_NUM}(?:mm|cm|in|pt|px|%)?"
_COLOUR = r"none|currentColor|#[0-9a-fA-F]{3,8}|[a-z]{3,20}"
_FN = rf"(?:rotate|scale|translate|matrix|skewX|skewY)\(\s*{_NUM}(?:[\s,]+{_NUM}){{0,5}}\s*\)"

# Every attribute a teaching SVG may carry, with the form its value must have. Ids are not on
# the list: pattern ids are renumbered and every other id dropped (ids are made from content).
_ATTRS: Mapping[str, str] = {
    **dict.fromkeys(("x", "y", "cx", "cy", "r", "rx", "ry", "x1", "y1", "x2", "y2"), _NUM),
    **dict.fromkeys(("width", "height", "font-size"), _LENGTH),
    **dict.fromkeys(("stroke-width", "stroke-miterlimit"), _NUM),
    **dict.fromkeys(("opacity", "fill-opacity", "stroke-opacity"), _NUM),
    "points": r"[\d\s.,\-e]*",
    "d": r"[MmLlHhVvCcSsQqTtAaZz\d\s.,\-e]*",
    "fill": rf"{_COLOUR}|url\(#[A-Za-z][\w\-]*\)",
    "stroke": rf"{_COLOUR}|url\(#[A-Za-z][\w\-]*\)",
    "stroke-dasharray": rf"none|{_NUM}(?:[\s,]+{_NUM})*",
    "stroke-linecap": "butt|round|square",
    "stroke-linejoin": "miter|round|bevel",
    "fill-rule": "nonzero|evenodd",
    "font-weight": "normal|bold|[1-9]00",
    "font-style": "normal|italic",
    "font-family": r"[A-Za-z][A-Za-z0-9 ,'\-]{0,80}",
    "text-anchor": "start|middle|end",
    "dominant-baseline": "auto|middle|central|hanging|alphabetic",
    "transform": rf"(?:{_FN}\s*)+",
    "patternTransform": rf"(?:{_FN}\s*)+",
    "patternUnits": "userSpaceOnUse|objectBoundingBox",
    "patternContentUnits": "userSpaceOnUse|objectBoundingBox",
    "viewBox": rf"{_NUM}(?:[\s,]+{_NUM}){{3}}",
    "version": r"1\.1",
    "xml:space": "preserve|default",  # a line of text keeps the spaces between its runs
}
_FORMS = {name: re.compile(form) for name, form in _ATTRS.items()}
# drawing elements kept; anything else (title, desc, metadata, foreign content) is dropped
_ELEMENTS = frozenset(
    (
        "svg",
        "g",
        "defs",
        "pattern",
        "rect",
        "circle",
        "ellipse",
        "line",
        "polyline",
        "polygon",
        "path",
        "text",
        "tspan",
    )
)
_TEXT_ELEMENTS = frozenset(("text", "tspan"))
_URL = re.compile(r"url\(#([A-Za-z][\w\-]*)\)")


class CleanError(Exception):
    """A document that cannot be cleaned with certainty; the case is not written."""

    def __init__(self, output: str, detail: str) -> None:
        super().__init__(f"{output}: {detail}")
        self.output = output
        self.category = Category.METADATA
        self.detail = detail


def clean_svg(svg: str) -> str:
    """Return the SVG rebuilt from the allow-list: known elements and attributes only.

    Comments, processing instructions, ``<title>``, ``<desc>``, ``<metadata>``, ids, classes and
    data attributes are left behind. A kept attribute whose value is not of its form is refused.
    """
    import defusedxml.ElementTree as DET

    try:
        root = DET.fromstring(svg.encode("utf-8"), forbid_dtd=True)
    except (ParseError, ValueError) as exc:  # defusedxml's refusals are ValueErrors
        raise CleanError(
            "svg", f"the drawing is not well-formed XML ({type(exc).__name__})"
        ) from None
    if root.tag != f"{_SVG_NS}svg":
        raise CleanError("svg", "the drawing's root is not an SVG element")
    ids: dict[str, str] = {}
    for el in root.iter(f"{_SVG_NS}pattern"):
        old = el.get("id")
        if old:
            ids[old] = f"p{len(ids) + 1}"
    out: list[str] = ['<?xml version="1.0" encoding="utf-8"?>\n']
    _write(root, ids, out)
    out.append("\n")
    return "".join(out)


def _write(el: Element, ids: Mapping[str, str], out: list[str]) -> None:
    tag = el.tag[len(_SVG_NS) :] if el.tag.startswith(_SVG_NS) else ""
    if tag not in _ELEMENTS:
        return
    attrs: dict[str, str] = {}
    if tag == "svg":
        attrs["xmlns"] = "http://www.w3.org/2000/svg"
    if tag == "pattern" and el.get("id") in ids:
        attrs["id"] = ids[el.get("id", "")]
    for name, value in el.attrib.items():
        if name == _XML_SPACE:
            name = "xml:space"
        form = _FORMS.get(name)
        if form is None:
            continue  # not on the list: ids, classes, data-*, namespaced attributes
        if not form.fullmatch(value.strip()):
            raise CleanError("svg", f"the attribute {name!r} of a <{tag}> is not of its form")
        ref = _URL.fullmatch(value.strip())
        if ref:
            if ref.group(1) not in ids:
                raise CleanError("svg", f"a <{tag}> refers to an element that is not kept")
            value = f"url(#{ids[ref.group(1)]})"
        attrs[name] = value.strip()
    out.append(f"<{tag}")
    out.extend(f" {k}={quoteattr(v)}" for k, v in sorted(attrs.items()))
    out.append(">")
    if tag in _TEXT_ELEMENTS and el.text:
        out.append(escape(el.text))
    for child in el:
        _write(child, ids, out)
        if tag in _TEXT_ELEMENTS and child.tail:
            out.append(escape(child.tail))
    out.append(f"</{tag}>")


# --- PDF ---------------------------------------------------------------------------------------

_TRAILER = re.compile(rb"trailer\s*<<(?P<body>.*?)>>\s*startxref\s*\d+\s*%%EOF\s*$", re.S)
_INFO_REF = re.compile(rb"/Info\s+(\d+)\s+(\d+)\s+R")


def pdf_title_entry(title: str) -> bytes:
    """Return ``/Title <…>``: the title as UTF-16BE with its byte-order mark, in hex (PDF 1.7,
    7.9.2.2), the form cairo writes."""
    return b"/Title <" + ("\ufeff" + title).encode("utf-16-be").hex().upper().encode() + b">"


def strip_pdf_info(pdf: bytes, *, title: str | None = None) -> bytes:
    """Return the PDF with its Info dictionary (cairo's /Producer, /Title, dates) emptied.

    The dictionary's bytes are overwritten in place by an empty dictionary padded with spaces,
    and the trailer's /Info entry by spaces, so that every offset in the cross-reference table
    still holds: nothing else in the file is rewritten. With ``title`` the dictionary keeps that
    one entry (a fixed title that names nobody) and the trailer its /Info entry; a dictionary
    too short to hold it is refused. A PDF with an XMP packet, a cross-reference stream or an
    incremental update is refused, not guessed at.
    """
    for marker, what in (
        (b"/Metadata", "an XMP metadata stream"),
        (b"/XRef", "a cross-reference stream"),
        (b"/ObjStm", "compressed objects"),
        (b"/Prev", "an incremental update"),
    ):
        if marker in pdf:
            raise CleanError("pdf", f"the PDF holds {what}; its metadata cannot be removed safely")
    if pdf.count(b"trailer") != 1 or pdf.count(b"startxref") != 1:
        raise CleanError("pdf", "the PDF does not have exactly one trailer")
    trailer = _TRAILER.search(pdf)
    if trailer is None:
        raise CleanError("pdf", "the PDF's trailer is not where a PDF ends")
    ref = _INFO_REF.search(trailer.group("body"))
    if ref is None:
        return pdf  # no Info dictionary: nothing to remove
    head = b"\n" + ref.group(1) + b" " + ref.group(2) + b" obj"
    if pdf.count(head) != 1:
        raise CleanError("pdf", "the PDF's Info object is not found exactly once")
    start = pdf.index(head) + len(head)
    end = pdf.index(b"endobj", start)
    body = pdf[start:end]
    first, last = body.index(b"<<") if b"<<" in body else -1, body.rstrip().rfind(b">>")
    if first < 0 or last < first or body[:first].strip() or b"stream" in body:
        raise CleanError("pdf", "the PDF's Info object is not a plain dictionary")
    span = last + 2 - first
    kept = b"<< " + pdf_title_entry(title) + b" >>" if title is not None else b"<<>>"
    if len(kept) > span:
        raise CleanError("pdf", "the PDF's Info dictionary has no room for the fixed title")
    out = bytearray(pdf)
    out[start + first : start + first + span] = kept + b" " * (span - len(kept))
    if title is None:
        a = trailer.start("body") + ref.start()
        out[a : a + len(ref.group(0))] = b" " * len(ref.group(0))
    return bytes(out)


# --- PNG ---------------------------------------------------------------------------------------

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
# image data and how to show it; every text, time, EXIF or ICC profile chunk is dropped
PNG_CHUNKS_KEPT = frozenset(
    (b"IHDR", b"PLTE", b"tRNS", b"IDAT", b"IEND", b"pHYs", b"gAMA", b"cHRM", b"sRGB", b"sBIT")
)


def png_chunks(png: bytes) -> list[tuple[bytes, bytes]]:
    """Return the (type, data) chunks of a PNG, checking the signature and every checksum."""
    if not png.startswith(PNG_SIGNATURE):
        raise CleanError("png", "the image is not a PNG")
    chunks: list[tuple[bytes, bytes]] = []
    pos = len(PNG_SIGNATURE)
    while pos < len(png):
        if pos + 12 > len(png):
            raise CleanError("png", "the PNG ends inside a chunk")
        (length,) = struct.unpack(">I", png[pos : pos + 4])
        kind, data = png[pos + 4 : pos + 8], png[pos + 8 : pos + 8 + length]
        (crc,) = struct.unpack(">I", png[pos + 8 + length : pos + 12 + length])
        if len(data) != length or zlib.crc32(kind + data) != crc:
            raise CleanError("png", "a PNG chunk fails its checksum")
        chunks.append((kind, data))
        pos += 12 + length
    if not chunks or chunks[0][0] != b"IHDR" or chunks[-1][0] != b"IEND":
        raise CleanError("png", "the PNG does not start with IHDR and end with IEND")
    return chunks


def clean_png(png: bytes) -> bytes:
    """Return the PNG with only image chunks (no tEXt, zTXt, iTXt, tIME, eXIf, iCCP ...)."""
    out = [PNG_SIGNATURE]
    for kind, data in png_chunks(png):
        if kind in PNG_CHUNKS_KEPT:
            crc = struct.pack(">I", zlib.crc32(kind + data))
            out.append(struct.pack(">I", len(data)) + kind + data + crc)
    return b"".join(out)


# --- DICOM -------------------------------------------------------------------------------------

DEIDENTIFICATION_METHOD = "limbchart teach: PS3.15 basic profile, patient's sex kept"  # LO: 64
_DICOM_SEX = {"female": "F", "male": "M", "other": "O"}  # Patient's Sex (0010,0040) terms
_METHOD_CODES = (
    ("113100", "Basic Application Confidentiality Profile"),
    ("113108", "Retain Patient Characteristics Option"),
)


def teaching_dicom(pdf: bytes, case_id: str, sex: str | None, *, version: str) -> bytes:
    """Return an Encapsulated PDF for a teaching case: the case id for name and id, no dates,
    new UIDs, Patient Identity Removed = YES and the method in words and codes (PS3.15 E)."""
    from pydicom import dcmread
    from pydicom.dataset import Dataset

    from diagram.output.dicom import DicomIdentity, encapsulated_pdf

    ident = DicomIdentity(
        patient_name=f"{case_id}^",  # the family-name component: a PN, not the retired form
        patient_id=case_id,
        sex=_DICOM_SEX.get(sex or "", ""),
        study_uid=None,  # a new Study Instance UID (action U)
        burned_in=False,
        deidentified=True,
        deidentification_method=DEIDENTIFICATION_METHOD,
    )
    ds = dcmread(io.BytesIO(encapsulated_pdf(pdf, ident, version=version)))
    # the creation moment is a date too (action Z on Content Date/Time, Acquisition DateTime)
    ds.ContentDate = ""
    ds.ContentTime = ""
    ds.AcquisitionDateTime = ""
    ds.LongitudinalTemporalInformationModified = "REMOVED"  # (0028,0303), PS3.3 (from memory)
    codes = []
    for value, meaning in _METHOD_CODES:
        item = Dataset()
        item.CodeValue = value
        item.CodingSchemeDesignator = "DCM"
        item.CodeMeaning = meaning
        codes.append(item)
    ds.DeidentificationMethodCodeSequence = codes
    out = io.BytesIO()
    ds.save_as(out, enforce_file_format=True)
    return out.getvalue()
