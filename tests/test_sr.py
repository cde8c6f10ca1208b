"""Import of vascular ultrasound structured reports (DICOM SR, PS3.16 TID 5100).

Every report is built here with pydicom following the template tables (tests/sr_build.py) and
validated with dicom3tools' dciodvfy; the import is then checked value by value, and refusals
by their one line and exit status.
"""

from __future__ import annotations

import io
import os
import shutil
import struct
import subprocess
from pathlib import Path

import pytest
import sr_build as b
import yaml
from click.testing import CliRunner
from pydicom.sr.codedict import codes

from diagram.cli.main import cli, main
from diagram.errors import StudyError
from diagram.reading.load import load_report, load_study
from diagram.reading.sr import study_file_text

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"


def _dciodvfy_errors(path: Path) -> list[str]:
    if shutil.which("dciodvfy") is None:
        pytest.skip("dciodvfy (dicom3tools) is not installed")
    run = subprocess.run(["dciodvfy", str(path)], capture_output=True, text=True, check=False)
    return [line for line in (run.stdout + run.stderr).splitlines() if line.startswith("Error")]


@pytest.fixture
def bilateral(tmp_path: Path) -> Path:
    return b.write(b.report(b.bilateral(), summary="Fictional report."), tmp_path / "exam.dcm")


def test_built_reports_are_valid_dicom(bilateral: Path, tmp_path: Path) -> None:
    title = b.write(
        b.report(b.bilateral(), title=codes.cid12100.USDopplerLowerExtremityVesselsReport),
        tmp_path / "t.dcm",
    )
    for path in (bilateral, title):
        assert _dciodvfy_errors(path) == []


def test_import_value_by_value(bilateral: Path) -> None:
    study, report = load_report(bilateral)
    right, left = (
        report.tree["limbs"]["right"]["segments"],
        report.tree["limbs"]["left"]["segments"],
    )
    assert right == {
        "CFA": {"psv": 112, "edv": 18},
        "SFA-P": {"psv": 90, "edv": 15},
        "SFA-M": {"psv": 92},
        "SFA-D": {"psv": 88},  # the modifier beside the finding site
        "POP-AK": {"psv": 70},  # popliteal + Proximal
        "POP-BK": {"psv": 66},  # popliteal + Distal
        "PTA-D": {"psv": 54},
    }
    assert left == {
        "CFA": {"psv": 105, "edv": 20},  # 1.05 m/s, 0.2 m/s
        "SFA-P": {"psv": 88},  # 880 mm/s
        "SFA-M": {  # two groups kept in order; the higher PSV graded
            "psv": 410,
            "edv": 45,
            "samples": [{"psv": 390, "edv": 40}, {"psv": 410, "edv": 45}],
        },
        "SFA-D": {"psv": 45},  # 0.45 m/s
    }
    assert report.tree["patient"] == {
        "name": "Demo, Ada",
        "id": "DEMO-SR-01",
        "birth_date": "1948-03-14",
        "sex": "female",
    }
    assert report.tree["exam"] == {
        "date": "2026-11-20",
        "accession": "DEMO-ACC-77",
        "site": "Demo Vascular Lab",
        "referrer": "Referrer, Demo",
        "study_uid": "2.25.300000000000000000000000000000000001",
    }
    assert report.tree["notes"] == "Fictional report."
    sfa_m = study.limbs[next(s for s in study.limbs if s.value == "left")].segments["SFA-M"]
    assert (sfa_m.psv, sfa_m.edv) == (410.0, 45.0)
    assert [(s.psv, s.edv) for s in sfa_m.samples] == [(390.0, 40.0), (410.0, 45.0)]
    assert study.exam.study_uid == "2.25.300000000000000000000000000000000001"


def test_unplaceable_items_are_named_once_each(bilateral: Path) -> None:
    study = load_study(bilateral)
    notes = study.import_notes
    vein = [n for n in notes if "Common Femoral Vein" in n]
    assert vein == [
        f"{bilateral}: warning: left 'Common Femoral Vein': is not a leg artery this map "
        "draws; its measurements are not imported."
    ]
    assert any("left SFA-M: 2 measurement groups" in n and "group 2" in n for n in notes)
    assert len(notes) == 2


@pytest.mark.parametrize(
    ("group", "expected"),
    [
        (b.Group(b.A.PoplitealArtery, b.M, (b.psv("70"),)), "needs a topographical modifier"),
        (b.Group(b.A.SuperficialFemoralArtery, None, (b.psv("70"),)), "needs a topographical"),
        (b.Group(b.A.CommonIliacArteryBifurcation, None, (b.psv("70"),)), "not a leg artery"),
        (
            b.Group(
                b.A.CommonFemoralArtery, None, (b.Measure(codes.LN.ResistivityIndex, "0.9", "1"),)
            ),
            "'Resistivity Index' is not a measurement this map draws",
        ),
    ],
)
def test_each_unplaceable_kind(tmp_path: Path, group: b.Group, expected: str) -> None:
    path = b.write(b.report([b.Section("right", (group,))]), tmp_path / "r.dcm")
    assert _dciodvfy_errors(path) == []
    study = load_study(path)
    assert len(study.import_notes) == 1
    assert expected in study.import_notes[0]


def test_unknown_unit_is_refused(tmp_path: Path) -> None:
    group = b.Group(b.A.CommonFemoralArtery, None, (b.psv("4", "km/h"),))
    path = b.write(b.report([b.Section("left", (group,))]), tmp_path / "u.dcm")
    with pytest.raises(StudyError) as err:
        load_study(path)
    assert err.value.lines() == [
        f"{path}: limbs.left.segments.CFA.psv: '4' is given in UCUM 'km/h': a velocity must "
        "come in UCUM cm/s, m/s or mm/s."
    ]


def test_group_named_after_its_vessel(tmp_path: Path) -> None:
    """A group whose concept name is the vessel itself, with the modifier on the group."""
    site = b.code_item("HAS CONCEPT MOD", codes.SCT.TopographicalModifier, b.D)
    group = b.container("CONTAINS", b.A.SuperficialFemoralArtery, [site, b.num_item(b.psv("77"))])
    laterality = b.code_item("HAS CONCEPT MOD", codes.SCT.Laterality, codes.SCT.Right)
    section = b.container("CONTAINS", codes.LN.Findings, [laterality, group])
    path = b.write(b.report([], extra=[section]), tmp_path / "v.dcm")
    assert _dciodvfy_errors(path) == []
    _, report = load_report(path)
    assert report.tree["limbs"] == {"right": {"segments": {"SFA-D": {"psv": 77}}}}


def _refusal(path: Path) -> str:
    with pytest.raises(StudyError) as err:
        load_study(path)
    lines = err.value.lines()
    assert len(lines) == 1
    return lines[0]


def test_non_vascular_report_is_refused(tmp_path: Path) -> None:
    path = b.write(
        b.report(b.bilateral(), title=codes.DCM.ImagingMeasurementReport), tmp_path / "m.dcm"
    )
    assert _dciodvfy_errors(path) == []
    assert "is a structured report but not a vascular ultrasound report" in _refusal(path)


def test_dicom_that_is_not_a_report_is_refused(tmp_path: Path) -> None:
    out = tmp_path / "map.dcm"
    result = CliRunner().invoke(cli, ["draw", str(EXAMPLES / "normal.yaml"), "-o", str(out)])
    assert result.exit_code == 0, result.output
    assert "is a DICOM file but not a structured report (SR)" in _refusal(out)


def _base_bytes() -> bytes:
    ds = b.report([])
    del ds.ContentSequence
    buf = io.BytesIO()
    ds.save_as(buf, enforce_file_format=True)
    return buf.getvalue()


def _tag(group: int, element: int) -> bytes:
    return struct.pack("<HH", group, element)


def _nested(levels: int) -> bytes:
    """A Content Sequence nested ``levels`` deep, undefined lengths (PS3.5 7.5)."""
    content = b""
    for _ in range(levels):
        item = _tag(0xFFFE, 0xE000) + b"\xff" * 4 + content + _tag(0xFFFE, 0xE00D) + b"\0" * 4
        content = (
            _tag(0x0040, 0xA730) + b"SQ\0\0" + b"\xff" * 4 + item + _tag(0xFFFE, 0xE0DD) + b"\0" * 4
        )
    return content


@pytest.mark.parametrize(
    ("payload", "rule"),
    [
        (b"\0" * 128 + b"DICM" + b"\x02\x00", "is a broken DICOM file"),
        (b"not dicom at all, but named .dcm", "is not a DICOM file"),
        ("truncated", "a value runs past the end of the file"),
        ("huge length", "a value runs past the end of the file"),
        ("nested 30", "is nested deeper than 12 levels."),
        ("nested 5000", "is nested deeper than 12 levels."),
    ],
)
def test_broken_and_hostile_files_are_refused(tmp_path: Path, payload: object, rule: str) -> None:
    if payload == "truncated":
        whole = b.write(b.report(b.bilateral()), tmp_path / "whole.dcm").read_bytes()
        payload = whole[: len(whole) // 2]
    elif payload == "huge length":  # an Encapsulated Document claiming 4 GB
        payload = _base_bytes() + _tag(0x0042, 0x0011) + b"OB\0\0" + b"\xf0\xff\xff\xff" + b"x"
    elif isinstance(payload, str) and payload.startswith("nested"):
        payload = _base_bytes() + _nested(int(payload.split()[1]))
    path = tmp_path / "bad.dcm"
    path.write_bytes(payload)  # type: ignore[arg-type]
    assert rule in _refusal(path)


def test_a_two_gigabyte_file_is_refused_by_its_size(tmp_path: Path) -> None:
    path = tmp_path / "big.dcm"
    with open(path, "wb") as handle:
        handle.write(b"\0" * 128 + b"DICM")
        handle.truncate(2 * 1024**3)  # sparse: no disk used, and never read
    assert "is over the 16 MB size limit for a study file" in _refusal(path)
    os.unlink(path)


def _run(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    with pytest.raises(SystemExit) as done:
        main(args)
    out, err = capsys.readouterr()
    return int(done.value.code or 0), out, err


def test_command_line_check_draw_and_import(
    bilateral: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    code, from_report, err = _run(["check", "--json", str(bilateral)], capsys)
    assert code == 0
    assert err.count("warning:") == 2
    study_file = tmp_path / "study.yaml"
    code, _, err = _run(["import", str(bilateral), "-o", str(study_file)], capsys)
    assert code == 0 and "Common Femoral Vein" in err
    code, from_file, _ = _run(["check", "--json", str(study_file)], capsys)
    assert code == 0
    assert from_file == from_report
    code, _, err = _run(["import", str(bilateral), "-o", str(study_file)], capsys)
    assert code == 2
    assert err.strip() == (
        f"{study_file}: exists already and was left as it was (give --overwrite to replace it)."
    )
    code, _, _ = _run(["import", str(bilateral), "-o", str(study_file), "--overwrite"], capsys)
    assert code == 0
    no_suffix = tmp_path / "report-without-suffix"
    no_suffix.write_bytes(bilateral.read_bytes())
    code, _, err = _run(["draw", str(no_suffix), "-o", str(tmp_path / "m.svg")], capsys)
    assert code == 0, err
    assert (tmp_path / "m.svg").read_bytes().startswith(b"<?xml")


def test_refusal_on_the_command_line(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = b.write(b.report([], title=codes.DCM.ImagingMeasurementReport), tmp_path / "x.dcm")
    for command in (["check"], ["draw", "-o", str(tmp_path / "x.pdf")], ["import"]):
        args = [*command, str(path)] + (
            ["-o", str(tmp_path / "x.yaml")] if command == ["import"] else []
        )
        code, _, err = _run(args, capsys)
        assert code == 2
        assert len(err.splitlines()) == 1 and "Traceback" not in err
    assert not (tmp_path / "x.pdf").exists() and not (tmp_path / "x.yaml").exists()


def test_study_text_reads_back_to_the_same_tree(bilateral: Path, tmp_path: Path) -> None:
    _, report = load_report(bilateral)
    path = tmp_path / "s.yaml"
    text = study_file_text(report.tree)
    path.write_text(text, encoding="utf-8")
    assert yaml.safe_load(text) == report.tree
    assert load_study(path).exam == load_study(bilateral).exam


def test_example_report_and_its_twin_draw_the_same_map(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    report, twin = EXAMPLES / "sr" / "bilateral.dcm", EXAMPLES / "sr" / "bilateral.yaml"
    assert _dciodvfy_errors(report) == []
    maps = []
    for source in (report, twin):
        out = tmp_path / f"{source.suffix[1:]}.svg"
        code, _, err = _run(["draw", str(source), "-o", str(out)], capsys)
        assert code == 0, err
        maps.append(out.read_bytes())
    assert maps[0] == maps[1]
