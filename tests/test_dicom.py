"""DICOM Encapsulated PDF: read back with pydicom and checked by dicom3tools' dciodvfy."""

from __future__ import annotations

import io
import shutil
import subprocess
from pathlib import Path

import pytest

from diagram.output.export import Drawing, export
from diagram.reading.load import load_study

ROOT = Path(__file__).resolve().parents[1]
SVG = (
    '<svg xmlns="http://www.w3.org/2000/svg" width="100mm" height="40mm" viewBox="0 0 283 113">'
    '<text x="10" y="50" font-family="DejaVu Sans" font-size="14">PSV 385</text></svg>'
)


@pytest.fixture()
def dcm(tmp_path: Path) -> tuple[Path, bytes]:
    study = load_study(ROOT / "examples" / "claudicant-sfa.yaml")
    out = export(Drawing(results={}, svg_pages=(SVG,), study=study), tmp_path / "sheet.dcm")
    from diagram.output.export import render_bytes

    pdf = render_bytes(Drawing(results={}, svg_pages=(SVG,)), "pdf")
    return out, pdf


def test_reads_back_with_the_pdf_inside(dcm: tuple[Path, bytes]) -> None:
    import pydicom
    from pydicom.uid import EncapsulatedPDFStorage

    path, _ = dcm
    data = path.read_bytes()
    assert data[128:132] == b"DICM"  # Part 10 preamble + prefix
    ds = pydicom.dcmread(path)
    # PS3.3 A.45.1 (standards.md): SOP class, modality DOC, MIME type, burned-in annotation
    assert ds.SOPClassUID == EncapsulatedPDFStorage
    assert ds.Modality == "DOC"
    assert ds.MIMETypeOfEncapsulatedDocument == "application/pdf"
    assert ds.BurnedInAnnotation == "YES"
    assert ds.DocumentTitle == "Leg arterial duplex map"
    assert str(ds.PatientName) == "Testcase^Morgan" and ds.PatientID == "DEMO-0101"
    assert ds.StudyDate == "20261120" and ds.PatientBirthDate == "19570602"
    doc = bytes(ds.EncapsulatedDocument)[: int(ds.EncapsulatedDocumentLength)]
    assert doc[:5] == b"%PDF-" and doc.rstrip(b"\n").endswith(b"%%EOF")


def test_pdf_bytes_round_trip_exactly(tmp_path: Path) -> None:
    import pydicom

    from diagram.output.dicom import DicomIdentity, encapsulated_pdf

    for pdf in (b"%PDF-1.5 odd length\n%%EOF", b"%PDF-1.5 even length\n%%EOF\n"):
        ds = pydicom.dcmread(io.BytesIO(encapsulated_pdf(pdf, DicomIdentity())))
        assert bytes(ds.EncapsulatedDocument)[: int(ds.EncapsulatedDocumentLength)] == pdf


def test_study_uid_is_reused_and_new_uids_made(tmp_path: Path) -> None:
    import pydicom

    from diagram.output.dicom import DicomIdentity, encapsulated_pdf

    uid = "1.2.826.0.1.3680043.8.498.12345"
    a = pydicom.dcmread(io.BytesIO(encapsulated_pdf(b"%PDF-", DicomIdentity(study_uid=uid))))
    b = pydicom.dcmread(io.BytesIO(encapsulated_pdf(b"%PDF-", DicomIdentity(study_uid=uid))))
    assert a.StudyInstanceUID == b.StudyInstanceUID == uid
    assert a.SeriesInstanceUID != b.SeriesInstanceUID and a.SOPInstanceUID != b.SOPInstanceUID


@pytest.mark.skipif(shutil.which("dciodvfy") is None, reason="dicom3tools not installed")
def test_dciodvfy_finds_no_errors(dcm: tuple[Path, bytes]) -> None:
    path, _ = dcm
    done = subprocess.run(["dciodvfy", str(path)], capture_output=True, text=True, check=False)
    report = done.stdout + done.stderr
    assert "EncapsulatedPDF" in report
    errors = [line for line in report.splitlines() if line.startswith("Error")]
    assert errors == []
    warnings = [line for line in report.splitlines() if line.startswith("Warning")]
    assert warnings == []  # Study Time and Study ID filled (they were warned about)


def test_uids_come_from_the_one_uuid_root() -> None:
    import pydicom

    from diagram.output.dicom import IMPLEMENTATION_CLASS_UID, DicomIdentity, encapsulated_pdf

    ds = pydicom.dcmread(io.BytesIO(encapsulated_pdf(b"%PDF-", DicomIdentity(accession="A-1"))))
    made = (ds.StudyInstanceUID, ds.SeriesInstanceUID, ds.SOPInstanceUID)
    for uid in (*made, ds.file_meta.ImplementationClassUID):
        # PS3.5 B.2: 2.25 followed by a UUID as one integer (below 2**128), at most 64 characters
        assert uid.startswith("2.25.") and len(uid) <= 64
        assert 0 < int(uid[5:]) < 2**128 and not uid[5:].startswith("0")
    assert ds.file_meta.ImplementationClassUID == IMPLEMENTATION_CLASS_UID
    assert ds.StudyID == "A-1" and len(ds.StudyTime) == 6
    bare = pydicom.dcmread(io.BytesIO(encapsulated_pdf(b"%PDF-", DicomIdentity())))
    assert bare.StudyID == "1"


def test_examples_carry_a_study_uid_and_a_missing_one_is_warned(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    from diagram.cli.main import main

    for example in sorted((ROOT / "examples").glob("*.yaml")):
        assert load_study(example).exam.study_uid, example.name
    bare = tmp_path / "bare.yaml"
    bare.write_text("format: 1\nlimbs: {right: {segments: {CFA: {psv: 100}}}}\n")
    for suffix, warned in ((".dcm", True), (".pdf", False)):
        with pytest.raises(SystemExit) as done:
            main(["draw", str(bare), "-o", str(tmp_path / f"map{suffix}")])
        assert done.value.code == 0
        err = capsys.readouterr().err
        assert ("the map will form a study of its own" in err) is warned
