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
import sys
import unicodedata
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from dataclasses import replace
from pathlib import Path

import pytest
from teach_generator import fold, full_width, study, write_studies

from diagram.assess import assess
from diagram.cli.teach import FORMAT_CHOICES, teach
from diagram.errors import DiagramError
from diagram.output.results import results_document
from diagram.reading.load import load_study
from diagram.teaching.case import TEACH_FORMATS, age_text, deidentify, new_case_id, render_case
from diagram.teaching.scrub import MARKER, Identifiers, age_at_exam, identifiers_of, scrub

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "claudicant-sfa.yaml"
WIDE = {c: c + 0xFEE0 for c in range(0x21, 0x7F)}  # ASCII ➜ full width
CASE_FILE = re.compile(r"tc-[a-z]{5}-[a-z]{5}\.(pdf|svg|png|dcm|yaml)")
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


def pdf_text(path: Path) -> str:
    """Return the PDF's text as poppler lays it out, having checked its document information."""
    cmd = ["pdftotext", "-layout", str(path), "-"]
    text = subprocess.run(cmd, check=True, capture_output=True, text=True).stdout
    info = subprocess.run(["pdfinfo", str(path)], check=True, capture_output=True, text=True)
    for key in ("Producer", "Creator", "CreationDate", "ModDate", "Author", "Title"):
        assert f"\n{key}:" not in "\n" + info.stdout, key
    assert "Metadata Stream: no" in info.stdout
    return text


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
            assert not str(elem.value).startswith("2.25."), elem.keyword
        elif elem.VR not in ("OB", "OW", "UN", "SQ", "UL", "US", "SL", "SS", "FL", "FD"):
            parts.append(str(elem.value))
    return "\n".join(parts)


def png_text(path: Path) -> str:
    """Return the PNG's ancillary chunks as text; only image chunks may be there."""
    from PIL import Image

    with Image.open(path) as im:
        assert not getattr(im, "text", {}), "PNG text chunks"
        assert set(im.info) <= {"dpi", "gamma", "srgb", "aspect"}, im.info
        return json.dumps({k: str(v) for k, v in im.info.items()})


def output_text(path: Path, tmp: Path) -> tuple[str, str]:
    """Return an output's text and the part of it a reader sees (an SVG's text nodes)."""
    kind = path.suffix
    readers: dict[str, Callable[[Path], str]] = {".pdf": pdf_text, ".png": png_text}
    readers[".dcm"] = lambda p: dicom_text(p, tmp)
    text = readers[kind](path) if kind in readers else path.read_text("utf-8")  # SVG, YAML: raw
    if kind == ".svg":  # colours such as #555555 are not numbers anyone reads
        return text, "\n".join(re.findall(r">([^<]+)<", text))
    return text, text


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
        case = deidentify(source, new_case_id())
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

    svg = render_case(load_study(EXAMPLE), new_case_id(), ("svg",)).files
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
        replace(base, exam=replace(base.exam, study_uid="1.2.3.4")), "tc-bbbbb-ccccc", ("dcm",)
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

    out = render_case(load_study(EXAMPLE), "tc-ddddd-fffff", ("yaml",))
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
    assert "limbchart teach [OPTIONS] INPUTS..." in capsys.readouterr().out


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
    code, _ = run([str(EXAMPLE), "-o", str(out), "--link", str(link), "--no-year"], capsys)
    rows = [r.split("\t") for r in link.read_text().splitlines()[1:]]
    assert code == 0 and len(rows) == 1 and rows[0][1] == str(EXAMPLE)
    assert "exam year" not in (out / f"{rows[0][0]}.yaml").read_text()
    audit = json.loads((out / "audit.json").read_text())
    assert [c["status"] for c in audit["cases"]] == ["written", "written"]  # both runs listed
    code, err = run([str(EXAMPLE), "-o", str(out), "--link", str(link)], capsys)
    assert code == 2 and "never overwritten" in err


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
    out = tmp_path / "out"
    code, err = run([str(tmp_path / "in"), "-o", str(out), "--jobs", "2", "--quiet"], capsys)
    assert code == 2
    assert "input 2 (" in err and ": not written: name found in the yaml output." in err
    assert "2 of 3 studies written as teaching cases, 1 failed." in err
    assert what.found_in(err) == [] == planted[tmp_path / "in" / "study-0001.yaml"].found_in(err)
    audit = json.loads((out / "audit.json").read_text())["cases"]
    refused = [c for c in audit if c["status"] == "refused"]
    assert len(refused) == 1 and refused[0]["outputs"] == []
    assert {"category": "name", "output": "yaml"} in refused[0]["refused"]
    assert not list(out.glob(f"{refused[0]['case_id']}*"))  # nothing of it written
    assert len(list(out.glob("tc-*"))) == 4  # the two others, pdf and yaml each


def test_a_label_layout_leaks_is_caught_in_svg_and_pdf(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    import diagram.drawing.layout
    from diagram.drawing.scene import Group, Text

    real = diagram.drawing.layout.layout

    def leaky_layout(*args: object, **kwargs: object) -> object:
        scene = real(*args, **kwargs)  # type: ignore[arg-type]
        label = Text("planted", 40, 40, "Testcase Morgan", 8)
        return replace(scene, items=(*scene.items, Group("planted-group", (label,))))

    monkeypatch.setattr(diagram.drawing.layout, "layout", leaky_layout)
    named = tmp_path / "Testcase_Morgan_2026-11-20.yaml"  # a file named after the patient
    shutil.copy(EXAMPLE, named)
    out = tmp_path / "out"
    code, err = run([str(named), "-o", str(out), "--format", "svg", "--format", "pdf",
                     "--jobs", "1", "--quiet"], capsys)  # fmt: skip
    assert code == 2 and "testcase" not in err.lower() and "morgan" not in err.lower()
    assert "2026-11-20" not in err and "_[removed]" in err  # the input named, scrubbed
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

    monkeypatch.setattr(diagram.teaching.clean, "strip_pdf_info", lambda pdf: pdf)
    out = render_case(load_study(EXAMPLE), new_case_id(), ("pdf",))
    assert {(str(h.category), h.output) for h in out.hits} >= {("document-metadata", "pdf")}


# --- 200 fictional studies ---------------------------------------------------------------------


@needs_poppler
def test_two_hundred_studies_leave_no_identifier(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    planted = write_studies(tmp_path / "in", 200)
    few = tmp_path / "few.txt"
    few.write_text("\n".join(str(p) for p in list(planted)[:20]))
    runs = [  # all 200 in the three main formats; 20 of them in every format
        (tmp_path / "in", ["pdf", "svg", "yaml"], tmp_path / "out", tmp_path / "link.tsv"),
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
