"""Every shipped example drawn end to end and checked with tools nobody here wrote.

PDF: pypdf and poppler's pdftotext read the text back, qpdf --check checks the structure,
pdffonts shows the embedded font. PNG: Pillow reads the pixels. SVG: rsvg-convert renders it.
"""

from __future__ import annotations

import io
import shutil
import subprocess
from pathlib import Path

import pytest

from diagram.inputs import draw_file
from diagram.output.export import render_bytes
from diagram.pipeline import draw
from diagram.reading.load import load_study

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "examples").glob("*.yaml"))
CAUTION_WORDS = ("not a substitute", "validated locally")
BAND_LABELS = ("Normal", "<50%", "50-74%", "75-99%", "Occluded", "Not assessed")


def need(tool: str) -> None:
    if shutil.which(tool) is None:
        pytest.skip(f"{tool} is not installed (.ci/run installs it)")


@pytest.fixture(scope="module", params=EXAMPLES, ids=lambda p: p.name)
def drawn(request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory) -> dict:  # type: ignore[type-arg]
    path: Path = request.param
    study = load_study(path)
    drawing = draw_file(study)
    folder = tmp_path_factory.mktemp(path.stem)
    out = {"study": study, "folder": folder}
    for fmt in ("svg", "pdf", "png"):
        data = render_bytes(drawing, fmt)
        (folder / f"sheet.{fmt}").write_bytes(data)
        out[fmt] = data
    return out


def _norm(text: str) -> str:
    return " ".join(text.split())


def test_pdf_text_reads_back_with_pypdf(drawn: dict) -> None:  # type: ignore[type-arg]
    from pypdf import PdfReader

    reader = PdfReader(io.BytesIO(drawn["pdf"]))
    text = _norm(" ".join(page.extract_text() for page in reader.pages))
    study = drawn["study"]
    assert study.patient.name in text and study.patient.id in text
    for words in CAUTION_WORDS:
        assert words in text
    for label in BAND_LABELS:
        assert label in text
    assert "limbchart" in text


def test_pdf_text_reads_back_with_pdftotext(drawn: dict) -> None:  # type: ignore[type-arg]
    need("pdftotext")
    pdf = drawn["folder"] / "sheet.pdf"
    text = _norm(
        subprocess.run(
            ["pdftotext", "-layout", str(pdf), "-"], capture_output=True, text=True, check=True
        ).stdout
    )
    assert drawn["study"].patient.id in text
    assert "not a substitute for the images" in text


def test_qpdf_check_passes(drawn: dict) -> None:  # type: ignore[type-arg]
    need("qpdf")
    done = subprocess.run(
        ["qpdf", "--check", str(drawn["folder"] / "sheet.pdf")],
        capture_output=True,
        text=True,
        check=False,
    )
    assert done.returncode == 0, done.stdout + done.stderr
    assert "No syntax or stream encoding errors found" in done.stdout


def test_pdf_embeds_the_font_the_layout_measured(drawn: dict) -> None:  # type: ignore[type-arg]
    need("pdffonts")
    listing = subprocess.run(
        ["pdffonts", str(drawn["folder"] / "sheet.pdf")], capture_output=True, text=True, check=True
    ).stdout
    names = [line.split()[0] for line in listing.splitlines()[2:] if line.strip()]
    assert names and all(n.split("+")[-1].startswith("DejaVuSans") for n in names), names
    assert all(" yes " in line for line in listing.splitlines()[2:] if line.strip())  # embedded


def test_png_is_an_opaque_page(drawn: dict) -> None:  # type: ignore[type-arg]
    from PIL import Image

    img = Image.open(io.BytesIO(drawn["png"]))
    assert img.format == "PNG"
    # A4 portrait at 150 dpi is 1240 x 1754 px, Letter 1275 x 1650; further pages of a sheet
    # are stacked below page 1 with a 24 pt (50 px) gap
    from pypdf import PdfReader

    pages = len(PdfReader(io.BytesIO(drawn["pdf"])).pages)
    page_h = {1240: 1754, 1275: 1650}[img.width]
    assert img.height == pages * page_h + (pages - 1) * 50
    grey = img.convert("L")
    assert grey.getpixel((2, 2)) == 255  # white paper, not transparent
    lo, hi = grey.getextrema()
    assert lo < 40 and hi == 255  # ink and paper both present


def test_svg_renders_in_a_second_renderer(drawn: dict) -> None:  # type: ignore[type-arg]
    need("rsvg-convert")
    done = subprocess.run(
        ["rsvg-convert", "-f", "png", str(drawn["folder"] / "sheet.svg")],
        capture_output=True,
        check=False,
    )
    assert done.returncode == 0, done.stderr.decode()
    assert done.stdout[:8] == b"\x89PNG\r\n\x1a\n"
    assert done.stderr == b""


def test_svg_is_deterministic() -> None:
    study = load_study(EXAMPLES[0])
    assert draw(study).svg == draw(study).svg


def test_multi_page_sheet_keeps_every_page_in_every_format() -> None:
    from pypdf import PdfReader

    study = load_study(ROOT / "examples" / "clti-multilevel.yaml")
    drawing = draw(study)
    assert len(drawing.pages) == 2  # the planning table continues on page 2
    reader = PdfReader(io.BytesIO(render_bytes(drawing, "pdf")))
    assert len(reader.pages) == 2
    assert "page 2 of 2" in _norm(reader.pages[1].extract_text())
    assert "Planning summary" in _norm(reader.pages[1].extract_text())
    import xml.etree.ElementTree as ET

    root = ET.fromstring(render_bytes(drawing, "svg"))
    ids = [e.get("id") for e in root.iter() if e.get("id")]
    assert len(ids) == len(set(ids))  # page ids prefixed, still unique
    nested = [e for e in root if e.tag.endswith("svg")]
    assert len(nested) == 2
