"""The fail-closed scan: read every teaching output back and look for the source's identifiers.

Each format is read the way a recipient would read it: the SVG's text and attributes, the PDF's
extracted text and metadata (pypdf), the PNG's chunks, every DICOM element (pydicom) including
the encapsulated PDF, the YAML's strings, and the file names. A hit names the category and the
output only, never the value. Text is looked at line by line as well as whole, so that the
letters of a name spread over one line ("A d a  D e m o") are found even where the scrubber,
which works on words, let them through.
"""

from __future__ import annotations

import hashlib
import io
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass
from typing import Any

from diagram.errors import ExportError
from diagram.teaching.clean import PNG_CHUNKS_KEPT, CleanError, png_chunks
from diagram.teaching.patterns import Category
from diagram.teaching.scrub import Identifiers, find

# keys of a PDF Info dictionary or XMP packet: none may be left in a teaching PDF
_PDF_METADATA_KEYS = (
    b"/Producer",
    b"/Creator",
    b"/CreationDate",
    b"/ModDate",
    b"/Author",
    b"/Title",
    b"/Subject",
    b"/Keywords",
    b"/Metadata",
)
_SVG_LEFTOVERS = ("<!--", "<title", "<desc", "<metadata", "<?xml-stylesheet", "<!DOCTYPE")
_DICOM_TEXT_VRS = frozenset(
    ("AE", "AS", "CS", "DS", "IS", "LO", "LT", "PN", "SH", "ST", "UC", "UR", "UT")
)
_DICOM_DATE_VRS = frozenset(("DA", "DT", "TM"))
_DICOM_CODES = frozenset(("CodeValue", "CodingSchemeDesignator"))  # coded terms, not free text


@dataclass(frozen=True)
class Hit:
    """An identifier (by category) found in one output; the value is never kept."""

    category: Category
    output: str  # "svg", "pdf", "png", "dcm", "yaml" or "file name"


def scan_svg(svg: bytes, ids: Identifiers) -> set[Category]:
    """Return the categories found in an SVG's text, attribute values and markup."""
    import defusedxml.ElementTree as DET

    text = svg.decode("utf-8")
    found = find(text, ids, markup=True)
    if any(mark in text for mark in _SVG_LEFTOVERS):
        found.add(Category.METADATA)
    try:
        root = DET.fromstring(svg, forbid_dtd=True)
    except (ValueError, SyntaxError):  # ParseError is a SyntaxError
        return found | {Category.METADATA}
    words: list[str] = []
    for el in root.iter():  # attribute values are in the raw text searched above
        words.extend(part for part in (el.text, el.tail) if part and part.strip())
    # one text element per line: names spread over one label are found, not across labels
    return found | find("\n".join(words), ids)


def scan_pdf(pdf: bytes, ids: Identifiers) -> set[Category]:
    """Return the categories found in a PDF's extracted text and any metadata left in it."""
    try:
        from pypdf import PdfReader
    except ImportError:  # no PDF is written unread
        raise ExportError(
            "a teaching PDF (or DICOM) is read back before it is written, which needs pypdf: "
            "'pip install pypdf'."
        ) from None

    found: set[Category] = set()
    if any(key in pdf for key in _PDF_METADATA_KEYS):
        found.add(Category.METADATA)
    reader = PdfReader(io.BytesIO(pdf))
    if reader.metadata or reader.xmp_metadata is not None:
        found.add(Category.METADATA)
    for page in reader.pages:
        # layout mode keeps words apart that plain extraction runs together ("duplexDemo")
        found |= find(page.extract_text(extraction_mode="layout"), ids)
    return found


def scan_png(png: bytes, ids: Identifiers) -> set[Category]:
    """Return METADATA when a PNG holds any chunk but image data (text, time, EXIF, ICC)."""
    try:
        chunks = png_chunks(png)
    except CleanError:
        return {Category.METADATA}
    found: set[Category] = set()
    for kind, data in chunks:
        if kind not in PNG_CHUNKS_KEPT:
            found.add(Category.METADATA)
            found |= find(data.decode("latin-1"), ids)
    return found


def _dicom_elements(ds: Any) -> Iterator[Any]:
    yield from ds.file_meta.iterall()
    yield from ds.iterall()


def scan_dicom(
    dcm: bytes,
    ids: Identifiers,
    *,
    source_uid: str | None,
    scanned_pdfs: Mapping[str, set[Category]],
) -> set[Category]:
    """Return the categories found in any DICOM element, the encapsulated PDF included.

    ``scanned_pdfs`` maps the SHA-256 of PDFs already scanned to their result: an encapsulated
    document identical to one of them need not be read twice.
    """
    from pydicom import dcmread

    found: set[Category] = set()
    ds = dcmread(io.BytesIO(dcm))
    for elem in _dicom_elements(ds):
        vr, value = elem.VR, elem.value
        if value is None or value == "" or vr == "SQ":
            continue
        if vr in _DICOM_DATE_VRS:
            found.add(Category.DATE)  # every date and time of a teaching file is empty
        elif vr == "UI" or elem.keyword in _DICOM_CODES:
            uids = [str(v) for v in (value if isinstance(value, list | tuple) else [value])]
            if source_uid and source_uid in uids:
                found.add(Category.STUDY_UID)
            found |= set().union(*(find(u, ids, markup=True) for u in uids))
        elif elem.keyword == "EncapsulatedDocument":
            size = int(ds.get("EncapsulatedDocumentLength", len(value)))
            doc = bytes(value[:size])
            digest = hashlib.sha256(doc).hexdigest()
            found |= scanned_pdfs[digest] if digest in scanned_pdfs else scan_pdf(doc, ids)
        elif vr in _DICOM_TEXT_VRS:
            values = value if isinstance(value, list | tuple) else [value]
            found |= find("\n".join(str(v) for v in values), ids)
    return found


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


def scan_yaml(text: bytes, ids: Identifiers) -> set[Category]:
    """Return the categories found in a study file: its raw text and every string in it."""
    import yaml

    raw = text.decode("utf-8")
    found = find(raw, ids, markup=True)
    comments = [line for line in raw.splitlines() if line.lstrip().startswith("#")]
    strings = [s.replace("\n", " ") for s in _strings(yaml.safe_load(raw))]
    return found | find("\n".join(comments + strings), ids)


def scan_outputs(
    outputs: Mapping[str, bytes], names: Iterable[str], ids: Identifiers, *, source_uid: str | None
) -> tuple[Hit, ...]:
    """Scan every output (keyed by format) and file name; return the hits, sorted."""
    hits: set[Hit] = set()
    pdfs: dict[str, set[Category]] = {}
    for fmt in sorted(outputs, key=lambda f: f == "dcm"):  # PDFs before the DICOM that holds one
        data = outputs[fmt]
        if fmt == "svg":
            found = scan_svg(data, ids)
        elif fmt == "pdf":
            found = pdfs[hashlib.sha256(data).hexdigest()] = scan_pdf(data, ids)
        elif fmt == "png":
            found = scan_png(data, ids)
        elif fmt == "dcm":
            found = scan_dicom(data, ids, source_uid=source_uid, scanned_pdfs=pdfs)
        elif fmt == "yaml":
            found = scan_yaml(data, ids)
        else:
            raise ValueError(f"no scan for the output format {fmt!r}")  # a bug, not bad input
        hits.update(Hit(cat, fmt) for cat in found)
    for name in names:
        hits.update(Hit(cat, "file name") for cat in find(name, ids))
    return tuple(sorted(hits, key=lambda h: (h.output, h.category)))
