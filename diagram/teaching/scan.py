"""The fail-closed scan: read every teaching output back and look for the source's identifiers.

Each format is read the way a recipient would read it: the SVG's text and attribute values,
the PDF's extracted text and metadata (pypdf), the PNG's chunks, every DICOM element (pydicom)
including the encapsulated PDF, the YAML's raw text and every string in it, and the file names.
What is found is counted with :func:`diagram.teaching.evidence.evidence`, which shares no code
with the scrubber. The same case is drawn a second time with a neutral dummy identity; a finding
is evidence of a leak only where the real outputs hold it more often than the dummy's (the
sheet's own words, legend, citations and markup are in both). Document metadata (a PDF's one
fixed teaching title aside), a date element in the DICOM file and the source's Study Instance UID
are refused outright. A hit names the
category and the output only, never the value.
"""

from __future__ import annotations

import io
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass
from typing import Any

from diagram.errors import ExportError
from diagram.teaching.categories import Category
from diagram.teaching.clean import PNG_CHUNKS_KEPT, CleanError, png_chunks
from diagram.teaching.evidence import Needles, evidence

# keys of a PDF Info dictionary or XMP packet: none may be left in a teaching PDF, but for one
# /Title that says exactly the fixed teaching title (anywhere else a /Title could name someone)
_PDF_METADATA_KEYS = (
    b"/Producer",
    b"/Creator",
    b"/CreationDate",
    b"/ModDate",
    b"/Author",
    b"/Subject",
    b"/Keywords",
    b"/Metadata",
)
_SVG_LEFTOVERS = ("<!--", "<title", "<desc", "<metadata", "<?xml-stylesheet", "<!DOCTYPE")
_DICOM_TEXT_VRS = frozenset(
    ("AE", "AS", "CS", "DS", "IS", "LO", "LT", "PN", "SH", "ST", "UC", "UR", "UT")
)
_DICOM_DATE_VRS = frozenset(("DA", "DT", "TM"))


@dataclass(frozen=True)
class Hit:
    """An identifier (by category) found in one output; the value is never kept."""

    category: Category
    output: str  # "svg", "pdf", "png", "dcm", "yaml" or "file name"


@dataclass(frozen=True)
class Reading:
    """An output as a recipient reads it: its texts, and what is refused whatever it says."""

    texts: tuple[str, ...]
    refused: frozenset[Category] = frozenset()


def read_svg(svg: bytes) -> Reading:
    """Return the text of every text element and every attribute value of an SVG."""
    import defusedxml.ElementTree as DET

    raw = svg.decode("utf-8", errors="replace")
    refused = {Category.METADATA} if any(m in raw for m in _SVG_LEFTOVERS) else set()
    try:
        root = DET.fromstring(svg, forbid_dtd=True)
    except (ValueError, SyntaxError):  # ParseError is a SyntaxError
        return Reading((raw,), frozenset({Category.METADATA}))
    texts: list[str] = []
    for el in root.iter():
        if el.tag.endswith("}text") or el.tag == "text":
            texts.append("".join(el.itertext()))
        texts.extend(str(v) for v in el.attrib.values())
    return Reading(tuple(texts), frozenset(refused))


def _pdf_refusals(pdf: bytes) -> frozenset[Category]:
    from pypdf import PdfReader

    from diagram.drawing.sheet.header import TEACHING_TITLE

    if any(key in pdf for key in _PDF_METADATA_KEYS) or pdf.count(b"/Title") > 1:
        return frozenset({Category.METADATA})
    reader = PdfReader(io.BytesIO(pdf))
    info = {str(k): str(v) for k, v in (reader.metadata or {}).items()}
    if info not in ({}, {"/Title": TEACHING_TITLE}) or reader.xmp_metadata is not None:
        return frozenset({Category.METADATA})
    if b"/Title" in pdf and not info:  # a /Title that is not the document's
        return frozenset({Category.METADATA})
    return frozenset()


def read_pdf(pdf: bytes, *, text: bool = True) -> Reading:
    """Return each page's extracted text (``text``); any document metadata is refused."""
    try:
        from pypdf import PdfReader
    except ImportError:  # no PDF is written unread
        raise ExportError(
            "a teaching PDF (or DICOM) is read back before it is written, which needs pypdf: "
            "'pip install pypdf'."
        ) from None

    refused = _pdf_refusals(pdf)
    if not text:
        return Reading((), refused)
    reader = PdfReader(io.BytesIO(pdf))
    # layout mode keeps words apart that plain extraction runs together ("duplexDemo")
    texts = tuple(page.extract_text(extraction_mode="layout") for page in reader.pages)
    return Reading(texts, refused)


def read_png(png: bytes) -> Reading:
    """Refuse a PNG that holds any chunk but image data (text, time, EXIF, ICC)."""
    try:
        chunks = png_chunks(png)
    except CleanError:
        return Reading((), frozenset({Category.METADATA}))
    extra = [data.decode("latin-1") for kind, data in chunks if kind not in PNG_CHUNKS_KEPT]
    return Reading(tuple(extra), frozenset({Category.METADATA} if extra else ()))


def _dicom_elements(ds: Any) -> Iterator[Any]:
    yield from ds.file_meta.iterall()
    yield from ds.iterall()


def read_dicom(dcm: bytes, *, source_uid: str | None, text: bool = True) -> Reading:
    """Return every text element of a DICOM file and the encapsulated PDF's text.

    Refused outright: any date or time with a value, and the source's Study Instance UID.
    """
    from pydicom import dcmread

    refused: set[Category] = set()
    texts: list[str] = []
    ds = dcmread(io.BytesIO(dcm))
    for elem in _dicom_elements(ds):
        vr, value = elem.VR, elem.value
        if value is None or value == "" or vr == "SQ":
            continue
        values = [str(v) for v in (value if isinstance(value, list | tuple) else [value])]
        if vr in _DICOM_DATE_VRS:
            refused.add(Category.DATE)  # every date and time of a teaching file is empty
        elif vr == "UI":
            if source_uid and source_uid in values:
                refused.add(Category.STUDY_UID)
        elif elem.keyword == "EncapsulatedDocument":
            size = int(ds.get("EncapsulatedDocumentLength", len(value)))
            inner = read_pdf(bytes(value[:size]), text=text)
            texts.extend(inner.texts)
            refused |= inner.refused
        elif vr in _DICOM_TEXT_VRS:
            texts.append("\n".join(values))
    return Reading(tuple(texts), frozenset(refused))


def _strings(node: object) -> Iterator[str]:
    if isinstance(node, dict):
        for key, value in node.items():
            yield str(key)
            yield from _strings(value)
    elif isinstance(node, list):
        for item in node:
            yield from _strings(item)
    elif isinstance(node, str):
        yield node


def read_yaml(text: bytes) -> Reading:
    """Return a study file's raw text, line by line, and every string in it."""
    import yaml

    raw = text.decode("utf-8")
    return Reading((raw, *_strings(yaml.safe_load(raw))))


def read_output(fmt: str, data: bytes, *, source_uid: str | None, text: bool = True) -> Reading:
    """Read one output as a recipient would (``text``: also extract the text of PDFs)."""
    if fmt == "svg":
        return read_svg(data)
    if fmt == "pdf":
        return read_pdf(data, text=text)
    if fmt == "png":
        return read_png(data)
    if fmt == "dcm":
        return read_dicom(data, source_uid=source_uid, text=text)
    if fmt == "yaml":
        return read_yaml(data)
    raise ValueError(f"no reader for the output format {fmt!r}")  # a bug, not bad input


def scan_outputs(
    real: Mapping[str, bytes],
    dummy: Mapping[str, bytes],
    names: Iterable[str],
    needles: Needles,
    *,
    source_uid: str | None,
) -> tuple[Hit, ...]:
    """Scan every output and file name against the dummy drawing's; return the hits, sorted.

    ``dummy`` holds the same formats made from the study with a neutral identity: a finding
    counts only where ``real`` holds it more often. An output whose bytes are the dummy's own
    cannot hold more of anything, so only its refusals are read (no text extraction).
    """
    hits: set[Hit] = set()
    for fmt, data in real.items():
        other = dummy.get(fmt)
        same = other == data
        reading = read_output(fmt, data, source_uid=source_uid, text=not same)
        hits.update(Hit(cat, fmt) for cat in reading.refused)
        if same:
            continue
        found = evidence(reading.texts, needles)
        if other is not None:
            found -= evidence(read_output(fmt, other, source_uid=None).texts, needles)
        hits.update(Hit(cat, fmt) for cat, _ in found)
    for cat, _ in evidence(list(names), needles):
        hits.add(Hit(cat, "file name"))
    return tuple(sorted(hits, key=lambda h: (h.output, h.category)))
