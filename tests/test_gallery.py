"""The style gallery: every band and symbol of a style on one page, in SVG, PDF and PNG."""

from __future__ import annotations

import io
import re
from pathlib import Path

import pytest

from diagram.anatomy import Side
from diagram.assess import assess
from diagram.cli.main import main
from diagram.design.gallery import (
    SPECIMEN_NOTE,
    gallery_svg,
    greyscale,
    specimen_yaml,
    write_gallery,
)
from diagram.drawing.labprofile import load_lab_profile
from diagram.drawing.paper import PAGES
from diagram.drawing.style import default_style
from diagram.drawing.template.mapfile import load_template
from diagram.errors import ExportError
from diagram.reading.load import load_study_text

LAB = Path(__file__).parent / "data" / "lab"


@pytest.mark.parametrize(
    ("colour", "grey"),
    [
        # ITU-R BT.601 luma, 0.299 R + 0.587 G + 0.114 B, rounded to a whole level
        ("#FFFFFF", "#FFFFFF"),
        ("#000000", "#000000"),
        ("#FF0000", "#4C4C4C"),  # 76.2
        ("#00FF00", "#969696"),  # 149.7
        ("#0000FF", "#1D1D1D"),  # 29.1
    ],
)
def test_greyscale(colour: str, grey: str) -> None:
    assert greyscale(colour) == grey


@pytest.mark.parametrize("template", ["bilateral", "infrainguinal-left", "infrainguinal-right"])
def test_the_specimen_shows_every_band_and_symbol(template: str) -> None:
    tpl = load_template(template)
    side = tpl.sides[0]
    study = load_study_text(specimen_yaml(side, set(tpl.vessels)), "specimen.yaml", ".yaml")
    prior = load_study_text(
        specimen_yaml(side, set(tpl.vessels), prior=True), "prior.yaml", ".yaml"
    )
    result = assess(study, prior=prior)
    limb = result.limbs[Side(side)]
    bands = {seg.band for seg in limb.segments.values()} | {les.band for les in limb.lesions}
    assert {"normal", "lt50", "50-74", "75-99", "occluded", "not-assessed"} <= bands
    assert any(les.reconstitution is not None for les in limb.lesions)
    assert study.limb(Side(side)).stents and study.limb(Side(side)).grafts
    assert result.comparison is not None
    assert any(c.change.value == "worse" for c in result.comparison.segments)


@pytest.fixture(scope="module")
def default_gallery() -> str:
    return gallery_svg()


def test_gallery_svg_is_one_well_formed_page(default_gallery: str) -> None:
    import defusedxml.ElementTree as DET

    root = DET.fromstring(default_gallery.encode("utf-8"))
    assert root.get("width") == "210mm" and root.get("height") == "297mm"
    ids = [el.get("id") for el in root.iter() if el.get("id")]
    assert len(ids) == len(set(ids))
    nested = [el for el in root if el.tag.endswith("svg")]
    assert len(nested) == 1  # the specimen sheet, placed under the band panel
    assert float(nested[0].get("y", "0")) >= 160


def test_gallery_shows_each_band_in_colour_and_in_grey(default_gallery: str) -> None:
    for band in default_style().bands:
        colour = re.search(
            rf'<pattern [^>]*id="band-gallery-{band.id}"[^>]*>(.*?)</pattern>',
            default_gallery,
            re.S,
        )
        grey = re.search(
            rf'<pattern [^>]*id="band-gallery-grey-{band.id}"[^>]*>(.*?)</pattern>',
            default_gallery,
            re.S,
        )
        assert colour is not None and grey is not None, band.id
        assert band.tint in colour.group(1) or band.hatch.value == "solid"
        assert greyscale(band.tint) in grey.group(1) or band.hatch.value == "solid"
        assert f">{band.label.replace('<', '&lt;')}</text>" in default_gallery
        assert f"{band.id}: {band.hatch.value}</text>" in default_gallery
    assert f">{SPECIMEN_NOTE}" in default_gallery or SPECIMEN_NOTE in default_gallery


def test_gallery_as_pdf_png_and_svg(tmp_path: Path) -> None:
    from PIL import Image
    from pypdf import PdfReader

    pdf = write_gallery(tmp_path / "gallery.pdf")
    assert pdf.read_bytes()[:5] == b"%PDF-"
    reader = PdfReader(str(pdf))
    assert len(reader.pages) == 1
    text = reader.pages[0].extract_text()
    for words in ("Style gallery", "Normal", "75-99%", "Not assessed", "stent", "bypass graft"):
        assert words in text, words
    png = write_gallery(tmp_path / "gallery.png")
    with Image.open(io.BytesIO(png.read_bytes())) as image:
        assert image.format == "PNG"
        assert image.size == (1240, 1754)  # A4 at 150 dpi
    svg = write_gallery(tmp_path / "gallery.svg")
    assert svg.read_text(encoding="utf-8") == gallery_svg()  # deterministic


def test_gallery_of_a_lab_profile(tmp_path: Path) -> None:
    profile = load_lab_profile(LAB / "lab.yaml")
    svg = gallery_svg(
        profile.style, load_template(profile.template), lab_name=profile.lab_name, page="letter"
    )
    assert "Style gallery — Riverside Demo Vascular Lab" in svg
    assert 'width="8.5in"' in svg and 'height="11in"' in svg
    assert "#7FB3D5" in svg and "rotate(120)" in svg
    written = write_gallery(tmp_path / "lab.svg", profile)
    assert written.read_text(encoding="utf-8") == svg
    width, height = PAGES["letter"].width_pt, PAGES["letter"].height_pt
    assert f'viewBox="0 0 {width:g} {height:g}"' in svg


def test_gallery_refuses_other_formats_and_writes_nothing(tmp_path: Path) -> None:
    with pytest.raises(ExportError, match="the gallery is written as svg, pdf, png, not json"):
        write_gallery(tmp_path / "gallery.json")
    with pytest.raises(ExportError, match="output format"):
        write_gallery(tmp_path / "gallery.txt")
    assert list(tmp_path.iterdir()) == []


def test_gallery_command(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out = tmp_path / "g.pdf"
    with pytest.raises(SystemExit) as done:
        main(["gallery", "-o", str(out), "--lab", str(LAB / "lab.yaml"), "--template", "bilateral"])
    assert done.value.code == 0
    assert capsys.readouterr().err == f"wrote {out}\n"
    assert out.read_bytes()[:5] == b"%PDF-"
    with pytest.raises(SystemExit) as done:
        main(["gallery", "-o", str(tmp_path / "h.pdf"), "--lab", str(LAB / "bad.yaml")])
    assert done.value.code == 2
    expected = (LAB / "bad.expected").read_text("utf-8").splitlines()
    assert capsys.readouterr().err.splitlines() == [
        e.replace("{f}", str(LAB / "bad.yaml")) for e in expected
    ]
    assert not (tmp_path / "h.pdf").exists()
