"""Teaching export: identifiers removed everywhere, clinical content unchanged, fail closed.

The checks of the outputs here are written independently of the product's own scan: poppler's
pdftotext and pdfinfo for PDFs, pydicom reading every element for DICOM, Pillow for PNG chunks,
and the raw bytes for SVG and YAML, searched for what tests/teach_generator.py planted.
Rules: HIPAA Safe Harbor, 45 CFR 164.514(b)(2); re-identification codes, 164.514(c); DICOM
PS3.15 Annex E (basic application confidentiality profile).
"""

from __future__ import annotations

import datetime as dt
import io
import json
import re
import shutil
import subprocess
import unicodedata
from concurrent.futures import ThreadPoolExecutor
from dataclasses import replace
from pathlib import Path
from typing import Any

import pytest
import yaml
from teach_generator import fold, full_width, study, write_studies
from teach_readers import needs_poppler, output_text, run

from diagram.assess import assess
from diagram.cli.teach import FORMAT_CHOICES, teach
from diagram.errors import DiagramError
from diagram.output.results import results_document
from diagram.reading.load import load_study
from diagram.reading.study import Study
from diagram.teaching.case import (
    TEACH_FORMATS,
    CaseSettings,
    age_text,
    deidentify,
    new_case_id,
    render_case,
)
from diagram.teaching.scrub import MARKER, Identifiers, age_at_exam, identifiers_of, scrub

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "claudicant-sfa.yaml"
WIDE = {c: c + 0xFEE0 for c in range(0x21, 0x7F)}  # ASCII ➜ full width
CASE_FILE = re.compile(r"tc-[a-z]{5}-[a-z]{5}\.(pdf|svg|png|dcm|yaml)")


# --- free text ----------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def demo() -> Identifiers:
    base = load_study(EXAMPLE)
    s = replace(
        base,
        patient=replace(
            base.patient, name="Demo, Ada", id="D-0001", birth_date=dt.date(1948, 3, 14)
        ),
        exam=replace(base.exam, referrer="Dr Jane Roe-Smith", study_uid="1.2.840.99.12345.6"),
    )
    return identifiers_of(s)


@pytest.mark.parametrize(
    "text",
    [
        "Demo, Ada",
        "Ada Demo",
        "ADA DEMO",
        "Demo's leg",
        "A.D. D-0001",
        "A. D.",
        "D0001",
        "d 0001",
        full_width("D-0001"),
        unicodedata.normalize("NFKD", "Ada Demo").translate(WIDE),  # full-width letters
        unicodedata.normalize("NFD", "Ada Démo"),
        "Ada\u00adDemo",  # a soft hyphen inside
        "14/03/1948",
        "14.03.1948",
        "March 14, 1948",
        "14th of March 1948",
        "1948-03-14",
        "3/14/48",
        "19480314",
        full_width("14/03/1948"),
        "2026-11-20",  # the exam date
        "20 Nov 2026",
        "DEMO-ACC-0101",
        "Demo Vascular Lab",
        "Demo Sonographer",
        "Dr Jane Roe-Smith",
        "1.2.840.99.12345.6",
        "+44 20 7946 0958",
        "(555) 123-4567",
        "ada.demo@example.org",
        "https://portal.example.org/p/1",
        "www.example.org",
        "10.20.30.40",
        "fe80::1ff:fe23:4567:890a",
        "123456789",
        "a 93-year-old",
        "aged 91",
        "seen in March",
    ],
)
def test_identifier_forms_are_removed(demo: Identifiers, text: str) -> None:
    out, counts = scrub(f"before {text} after", demo)
    assert out.startswith("before ") and out.endswith(" after"), out
    assert MARKER in out and sum(counts.values()) >= 1
    leftover = out.replace(MARKER, " ")
    assert not re.search(r"\d{3,}", leftover), out
    assert "demo" not in fold(leftover) and "ada " not in fold(leftover)


@pytest.mark.parametrize(
    "text",
    [
        "Left calf claudication at 100 m",
        "PSV 385 cm/s, EDV 62, Vr 4.18, ABI 0.62 and TBI 0.45",
        "Occlusion 6 cm, reconstitutes at POP-BK; 3/4 of the SFA",
        "may 2 stents be needed; 50-74% band",
        "pressures 142/136 and 120/118 mmHg",
        "accession X-1234 belongs to another study",
    ],
)
def test_clinical_text_is_left_alone(demo: Identifiers, text: str) -> None:
    assert scrub(text, demo) == (text, {})


@pytest.mark.parametrize(
    ("born", "exam", "years", "shown"),
    [
        (dt.date(1936, 5, 10), dt.date(2026, 5, 9), 89, "89"),  # the day before: still 89
        (dt.date(1936, 5, 10), dt.date(2026, 5, 10), 90, "90+"),  # 164.514(b)(2)(i)(C)
        (dt.date(1936, 5, 10), dt.date(2026, 5, 11), 90, "90+"),
        (dt.date(1948, 2, 29), dt.date(2026, 2, 28), 77, "77"),  # common practice: not yet
        (dt.date(1948, 2, 29), dt.date(2026, 3, 1), 78, "78"),
        (dt.date(2030, 1, 1), dt.date(2026, 1, 1), None, None),
    ],
)
def test_age_in_whole_years_and_90_plus(
    born: dt.date, exam: dt.date, years: int | None, shown: str | None
) -> None:
    assert age_at_exam(born, exam) == years
    assert age_text(years) == shown


# --- the de-identified study --------------------------------------------------------------------


def test_clinical_content_unchanged_and_identifiers_gone(tmp_path: Path) -> None:
    for n in range(1, 13):
        data, _ = study(n, seed=7)
        (tmp_path / f"s{n}.json").write_text(json.dumps(data), "utf-8")
        source = load_study(tmp_path / f"s{n}.json")
        case = deidentify(source, new_case_id(), keep_text=True)
        before = results_document(assess(source), version="t", identified=False)
        after = results_document(assess(case.study), version="t", identified=False)
        assert before == after
        p, e = case.study.patient, case.study.exam
        assert (p.name, p.birth_date, p.id) == (None, None, case.case_id)
        assert (e.date, e.accession, e.site, e.operator, e.referrer, e.study_uid) == (None,) * 6
        assert case.study.prior is None and case.header.case_id == case.case_id
        assert case.scrub_count > 20  # every comment, the notes and the indication held some
        # built with dataclasses.replace: a sample without a comment is the very same object
        left = source.limbs[next(iter(source.limbs))]
        same = [s for s in left.segments.values() if s.comment is None]
        assert all(case.study.limbs[left.side].segments[s.id] is s for s in same)


def test_case_ids_are_random_and_unique() -> None:
    ids = {new_case_id() for _ in range(20000)}
    assert len(ids) == 20000  # 19**10 possibilities: a clash here would be a broken generator
    assert all(re.fullmatch(r"tc-[b-df-hj-np-tv-xz]{5}-[b-df-hj-np-tv-xz]{5}", i) for i in ids)


def test_a_lab_criteria_file_is_refused() -> None:
    base = load_study(EXAMPLE)
    with pytest.raises(DiagramError, match="criteria file cannot travel"):
        deidentify(replace(base, exam=replace(base.exam, criteria="x.yaml")), new_case_id())


# --- documents ---------------------------------------------------------------------------------


def test_svg_is_rebuilt_from_the_allow_list() -> None:
    from diagram.teaching.clean import CleanError, clean_svg

    dirty = (
        '<?xml version="1.0"?><!-- Demo, Ada --><svg xmlns="http://www.w3.org/2000/svg" '
        'xmlns:x="urn:x" width="10mm" height="10mm" viewBox="0 0 10 10" data-patient="Ada">'
        "<title>Ada Demo</title><desc>D-0001</desc><metadata><x:who>Ada</x:who></metadata>"
        '<defs><pattern id="band-Ada" width="4" height="4" patternUnits="userSpaceOnUse">'
        '<rect width="4" height="4" fill="#ffffff"/></pattern></defs>'
        '<g id="Ada-group" class="label" font-family="DejaVu Sans"><rect id="r" x="1" y="1" '
        'width="2" height="2" fill="url(#band-Ada)" onclick="alert(1)"/>'
        '<text x="1" y="5" font-size="3">PSV 385</text><foreignObject>Ada</foreignObject></g></svg>'
    )
    clean = clean_svg(dirty)
    assert "ada" not in clean.lower() and "d-0001" not in clean.lower()
    for gone in ("<!--", "<title", "<desc", "<metadata", "data-", "class=", "onclick", "foreign"):
        assert gone not in clean
    assert 'fill="url(#p1)"' in clean and '<pattern height="4" id="p1"' in clean
    assert ">PSV 385</text>" in clean
    with pytest.raises(CleanError):
        clean_svg(dirty.replace('font-size="3"', 'font-size="Ada"'))


@needs_poppler
def test_pdf_info_is_emptied_in_place(tmp_path: Path) -> None:
    from diagram.output.export import Drawing, render_bytes
    from diagram.teaching.clean import CleanError, strip_pdf_info

    svg = render_case(load_study(EXAMPLE), new_case_id(), CaseSettings(formats=("svg",))).files
    raw = render_bytes(Drawing(results={}, svg_pages=(next(iter(svg.values())).decode(),)), "pdf")
    assert b"/Producer" in raw and b"/CreationDate" in raw  # what cairo writes
    clean = strip_pdf_info(raw)
    assert len(clean) == len(raw) and b"/Producer" not in clean and b"/CreationDate" not in clean
    (tmp_path / "a.pdf").write_bytes(raw)
    (tmp_path / "b.pdf").write_bytes(clean)
    if shutil.which("qpdf"):
        check = subprocess.run(["qpdf", "--check", str(tmp_path / "b.pdf")], capture_output=True)
        assert check.returncode == 0, check.stdout
    text = [
        subprocess.run(["pdftotext", str(p), "-"], capture_output=True, text=True).stdout
        for p in (tmp_path / "a.pdf", tmp_path / "b.pdf")
    ]
    assert text[0] == text[1] and "PSV" in text[1]
    with pytest.raises(CleanError, match="incremental update"):
        strip_pdf_info(raw.replace(b"/Size", b"/Prev 1 /Size"))


def _case_pdf_raw() -> bytes:
    """Return a teaching case's PDF as cairo writes it (Producer, the fixed Title, a date)."""
    from diagram.output.export import render_bytes
    from diagram.teaching.case import _case_drawing, deidentify

    case = deidentify(load_study(EXAMPLE), "tc-aaaaa-bbbbb", keep_year=True, keep_text=False)
    return render_bytes(_case_drawing(case), "pdf")


@needs_poppler
def test_a_teaching_pdf_keeps_only_its_fixed_title(tmp_path: Path) -> None:
    from pypdf import PdfReader

    from diagram.drawing.sheet.header import TEACHING_TITLE

    out = render_case(load_study(EXAMPLE), new_case_id(), CaseSettings(formats=("pdf",)))
    assert out.hits == ()
    (pdf,) = out.files.values()
    assert b"/Producer" in _case_pdf_raw() and b"/Producer" not in pdf  # what cairo writes
    reader = PdfReader(io.BytesIO(pdf))
    assert reader.metadata == {"/Title": "Lower-limb arterial duplex · teaching case"}
    assert TEACHING_TITLE == "Lower-limb arterial duplex · teaching case"
    assert reader.xmp_metadata is None
    (tmp_path / "c.pdf").write_bytes(pdf)
    info = subprocess.run(["pdfinfo", str(tmp_path / "c.pdf")], capture_output=True, text=True)
    keys = {line.split(":")[0] for line in info.stdout.splitlines()}
    assert "Title:           Lower-limb arterial duplex · teaching case" in info.stdout
    assert not keys & {"Producer", "Creator", "CreationDate", "ModDate", "Author", "Subject"}
    if shutil.which("qpdf"):
        check = subprocess.run(["qpdf", "--check", str(tmp_path / "c.pdf")], capture_output=True)
        assert check.returncode == 0, check.stdout


def test_the_scan_accepts_the_fixed_title_and_no_other_metadata() -> None:
    from pypdf import PdfReader, PdfWriter

    from diagram.drawing.sheet.header import TEACHING_TITLE
    from diagram.teaching.categories import Category
    from diagram.teaching.clean import CleanError, strip_pdf_info
    from diagram.teaching.scan import read_pdf

    raw = _case_pdf_raw()
    fixed = strip_pdf_info(raw, title=TEACHING_TITLE)
    assert read_pdf(fixed, text=False).refused == frozenset()
    assert read_pdf(strip_pdf_info(raw), text=False).refused == frozenset()  # none at all
    refused = frozenset({Category.METADATA})
    assert read_pdf(raw, text=False).refused == refused  # cairo's Producer and date
    other = strip_pdf_info(raw, title="Lower-limb arterial duplex · Ada Demo")
    assert read_pdf(other, text=False).refused == refused  # a title, but not the fixed one
    elsewhere = fixed.replace(b"%%EOF", b"%/Title (Ada Demo)\n%%EOF")  # a second /Title
    assert read_pdf(elsewhere, text=False).refused == refused
    writer = PdfWriter(clone_from=PdfReader(io.BytesIO(fixed)))
    writer.add_metadata({"/Title": TEACHING_TITLE, "/Author": "Ada Demo"})
    buf = io.BytesIO()
    writer.write(buf)
    assert read_pdf(buf.getvalue(), text=False).refused == refused
    with pytest.raises(CleanError, match="no room for the fixed title"):
        strip_pdf_info(raw, title="x" * 400)


def test_png_keeps_image_chunks_only() -> None:
    from PIL import Image, PngImagePlugin

    from diagram.teaching.clean import clean_png

    buf = io.BytesIO()
    info = PngImagePlugin.PngInfo()
    info.add_text("Author", "Ada Demo")
    info.add_itxt("Comment", "D-0001")
    Image.new("RGB", (4, 3), "white").save(buf, "PNG", pnginfo=info)
    cleaned = clean_png(buf.getvalue())
    with Image.open(io.BytesIO(cleaned)) as im:
        assert im.size == (4, 3) and not getattr(im, "text", None) and b"Ada" not in cleaned
        im.load()


def test_dicom_follows_the_confidentiality_profile(tmp_path: Path) -> None:
    from pydicom import dcmread

    base = load_study(EXAMPLE)
    out = render_case(
        replace(base, exam=replace(base.exam, study_uid="1.2.3.4")),
        "tc-bbbbb-ccccc",
        CaseSettings(formats=("dcm",)),
    )
    assert out.clean, out.hits
    ds = dcmread(io.BytesIO(out.files["tc-bbbbb-ccccc.dcm"]))
    assert (str(ds.PatientName), ds.PatientID) == ("tc-bbbbb-ccccc^", "tc-bbbbb-ccccc")
    assert ds.PatientBirthDate == "" and ds.StudyDate == "" and ds.ContentDate == ""
    assert ds.AccessionNumber == "" and ds.ReferringPhysicianName == ""
    assert "InstitutionName" not in ds and ds.StudyInstanceUID != "1.2.3.4"  # action U
    assert ds.PatientIdentityRemoved == "YES" and ds.BurnedInAnnotation == "NO"
    codes = [c.CodeValue for c in ds.DeidentificationMethodCodeSequence]
    assert codes == ["113100", "113108"]  # PS3.16 CID 7050 (pydicom's code dictionary)
    if shutil.which("dciodvfy"):
        path = tmp_path / "case.dcm"
        path.write_bytes(out.files["tc-bbbbb-ccccc.dcm"])
        check = subprocess.run(["dciodvfy", str(path)], capture_output=True, text=True)
        assert "Error" not in check.stdout + check.stderr


def test_study_file_reloads_and_draws(tmp_path: Path) -> None:
    from diagram.pipeline import draw

    out = render_case(load_study(EXAMPLE), "tc-ddddd-fffff", CaseSettings(formats=("yaml",)))
    path = tmp_path / "tc-ddddd-fffff.yaml"
    path.write_bytes(out.files[path.name])
    again = load_study(path)
    assert draw(again).svg.startswith("<?xml")
    assert results_document(assess(again), version="t", identified=False) == (
        results_document(assess(load_study(EXAMPLE)), version="t", identified=False)
    )


# --- the command ---------------------------------------------------------------------------------


def test_formats_agree_and_the_command_registers(capsys: pytest.CaptureFixture[str]) -> None:
    from diagram.cli.main import cli, main

    assert FORMAT_CHOICES == TEACH_FORMATS
    assert cli.commands["teach"] is teach  # the real group, as installed
    with pytest.raises(SystemExit) as done:
        main(["teach", "--help"])
    assert done.value.code == 0
    assert "limbchart teach [OPTIONS] STUDY..." in capsys.readouterr().out


def test_link_file_only_when_asked_and_never_inside_the_output(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "out"
    code, err = run([str(EXAMPLE), "-o", str(out), "--link", str(out / "link.tsv")], capsys)
    assert code == 2 and "must not be inside the output folder" in err
    assert not (out / "link.tsv").exists() and not list(out.glob("tc-*"))
    code, err = run([str(EXAMPLE), "-o", str(out), "--quiet"], capsys)
    assert code == 0 and "1 of 1 studies written" in err
    assert sorted(p.suffix for p in out.iterdir()) == [".json", ".pdf", ".yaml"]
    assert not list(tmp_path.glob("**/*.tsv"))
    link = tmp_path / "link.tsv"
    args = [str(EXAMPLE), "-o", str(out), "--link", str(link), "--no-year", "--add"]
    code, _ = run(args, capsys)
    rows = [r.split("\t") for r in link.read_text().splitlines()[1:]]
    assert code == 0 and len(rows) == 1 and rows[0][1] == str(EXAMPLE)
    assert "exam year" not in (out / f"{rows[0][0]}.yaml").read_text()
    code, err = run(args, capsys)
    assert code == 2 and "never overwritten" in err


def test_a_folder_holding_a_teaching_set_is_refused_unless_added_to(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "out"
    assert run([str(EXAMPLE), "-o", str(out), "--quiet"], capsys)[0] == 0
    before = sorted(p.name for p in out.iterdir())
    code, err = run([str(EXAMPLE), "-o", str(out), "--quiet"], capsys)
    assert code == 2 and "holds a teaching set already (1 case in its audit.json)" in err
    assert "--add" in err and sorted(p.name for p in out.iterdir()) == before  # untouched
    code, _ = run([str(EXAMPLE), "-o", str(out), "--quiet", "--add", "--format", "svg"], capsys)
    assert code == 0
    audit = json.loads((out / "audit.json").read_text())
    assert [r["run"] for r in audit["runs"]] == [1, 2]
    assert [r["formats"] for r in audit["runs"]] == [["pdf", "yaml"], ["svg"]]
    assert [(c["run"], c["status"]) for c in audit["cases"]] == [(1, "written"), (2, "written")]
    listed = sorted(name for c in audit["cases"] for name in c["outputs"])
    assert listed == sorted(p.name for p in out.glob("tc-*"))  # one consistent record
    (out / "tc-bbbbb-bbbbb.pdf").write_bytes(b"%PDF")  # a file the audit does not list
    code, err = run([str(EXAMPLE), "-o", str(out), "--quiet", "--add"], capsys)
    assert code == 2 and "do not agree" in err
    assert len(json.loads((out / "audit.json").read_text())["cases"]) == 2
    stray = tmp_path / "stray"
    stray.mkdir()
    (stray / "tc-bbbbb-ccccc.yaml").write_text("x")
    code, err = run([str(EXAMPLE), "-o", str(stray), "--quiet"], capsys)
    assert code == 2 and "holds teaching case files but no audit.json" in err


# --- fail closed ---------------------------------------------------------------------------------


def test_an_identifier_the_scrubber_misses_stops_that_case(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    planted = write_studies(tmp_path / "in", 3, seed=3)
    leaky = tmp_path / "in" / "study-0002.yaml"
    data, what = study(2, seed=3)
    family, given = data["patient"]["name"].split(", ")
    spaced = "  ".join(" ".join(word) for word in (given, family))  # "A d a  D e m o"
    data["limbs"]["left"]["segments"]["TPT"]["comment"] = f"pt {spaced} ok"
    leaky.write_text(json.dumps(data), "utf-8")
    withheld = tmp_path / "withheld"  # by default no free text travels: nothing to find
    code, err = run([str(tmp_path / "in"), "-o", str(withheld), "--jobs", "2", "--quiet"], capsys)
    assert code == 0 and "3 of 3 studies written" in err
    for path in withheld.glob("*.yaml"):
        text = path.read_text()
        assert not re.search(r"^\s*(comment|notes|indication):", text, re.M)
        assert "# free text (notes, indication, comments) withheld" in text
    out = tmp_path / "out"
    review = tmp_path / "review.txt"
    args = ["--jobs", "2", "--quiet", "--keep-text", "--review", str(review)]
    code, err = run([str(tmp_path / "in"), "-o", str(out), *args], capsys)
    assert code == 2
    assert "input 2: not written: name found in the yaml output." in err
    assert "2 of 3 studies written as teaching cases, 1 failed." in err
    assert what.found_in(err) == [] == planted[tmp_path / "in" / "study-0001.yaml"].found_in(err)
    audit = json.loads((out / "audit.json").read_text())["cases"]
    refused = [c for c in audit if c["status"] == "refused"]
    assert len(refused) == 1 and refused[0]["outputs"] == []
    assert {"category": "name", "output": "yaml"} in refused[0]["refused"]
    assert not list(out.glob(f"{refused[0]['case_id']}*"))  # nothing of it written
    assert len(list(out.glob("tc-*"))) == 4  # the two others, pdf and yaml each
    # every kept text of the written cases, and nothing else, is in the review list
    listed = review.read_text("utf-8").splitlines()
    assert listed[-1].startswith("# Reviewed and released by:")
    rows = [line.split("\t") for line in listed if not line.startswith("#")]
    written = {c["case_id"] for c in audit if c["status"] == "written"}
    assert {case for case, _, _ in rows} == written
    for case in written:
        kept = yaml.safe_load((out / f"{case}.yaml").read_text("utf-8"))
        texts = [kept["notes"], kept["exam"]["indication"]]
        for limb in kept["limbs"].values():
            texts += [s["comment"] for s in limb["segments"].values() if "comment" in s]
            texts += [les["comment"] for les in limb.get("lesions", []) if "comment" in les]
        assert sorted(t for c, _, t in rows if c == case) == sorted(texts)
    assert sum(c["free_text"]["kept_for_review"] for c in audit) == len(rows)


def test_a_label_layout_leaks_is_caught_in_svg_and_pdf(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    import diagram.drawing.layout
    import diagram.teaching.case
    from diagram.drawing.scene import Group, Text

    real, deidentify_ = diagram.drawing.layout.layout, diagram.teaching.case.deidentify

    def leaky_deidentify(study: Study, *args: Any, **kwargs: Any) -> Any:
        case = deidentify_(study, *args, **kwargs)  # a defect: the name stays in the study
        patient = replace(case.study.patient, name=study.patient.name)
        return replace(case, study=replace(case.study, patient=patient))

    def leaky_layout(assessment: Any, *args: Any, **kwargs: Any) -> Any:
        scene = real(assessment, *args, **kwargs)  # and a label shows it
        label = Text("planted", 40, 40, str(assessment.study.patient.name), 8)
        return replace(scene, items=(*scene.items, Group("planted-group", (label,))))

    monkeypatch.setattr(diagram.teaching.case, "deidentify", leaky_deidentify)
    monkeypatch.setattr(diagram.drawing.layout, "layout", leaky_layout)
    named = tmp_path / "Testcase_Morgan_2026-11-20.yaml"  # a file named after the patient
    shutil.copy(EXAMPLE, named)
    out = tmp_path / "out"
    code, err = run([str(named), "-o", str(out), "--format", "svg", "--format", "pdf",
                     "--jobs", "1", "--quiet"], capsys)  # fmt: skip
    assert code == 2 and "testcase" not in err.lower() and "morgan" not in err.lower()
    assert "2026-11-20" not in err and "input 1: not written" in err  # named by its place
    assert "name found in the svg output." in err and "name found in the pdf output." in err
    assert not list(out.glob("tc-*"))


def test_sources_inside_the_output_folder_are_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    shutil.copy(EXAMPLE, tmp_path / "s.yaml")
    code, err = run([str(tmp_path / "s.yaml"), "-o", str(tmp_path)], capsys)
    assert code == 2 and "holds 1 of the source studies" in err
    assert not list(tmp_path.glob("tc-*")) and not (tmp_path / "audit.json").exists()


def test_metadata_left_in_a_pdf_is_caught(monkeypatch: pytest.MonkeyPatch) -> None:
    import diagram.teaching.clean

    monkeypatch.setattr(diagram.teaching.clean, "strip_pdf_info", lambda pdf, **_: pdf)
    out = render_case(load_study(EXAMPLE), new_case_id(), CaseSettings(formats=("pdf",)))
    assert {(str(h.category), h.output) for h in out.hits} >= {("document-metadata", "pdf")}


@needs_poppler
def test_the_case_pdf_is_painted_from_its_scene_with_the_svg_words(tmp_path: Path) -> None:
    """The PDF comes from the case's de-identified Scene (cairo), not from its SVG text, and
    says the same words as the allow-listed SVG converted by CairoSVG (poppler's pdftotext)."""
    from diagram.drawing.sheet.header import TEACHING_TITLE
    from diagram.output.export import ExportOptions, render_bytes
    from diagram.teaching.case import _case_drawing, deidentify
    from diagram.teaching.clean import strip_pdf_info

    case = deidentify(load_study(EXAMPLE), "tc-aaaaa-bbbbb", keep_year=True, keep_text=False)
    drawing = _case_drawing(case)
    assert drawing.scene is not None and drawing.svg_pages
    out = render_case(load_study(EXAMPLE), "tc-aaaaa-bbbbb", CaseSettings(formats=("pdf",)))
    (pdf,) = out.files.values()
    painted = render_bytes(drawing, "pdf")
    converted = render_bytes(drawing, "pdf", ExportOptions(renderer="cairosvg"))
    assert pdf == strip_pdf_info(painted, title=TEACHING_TITLE)
    assert pdf != strip_pdf_info(converted, title=TEACHING_TITLE)
    words = []
    for name, data in (("case", pdf), ("painted", painted), ("converted", converted)):
        (tmp_path / f"{name}.pdf").write_bytes(data)
        text = subprocess.run(
            ["pdftotext", str(tmp_path / f"{name}.pdf"), "-"],
            capture_output=True,
            text=True,
            check=True,
        ).stdout
        words.append(sorted(text.split()))
    assert "tc-aaaaa-bbbbb" in " ".join(words[0]) and len(words[0]) > 100
    assert words[0] == words[1] == words[2]


# --- 200 fictional studies ---------------------------------------------------------------------


@needs_poppler
def test_two_hundred_studies_leave_no_identifier(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    planted = write_studies(tmp_path / "in", 200)
    few = tmp_path / "few.txt"
    few.write_text("\n".join(str(p) for p in list(planted)[:20]))
    runs = [  # all 200 as the drawing and the study file; 20 of them in every format
        (tmp_path / "in", ["svg", "yaml"], tmp_path / "out", tmp_path / "link.tsv"),
        (few, list(TEACH_FORMATS), tmp_path / "all", tmp_path / "link-all.tsv"),
    ]
    sources: dict[str, Path] = {}
    for inputs, formats, out, link in runs:
        args = [str(inputs), "-o", str(out), "--jobs", "2", "--link", str(link), "--quiet"]
        code, err = run(args + [x for f in formats for x in ("--format", f)], capsys)
        assert code == 0, err
        rows = dict(r.split("\t") for r in link.read_text().splitlines()[1:])
        assert len(rows) == len(list(out.glob("*.yaml")))
        assert not set(rows) & set(sources)  # the same 20 inputs got new case ids
        sources.update((case, Path(src)) for case, src in rows.items())
        names = sorted(p.name for p in out.iterdir())
        assert names.pop(names.index("audit.json"))
        assert all(CASE_FILE.fullmatch(n) for n in names)
        assert len(names) == len(rows) * len(formats)

        def check(path: Path) -> tuple[str, list[str]]:
            text, prose = output_text(path, tmp_path)
            return path.name, planted[sources[path.name.split(".")[0]]].found_in(text, prose)

        with ThreadPoolExecutor(max_workers=2) as pool:  # poppler runs as separate processes
            found = [r for r in pool.map(check, sorted(out.glob("tc-*"))) if r[1]]
        assert found == []
        audit = (out / "audit.json").read_text()
        assert all(p.found_in(audit) == [] for p in planted.values())
    assert len(sources) == 220
    for case, source in list(sources.items())[::10]:  # grading unchanged, from the YAML
        again = next((tmp_path / d / f"{case}.yaml") for d in ("out", "all") if
                     (tmp_path / d / f"{case}.yaml").exists())  # fmt: skip
        assert results_document(assess(load_study(again)), version="t", identified=False) == (
            results_document(assess(load_study(source)), version="t", identified=False)
        )


# --- quiet messages -------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        (  # an unknown key, an unknown segment, a phone number as a PRF
            "format: 1\nMorgan: 1\nlimbs:\n  left:\n    segments:\n"
            "      Testcase: {psv: 100}\n      CFA: {psv: 100, prf_hz: 5551234567}\n",
            [
                "input 1: line 2: (key): is not a known key.",
                "input 1: line 6: limbs.left.segments.(key): is not a segment id or alias.",
                "input 1: line 7: limbs.left.segments.CFA.prf_hz: is refused: a pulse repetition "
                "frequency must be between 100 and 50000 Hz to be plausible.",
            ],
        ),
        (  # an anchor named after the patient
            "format: 1\nnotes: &Morgan Testcase\nexam: {indication: *Morgan}\n",
            ["input 1: line 2: (file): uses a YAML anchor or alias …: "],
        ),
    ],
)
def test_teaching_messages_echo_no_value_of_the_study(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], text: str, expected: list[str]
) -> None:
    named = tmp_path / "Testcase_Morgan_1957-06-02.yaml"  # a file named after the patient
    named.write_text(text, "utf-8")
    code, err = run([str(named), "-o", str(tmp_path / "out"), "--quiet"], capsys)
    assert code == 2
    lines = err.splitlines()[:-1]  # the last: the count of cases written
    assert len(lines) == len(expected)
    assert all(line.startswith(start) for line, start in zip(lines, expected, strict=True))
    for word in ("morgan", "testcase", "1957", "555"):
        assert word not in err.lower()


# --- the independent scan -------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("a", "b"),
    [
        ("Mueller", "Müller"),  # transliterations made equal
        ("Soerensen", "Sørensen"),
        ("Aase", "Åse"),
        ("Page", "\u0420\u0430ge"),  # Cyrillic Er and A, looking like P and a
        ("Page", "\uff30\uff41\uff47\uff45"),  # full-width letters
        ("Ada", "A\u200bd\u200da"),  # zero-width space and joiner inside
        ("Ivanova", "\u0418\u0432\u0430\u043d\u043e\u0432\u0430"),  # Cyrillic, transliterated
    ],
)
def test_the_scan_reads_spellings_alike(a: str, b: str) -> None:
    from diagram.teaching.plain import plain

    assert plain(a) in plain(b).split()


@pytest.mark.parametrize(
    ("text", "category"),
    [
        ("seen 2026-W45-1", "date"),  # ISO 8601 week date
        ("exame em 2 de novembro de 2026", "date"),
        ("2026\u5e7411\u67082\u65e5", "date"),
        ("review on 10/15", "date"),
        ("Christmas Eve 2025", "date"),
        ("born 04/51", "date"),
        ("a ninety-two-year-old", "age-over-89"),  # 45 CFR 164.514(b)(2)(i)(C)
        ("92F", "age-over-89"),
        ("F/92", "age-over-89"),
        ("92 anni", "age-over-89"),
        ("born in 1934", "age-over-89"),  # exam year 2026: 92
        ("call 555.014.2368", "phone"),
        ("0171/555 0142", "phone"),
        ("555\u2013014\u20132368", "phone"),
        ("q.bart @ example.org", "e-mail"),
        ("qbart at example dot org", "e-mail"),
        ("https://records.example.net/p/77", "url"),
        ("pacs7.harrowgate.org.uk", "url"),
        ("10.20.30.40", "ip-address"),
        ("ssn 123.45.6789", "long-number"),
        ("record 4829130", "long-number"),
        ("probe S/N LX93-004417", "id-code"),
        ("plate KX19 ZPB", "id-code"),
        ("Milbury MB4 7QT", "postcode"),
        ("zip 90210-3321", "postcode"),
        ("14 Rosebank Road", "place"),
        ("51.5072, -0.1276", "place"),
        ("Fenwick County", "place"),
    ],
)
def test_the_scan_finds_each_kind_of_identifier(text: str, category: str) -> None:
    from diagram.teaching.detect import cjk_dates, detect
    from diagram.teaching.plain import ideographs, plain

    found = {str(c) for c, _ in [*detect(plain(text), 2026), *cjk_dates(ideographs(text))]}
    assert category in found


@pytest.mark.parametrize(
    "text",
    [
        "Left calf claudication at 100 m",
        "PSV 385 cm/s, EDV 62, Vr 4.18, ABI 0.62 and TBI 0.45",
        "Occlusion 6 cm, reconstitutes at POP-BK; 3/4 of the SFA",
        "may 2 stents be needed; 50-74% band",
        "pressures 142/136 and 120/118 mmHg, 120mmHg at the ankle",
        "Polak 2004 et al; Jager 1985",
        "20/20 vision, walks 200m",
    ],
)
def test_the_scan_leaves_clinical_text_alone(text: str) -> None:
    from diagram.teaching.detect import detect
    from diagram.teaching.plain import plain

    assert detect(plain(text), 2026) == []


def test_the_sheet_says_free_text_was_withheld() -> None:
    base = load_study(EXAMPLE)
    out = render_case(base, "tc-bbbbb-ccccc", CaseSettings(formats=("svg", "yaml")))
    svg = out.files["tc-bbbbb-ccccc.svg"].decode()

    def runs(svg: str) -> set[str]:  # the text of each <text> or <tspan>, spaces around it off
        return {run.strip() for run in re.findall(r">([^<]+)</t", svg)}

    assert {"Free text", "withheld"} <= runs(svg)
    assert 'xml:space="preserve"' in svg  # the allow-list keeps the spaces between runs
    kept = render_case(base, "tc-bbbbb-ccccc", CaseSettings(formats=("svg",), keep_text=True))
    assert "kept, to be reviewed" in runs(kept.files["tc-bbbbb-ccccc.svg"].decode())
    study_file = out.files["tc-bbbbb-ccccc.yaml"].decode()
    assert "# free text (notes, indication, comments) withheld" in study_file
    assert base.notes and fold(base.notes) not in fold(study_file)


def test_an_input_argument_is_named_by_its_place(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    empty = tmp_path / "Testcase_Morgan"  # a folder named after the patient, with no study
    empty.mkdir()
    code, err = run([str(EXAMPLE), str(empty), "-o", str(tmp_path / "out")], capsys)
    assert (code, err) == (2, "argument 2: (file): is a folder with no study files in it.\n")
