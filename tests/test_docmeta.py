"""What the files say about themselves: the PDF's Title and dates, the PNG's resolution.

Read back with tools nobody here wrote: pypdf and poppler's ``pdfinfo`` for the PDF, Pillow for
the PNG's ``pHYs`` chunk.
"""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

import pytest

from diagram.errors import ExportError
from diagram.inputs import draw_file
from diagram.output.export import Drawing, ExportOptions, render_bytes

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "clti-multilevel.yaml"  # two pages
EPOCH = "1767225600"  # 2026-01-01T00:00:00Z, own arithmetic: 20454 days x 86400 s
IDENTIFIERS = ("Example", "DEMO-", "1957", "1952", "1948")


def _drawing() -> Drawing:
    return draw_file(EXAMPLE)


def _info(pdf: bytes) -> dict[str, str]:
    import io

    from pypdf import PdfReader

    meta = PdfReader(io.BytesIO(pdf)).metadata
    assert meta is not None
    return {k: str(v) for k, v in meta.items()}


@pytest.mark.parametrize("renderer", ["cairo", "cairosvg"])
def test_the_pdf_is_titled_with_the_sheet_and_no_identifier(renderer: str) -> None:
    pdf = render_bytes(_drawing(), "pdf", ExportOptions(renderer=renderer))  # type: ignore[arg-type]
    title = _info(pdf)["/Title"]
    assert title == "Lower-limb arterial duplex · Demo Vascular Lab"
    assert not any(ident in title for ident in IDENTIFIERS)


@pytest.mark.parametrize("renderer", ["cairo", "cairosvg"])
def test_a_nul_in_the_site_is_left_out_of_the_title(renderer: str, tmp_path: Path) -> None:
    study = tmp_path / "s.yaml"
    study.write_text('format: 1\nexam: {site: "Demo\\0Lab"}\n', encoding="utf-8")
    pdf = render_bytes(draw_file(study), "pdf", ExportOptions(renderer=renderer))  # type: ignore[arg-type]
    assert _info(pdf)["/Title"] == "Lower-limb arterial duplex · DemoLab"


@pytest.mark.parametrize("renderer", ["cairo", "cairosvg"])
def test_source_date_epoch_makes_the_pdf_byte_identical(
    renderer: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
    options = ExportOptions(renderer=renderer)  # type: ignore[arg-type]
    first = render_bytes(_drawing(), "pdf", options)
    second = render_bytes(_drawing(), "pdf", options)
    assert first == second
    info = _info(first)
    assert (
        info["/CreationDate"].startswith("D:20260101000000")
        and info["/ModDate"] == info["/CreationDate"]
    )


def test_without_source_date_epoch_the_pdf_is_dated_by_the_clock(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    import datetime as dt

    monkeypatch.delenv("SOURCE_DATE_EPOCH", raising=False)
    made = _info(render_bytes(_drawing(), "pdf"))["/CreationDate"]
    assert made[2:6] == str(dt.datetime.now().year) or made[2:6] == str(dt.datetime.now().year - 1)


@pytest.mark.parametrize(
    "value", ["yesterday", "-5", "1.5", "99999999999999", "\uff11\uff12\uff13"]
)
def test_a_malformed_source_date_epoch_is_refused(
    value: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", value)
    with pytest.raises(ExportError, match="SOURCE_DATE_EPOCH"):
        render_bytes(_drawing(), "pdf")


@pytest.mark.skipif(shutil.which("pdfinfo") is None, reason="poppler's pdfinfo not installed")
def test_pdfinfo_reads_the_title_and_the_fixed_date(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
    path = tmp_path / "sheet.pdf"
    path.write_bytes(render_bytes(_drawing(), "pdf"))
    out = subprocess.run(
        ["pdfinfo", "-isodates", str(path)], capture_output=True, text=True, check=True
    ).stdout
    fields = dict(line.split(":", 1) for line in out.splitlines() if ":" in line)
    assert fields["Title"].strip() == "Lower-limb arterial duplex · Demo Vascular Lab"
    assert fields["CreationDate"].strip() == "2026-01-01T00:00:00Z"


@pytest.mark.parametrize("renderer", ["cairo", "cairosvg"])
@pytest.mark.parametrize("dpi", [72.0, 150.0, 300.0])
def test_the_png_records_its_dpi(renderer: str, dpi: float) -> None:
    import io

    from PIL import Image

    png = render_bytes(_drawing(), "png", ExportOptions(png_dpi=dpi, renderer=renderer))  # type: ignore[arg-type]
    with Image.open(io.BytesIO(png)) as image:
        x, y = image.info["dpi"]
    # pHYs holds whole pixels per metre: 150 dpi is 5906 px/m, read back as 150.01 dpi
    assert x == pytest.approx(dpi, abs=0.02) and y == pytest.approx(dpi, abs=0.02)
    assert png.count(b"pHYs") == 1


def test_png_with_dpi_replaces_an_old_phys_chunk() -> None:
    import io

    from PIL import Image

    from diagram.output.docmeta import png_with_dpi

    buf = io.BytesIO()
    Image.new("RGB", (3, 2), "white").save(buf, "PNG", dpi=(96, 96))
    out = png_with_dpi(buf.getvalue(), 200)
    with Image.open(io.BytesIO(out)) as image:
        assert image.info["dpi"] == pytest.approx((200, 200), abs=0.02)
        assert image.size == (3, 2)
        image.load()  # every chunk's checksum holds
    assert out.count(b"pHYs") == 1


def test_a_teaching_pdf_carries_only_the_fixed_title(tmp_path: Path) -> None:
    """One Info entry, a title that names no lab: the leak scan refuses any other entry."""
    import io

    from pypdf import PdfReader

    from diagram.reading.load import load_study
    from diagram.teaching.case import CaseSettings, new_case_id, render_case

    files = render_case(load_study(EXAMPLE), new_case_id(), CaseSettings(formats=("pdf",))).files
    pdf = next(data for name, data in files.items() if str(name).endswith(".pdf"))
    meta = PdfReader(io.BytesIO(pdf)).metadata
    assert meta == {"/Title": "Lower-limb arterial duplex · teaching case"}
    assert pdf.count(b"/Title") == 1
    for key in (b"/Producer", b"/CreationDate", b"/ModDate", b"/Creator"):
        assert key not in pdf
    if shutil.which("qpdf"):
        path = tmp_path / "case.pdf"
        path.write_bytes(pdf)
        assert subprocess.run(["qpdf", "--check", str(path)], capture_output=True).returncode == 0
