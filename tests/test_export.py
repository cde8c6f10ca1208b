"""Export: format registry, atomic writes, binary outputs read back with independent tools."""

from __future__ import annotations

import errno
import io
import json
import multiprocessing
import os
import shutil
import subprocess
import sys
from pathlib import Path
from typing import Any

import pytest

from diagram.errors import ExportError
from diagram.output.export import (
    WRITERS,
    Drawing,
    ExportOptions,
    export,
    format_for,
    render_bytes,
    write_atomic,
)

SVG = (
    '<svg xmlns="http://www.w3.org/2000/svg" width="100mm" height="40mm" viewBox="0 0 283 113">'
    '<rect x="10" y="10" width="60" height="60" fill="#333"/>'
    '<text x="80" y="50" font-family="DejaVu Sans" font-size="14">PSV 385 &lt;50%</text></svg>'
)
DRAWING = Drawing(results={"results_format": 1, "warnings": []}, svg_pages=(SVG,))


@pytest.mark.parametrize(
    ("name", "forced", "fmt"),
    [
        ("a.svg", None, "svg"),
        ("a.PDF", None, "pdf"),
        ("a.png", None, "png"),
        ("a.json", None, "json"),
        ("a.out", "pdf", "pdf"),
        ("a.pdf", "svg", "svg"),
    ],
)
def test_format_from_suffix_or_forced(name: str, forced: str | None, fmt: str) -> None:
    assert format_for(Path(name), forced) == fmt


@pytest.mark.parametrize("name", ["a.docx", "a"])
def test_unknown_format_is_refused(name: str) -> None:
    with pytest.raises(ExportError, match="is not one of svg, pdf, png, dcm, json"):
        format_for(Path(name))


def test_pdf_reads_back_with_pypdf_and_embeds_the_shipped_font(tmp_path: Path) -> None:
    from pypdf import PdfReader

    out = export(DRAWING, tmp_path / "m.pdf")
    data = out.read_bytes()
    assert data[:5] == b"%PDF-"
    reader = PdfReader(io.BytesIO(data))
    assert len(reader.pages) == 1
    assert "PSV 385 <50%" in reader.pages[0].extract_text()
    fonts = {
        str(f["/BaseFont"])
        for page in reader.pages
        for f in page["/Resources"]["/Font"].values()  # type: ignore[index]
    }
    assert any(f.endswith("DejaVuSans") for f in fonts), fonts
    # 100 mm x 40 mm page
    box = reader.pages[0].mediabox
    assert float(box.width) == pytest.approx(100 / 25.4 * 72, abs=0.5)


def test_png_is_opaque_and_sized_by_dpi(tmp_path: Path) -> None:
    from PIL import Image

    for dpi, width in ((96, 378), (192, 756)):  # 100 mm at 96 and 192 dpi
        data = render_bytes(DRAWING, "png", ExportOptions(png_dpi=dpi))
        assert data[:8] == b"\x89PNG\r\n\x1a\n"
        img = Image.open(io.BytesIO(data))
        assert abs(img.width - width) <= 1
        assert img.convert("RGBA").getpixel((1, 1)) == (255, 255, 255, 255)


def test_json_round_trips(tmp_path: Path) -> None:
    out = export(DRAWING, tmp_path / "r.json")
    assert json.loads(out.read_text()) == DRAWING.results


def test_svg_is_written_as_given(tmp_path: Path) -> None:
    assert export(DRAWING, tmp_path / "m.svg").read_text() == SVG


def test_existing_file_replaced_only_by_a_complete_one(tmp_path: Path) -> None:
    target = tmp_path / "m.pdf"
    target.write_bytes(b"old")

    class Boom(Exception):
        pass

    def failing_writer(drawing: Drawing, options: ExportOptions) -> bytes:
        raise Boom

    writers = {**WRITERS, "pdf": failing_writer}
    with pytest.raises(Boom):
        export(DRAWING, target, overwrite=True, writers=writers)
    assert target.read_bytes() == b"old"
    assert sorted(os.listdir(tmp_path)) == ["m.pdf"]


def test_write_into_missing_folder_or_onto_a_folder_is_a_clear_error(tmp_path: Path) -> None:
    with pytest.raises(ExportError, match="does not exist"):
        write_atomic(tmp_path / "nope" / "m.svg", b"x")
    with pytest.raises(ExportError, match="is a folder"):
        write_atomic(tmp_path, b"x")
    assert os.listdir(tmp_path) == []


@pytest.mark.skipif(os.geteuid() == 0, reason="root can write to a read-only folder")
def test_unwritable_folder_leaves_nothing(tmp_path: Path) -> None:
    tmp_path.chmod(0o500)
    try:
        with pytest.raises(ExportError, match="cannot be written"):
            write_atomic(tmp_path / "m.svg", b"x")
    finally:
        tmp_path.chmod(0o700)
    assert os.listdir(tmp_path) == []


def test_writer_registry_is_read_only() -> None:
    with pytest.raises(TypeError):
        WRITERS["pdf"] = WRITERS["svg"]  # type: ignore[index]
    assert set(WRITERS) == {"svg", "pdf", "png", "dcm", "json", "fhir"}


def test_unknown_format_is_named_from_the_given_writers(tmp_path: Path) -> None:
    with pytest.raises(ExportError, match=r"'\.pdf' is not one of svg, json;"):
        export(
            DRAWING, tmp_path / "m.pdf", writers={"svg": WRITERS["svg"], "json": WRITERS["json"]}
        )
    assert os.listdir(tmp_path) == []


def test_a_drawing_needs_a_scene_or_svg() -> None:
    with pytest.raises(ValueError, match="scene or the SVG"):
        Drawing(results={})


def test_pipeline_drawing_carries_the_scene_and_renders_svg_from_it() -> None:
    from diagram.output.svg import render_pages
    from diagram.pipeline import draw
    from diagram.reading.load import load_study

    drawing = draw(load_study(EXAMPLES / "clti-multilevel.yaml"))
    assert drawing.scene is not None and drawing.svg_pages == ()
    assert drawing.pages == render_pages(drawing.scene)
    assert drawing.page_count == drawing.scene.page_count == 2
    assert drawing.svg == drawing.pages[0]


EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
HOSTILE_CONF = """<?xml version="1.0"?>
<!DOCTYPE fontconfig SYSTEM "urn:fontconfig:fonts.dtd">
<fontconfig>
  <dir>{fonts}</dir>
  <cachedir>{cache}</cachedir>
  <match target="pattern">
    <edit name="family" mode="assign" binding="strong"><string>Liberation Mono</string></edit>
  </match>
</fontconfig>
"""


@pytest.mark.skipif(shutil.which("pdffonts") is None, reason="needs poppler's pdffonts")
@pytest.mark.parametrize("fmt", ["pdf", "dcm"])
def test_shipped_font_is_used_whatever_fontconfig_file_says(tmp_path: Path, fmt: str) -> None:
    """A FONTCONFIG_FILE that renames every family and lists other fonts changes nothing."""
    conf = tmp_path / "fonts.conf"
    conf.write_text(
        HOSTILE_CONF.format(fonts=tmp_path / "fonts", cache=tmp_path / "cache"), encoding="utf-8"
    )
    other = tmp_path / "fonts"
    other.mkdir()
    system = Path("/usr/share/fonts/truetype/liberation/LiberationMono-Regular.ttf")
    if system.exists():  # another sans the hostile configuration would otherwise substitute
        shutil.copy(system, other)
    out = tmp_path / f"m.{fmt}"
    env = {**os.environ, "FONTCONFIG_FILE": str(conf)}
    subprocess.run(
        [
            sys.executable,
            "-m",
            "diagram",
            "draw",
            str(EXAMPLES / "clti-multilevel.yaml"),
            "-o",
            str(out),
        ],
        env=env,
        check=True,
        capture_output=True,
        timeout=120,
    )
    pdf = tmp_path / "m.pdf"
    if fmt == "dcm":
        import pydicom

        pdf.write_bytes(bytes(pydicom.dcmread(out).EncapsulatedDocument).rstrip(b"\0"))
    listed = subprocess.run(["pdffonts", str(pdf)], check=True, capture_output=True, text=True)
    names = {line.split()[0].split("+")[-1] for line in listed.stdout.splitlines()[2:]}
    assert names == {"DejaVuSans", "DejaVuSans-Bold"}, listed.stdout
    from pypdf import PdfReader

    reader = PdfReader(pdf)
    base = {
        str(f["/BaseFont"]).split("+")[-1]
        for p in reader.pages
        for f in p["/Resources"]["/Font"].values()  # type: ignore[index]
    }
    assert base == {"DejaVuSans", "DejaVuSans-Bold"}


def test_rendering_leaves_the_environment_alone(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("FONTCONFIG_FILE", raising=False)
    before = dict(os.environ)
    render_bytes(DRAWING, "pdf")
    render_bytes(DRAWING, "png")
    assert dict(os.environ) == before


def _create(path: Path, data: bytes, start: Any) -> bool:
    start.wait()
    try:
        write_atomic(path, data, overwrite=False)
    except ExportError:
        return False
    return True


@pytest.mark.parametrize("attempt", range(5))  # repeated: a check-then-rename race would show
def test_creating_a_file_never_replaces_one_another_process_made(
    tmp_path: Path, attempt: int
) -> None:
    ctx = multiprocessing.get_context(
        "fork" if "fork" in multiprocessing.get_all_start_methods() else None
    )
    target = tmp_path / "m.json"
    with ctx.Manager() as manager:
        start = manager.Barrier(4)
        with ctx.Pool(4) as pool:
            won = pool.starmap(
                _create, [(target, bytes([65 + i]) * 100_000, start) for i in range(4)]
            )
    assert won.count(True) == 1
    assert target.read_bytes() == bytes([65 + won.index(True)]) * 100_000
    assert os.listdir(tmp_path) == ["m.json"]  # no temporary file left by the losers


def test_a_name_taken_between_the_check_and_the_write_is_left_alone(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    target = tmp_path / "m.svg"
    real_fsync = os.fsync

    def someone_else_writes(fd: int) -> None:
        real_fsync(fd)
        target.write_text("theirs")

    monkeypatch.setattr(os, "fsync", someone_else_writes)
    with pytest.raises(ExportError) as caught:
        write_atomic(target, b"<svg/>", overwrite=False)
    assert caught.value.lines() == [
        f"{target}: exists already and was left as it was (give --overwrite to replace it)."
    ]
    assert target.read_text() == "theirs" and os.listdir(tmp_path) == ["m.svg"]


@pytest.mark.parametrize("code", [errno.EPERM, errno.EOPNOTSUPP])  # FAT, some network shares
def test_creating_without_hard_links_still_refuses_an_existing_name(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, code: int
) -> None:
    def no_links(src: object, dst: object) -> None:
        raise OSError(code, os.strerror(code))

    monkeypatch.setattr(os, "link", no_links)
    write_atomic(tmp_path / "m.svg", b"<svg/>", overwrite=False)
    assert (tmp_path / "m.svg").read_bytes() == b"<svg/>"
    with pytest.raises(ExportError, match="exists already"):
        write_atomic(tmp_path / "m.svg", b"<svg>2</svg>", overwrite=False)
    assert (tmp_path / "m.svg").read_bytes() == b"<svg/>"
    assert os.listdir(tmp_path) == ["m.svg"]


def test_export_refuses_an_existing_file_unless_overwrite(tmp_path: Path) -> None:
    target = tmp_path / "r.json"
    target.write_text("kept")
    with pytest.raises(ExportError, match="exists already"):
        export(DRAWING, target)
    assert target.read_text() == "kept"
    export(DRAWING, target, overwrite=True)
    assert json.loads(target.read_text()) == DRAWING.results
