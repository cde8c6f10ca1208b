"""Outputs read back with tools nobody here wrote, for the teaching-export tests.

poppler's pdftotext and pdfinfo and pypdf for PDFs, pydicom over every element for DICOM (the
encapsulated PDF through poppler), Pillow for PNG chunks, the raw bytes for SVG and YAML.
"""

from __future__ import annotations

import io
import json
import re
import shutil
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

import pytest

from diagram.cli.teach import teach
from diagram.errors import DiagramError


def pdf_text(path: Path) -> str:
    """Return the PDF's text as poppler lays it out, having checked its document information."""
    cmd = ["pdftotext", "-layout", str(path), "-"]
    text = subprocess.run(cmd, check=True, capture_output=True, text=True).stdout
    info = subprocess.run(["pdfinfo", str(path)], check=True, capture_output=True, text=True)
    for key in ("Producer", "Creator", "CreationDate", "ModDate", "Author", "Subject", "Keywords"):
        assert f"\n{key}:" not in "\n" + info.stdout, key
    # the one entry left: the fixed title, which names no patient, lab, place or date
    assert re.search(r"^Title:\s+Lower-limb arterial duplex · teaching case$", info.stdout, re.M)
    assert "Metadata Stream: no" in info.stdout
    from pypdf import PdfReader

    reader = PdfReader(io.BytesIO(path.read_bytes()))
    assert reader.metadata == {"/Title": "Lower-limb arterial duplex · teaching case"}
    assert reader.xmp_metadata is None
    return text + "\n" + "\n".join(page.extract_text() for page in reader.pages)


def dicom_text(path: Path, tmp: Path) -> str:
    """Return every DICOM element's value as text (the encapsulated PDF through poppler)."""
    from pydicom import dcmread

    ds = dcmread(path)
    assert ds.PatientIdentityRemoved == "YES"
    assert ds.BurnedInAnnotation == "NO"
    parts = []
    for elem in [*ds.file_meta.iterall(), *ds.iterall()]:
        if elem.VR in ("DA", "DT", "TM"):
            assert not elem.value, elem.keyword  # every date and time empty
        if elem.keyword == "EncapsulatedDocument":
            pdf = tmp / f"{path.stem}-inner.pdf"
            pdf.write_bytes(bytes(elem.value[: ds.EncapsulatedDocumentLength]))
            parts.append(pdf_text(pdf))
        elif elem.keyword == "CodeValue":  # PS3.16 CID 7050 codes, numbers by nature
            assert elem.value in ("113100", "113108")
        elif elem.VR == "UI":  # long digit runs by nature: none may be the source's (2.25.…)
            # the generator's study UIDs are 2.25 + 100 random bits (at most 31 digits); the
            # tool's own are 2.25 + a UUID (128 bits, about 38 digits)
            assert not re.fullmatch(r"2\.25\.\d{1,31}", str(elem.value)), elem.keyword
        elif elem.VR not in ("OB", "OW", "UN", "SQ", "UL", "US", "SL", "SS", "FL", "FD"):
            parts.append(str(elem.value))
    return "\n".join(parts)


def png_text(path: Path) -> str:
    """Return the PNG's ancillary chunks as text; only image chunks may be there."""
    from PIL import Image

    with Image.open(path) as im:
        assert not getattr(im, "text", {}), "PNG text chunks"
        assert set(im.info) <= {"dpi", "gamma", "srgb", "aspect"}, im.info
        # pHYs holds whole pixels per metre; Pillow's dpi float (150.01239999999999) is no number
        # planted in the study: shown to two decimals
        info = {k: (tuple(round(x, 2) for x in v) if k == "dpi" else v) for k, v in im.info.items()}
        return json.dumps({k: str(v) for k, v in info.items()})


def output_text(path: Path, tmp: Path) -> tuple[str, str]:
    """Return an output's text and the part of it a reader sees (an SVG's text nodes)."""
    kind = path.suffix
    readers: dict[str, Callable[[Path], str]] = {".pdf": pdf_text, ".png": png_text}
    readers[".dcm"] = lambda p: dicom_text(p, tmp)
    text = readers[kind](path) if kind in readers else path.read_text("utf-8")  # SVG, YAML: raw
    if kind == ".svg":  # colours such as #555555 are not numbers anyone reads
        return text, "\n".join(re.findall(r">([^<]+)<", text))
    return text, text


needs_poppler = pytest.mark.skipif(shutil.which("pdftotext") is None, reason="poppler-utils")


def run(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str]:
    """Run ``teach`` as ``limbchart teach`` does (a tool error: its lines, exit status 2)."""
    try:
        teach.main(args=args, prog_name="limbchart teach", standalone_mode=False)
        code = 0
    except SystemExit as done:
        code = int(done.code or 0)
    except DiagramError as exc:
        for line in exc.lines():
            print(line, file=sys.stderr)
        code = exc.exit_code
    return code, capsys.readouterr().err
