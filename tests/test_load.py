"""Study loading: every invalid fixture gives its exact lines; valid files give exact values."""

from __future__ import annotations

import datetime as dt
import subprocess
import sys
from pathlib import Path

import jsonschema
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from diagram import anatomy
from diagram.anatomy import Side
from diagram.errors import StudyError
from diagram.reading.formats import MAX_BYTES
from diagram.reading.load import load_study, load_study_text, study_schema
from diagram.reading.study import (
    GRAFT_SITES,
    Exam,
    Flow,
    Graft,
    Lesion,
    Limb,
    LimbPressures,
    Patient,
    Plaque,
    Pressures,
    Sample,
    SegmentFinding,
    Stent,
    Study,
    Waveform,
)

ROOT = Path(__file__).resolve().parent.parent
INVALID = sorted(
    p.relative_to(ROOT).as_posix()
    for p in (ROOT / "tests/data/invalid").iterdir()
    if p.suffix != ".expected"
)
VALID = sorted(p.relative_to(ROOT).as_posix() for p in (ROOT / "tests/data/valid").iterdir())


@pytest.fixture(autouse=True)
def _at_root(monkeypatch: pytest.MonkeyPatch) -> None:
    """Run from the repository root so that messages show the relative paths the tests pass."""
    monkeypatch.chdir(ROOT)


def problems(path: str) -> list[str]:
    """Return the lines of the StudyError; any other exception fails the test with its traceback."""
    with pytest.raises(StudyError) as caught:
        load_study(path)
    return caught.value.lines()


def problems_text(text: str, name: str = "mem.yaml") -> list[str]:
    with pytest.raises(StudyError) as caught:
        load_study_text(text, name, Path(name).suffix)
    return caught.value.lines()


# --- invalid fixtures -------------------------------------------------------------------------


def test_the_invalid_folder_covers_the_contract() -> None:
    assert len(INVALID) >= 24
    for path in INVALID:
        assert (ROOT / path).with_suffix(".expected").is_file(), path


@pytest.mark.parametrize("path", INVALID)
def test_invalid_fixture_gives_its_expected_lines(path: str) -> None:
    expected = (ROOT / path).with_suffix(".expected").read_text("utf-8").splitlines()
    assert expected, "an .expected file lists at least one problem"
    lines = problems(path)
    assert lines == expected
    numbered = [int(line.split(":")[1]) for line in lines if line.split(":")[1].isdigit()]
    assert numbered == sorted(numbered), "problems are reported in file order"


@pytest.mark.parametrize("path", INVALID)
def test_invalid_fixture_from_memory_gives_the_same_lines(path: str) -> None:
    data = (ROOT / path).read_bytes()
    try:
        data.decode("utf-8")
    except UnicodeDecodeError:
        pytest.skip("not UTF-8 text: held in memory only as text")
    if len(data) > MAX_BYTES or b"\0" in data:
        pytest.skip("not text")
    expected = (ROOT / path).with_suffix(".expected").read_text("utf-8").splitlines()
    with pytest.raises(StudyError) as caught:
        load_study_text(data.decode("utf-8"), path, Path(path).suffix)
    assert caught.value.lines() == expected


def test_every_problem_of_a_file_is_reported_at_once() -> None:
    lines = problems("tests/data/invalid/many_problems.yaml")
    assert [line.split(":")[1] for line in lines] == ["3", "7", "8", "12", "16", "18"]


def test_patient_identifiers_are_never_echoed() -> None:
    text = "\n".join(problems("tests/data/invalid/patient_identifiers.yaml"))
    for secret in ("1234567", "14.03.1948", "99887766", "1.2.840.0099.1", "'no'", "no as"):
        assert secret not in text
    assert "patient.birth_date: must be a date written YYYY-MM-DD." in text
    # sex is not an identifier (HIPAA Safe Harbor keeps it), so its value is shown with a hint
    assert (
        "patient.sex: 'F' must be one of female, male, other, unknown. (did you mean female?)"
        in (text)
    )
    assert "Doe" not in "\n".join(problems("tests/data/invalid/identifier_as_key.yaml"))


# --- files refused as a whole -------------------------------------------------------------------


def test_binary_file_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "scan.yaml"
    path.write_bytes(b"format: 1\nnotes: x\x00\x01\x02\xff\n")
    assert problems(str(path)) == [
        f"{path}:2: (file): is a binary file (it holds NUL bytes), not a YAML or JSON study."
    ]


def test_undecodable_utf8_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "latin1.yaml"
    path.write_bytes("format: 1\nnotes: café\n".encode("latin-1"))
    assert problems(str(path)) == [
        f"{path}:2: (file): is not UTF-8 text (byte 0xe9); it looks like Windows-1252 or Latin-1 "
        "(ISO 8859-1). (open it in a text editor and save it with the encoding UTF-8)"
    ]


@pytest.mark.parametrize(
    ("size", "accepted"),
    [(MAX_BYTES - 1, True), (MAX_BYTES, True), (MAX_BYTES + 1, False), (3 * MAX_BYTES, False)],
)
def test_size_limit_is_2_mb(tmp_path: Path, size: int, accepted: bool) -> None:
    # common practice: a study file is a few kilobytes; 2 MB bounds the work of a hostile file
    head = b'format: 1\nnotes: "'
    path = tmp_path / "big.yaml"
    path.write_bytes(head + b"x" * (size - len(head) - 2) + b'"\n')
    assert path.stat().st_size == size
    if accepted:
        assert load_study(path).notes is not None
    else:
        assert problems(str(path)) == [
            f"{path}: (file): is over the 2 MB size limit for a study file (2097152 bytes)."
        ]


def test_missing_file_is_a_problem_not_a_traceback(tmp_path: Path) -> None:
    path = tmp_path / "absent.yaml"
    assert problems(str(path)) == [f"{path}: (file): cannot be read: No such file or directory."]


@pytest.mark.parametrize(
    ("text", "name", "expected"),
    [
        ("[" * 21 + "]" * 21, "deep.json", "deep.json:1: (file): is nested deeper than 20 levels."),
        (
            "[" * 100_000 + "]" * 100_000,
            "deeper.json",
            "deeper.json:1: (file): is nested deeper than 20 levels.",
        ),
        (
            "notes: " + "[" * 21 + "]" * 21,
            "deep.yaml",
            "deep.yaml:1: (file): is nested deeper than 20 levels.",
        ),
        (
            "[" + ",".join(["1"] * 10_000) + "]",
            "wide.json",
            "wide.json:1: (file): holds more than 10000 values.",
        ),
        (
            "notes: [" + ",".join(["1"] * 10_000) + "]",
            "wide.yaml",
            "wide.yaml:1: (file): holds more than 10000 values.",
        ),
        (
            "format: 1\nnotes: *x\n",
            "alias.yaml",
            "alias.yaml:2: (file): uses a YAML anchor or alias (*x): anchors and aliases are not "
            "allowed in a study file; write each value out.",
        ),
        (
            '{"format": 1, "psv": 1' + "0" * 5000 + "}",
            "huge.json",
            "huge.json: (file): holds a number too long to read.",
        ),
    ],
)
def test_hostile_structure_is_refused_before_building(text: str, name: str, expected: str) -> None:
    assert problems_text(text, name) == [expected]


def test_nesting_at_the_limit_is_parsed() -> None:
    # 20 levels: the root mapping and 19 lists; then only the ordinary problems
    text = "notes: " + "[" * 19 + "]" * 19
    assert problems_text(text) == [
        "mem.yaml:1: format: is required.",
        "mem.yaml:1: notes: must be text.",
    ]


def test_a_yaml_number_too_long_to_read_is_a_problem() -> None:
    text = "format: 1\nlimbs: {left: {segments: {CFA: {psv: 1" + "0" * 5000 + "}}}}\n"
    assert problems_text(text) == [
        f"mem.yaml:2: limbs.left.segments.CFA.psv: 1{'0' * 39} is not a number this tool can read."
    ]


@pytest.mark.parametrize(
    ("written", "accepted"),
    [("1", True), ("1.0", True), ("2", False), ("0", False), ("true", False), ("'1'", False)],
)
def test_format_must_be_1(written: str, accepted: bool) -> None:
    text = f"format: {written}\n"
    if accepted:
        study = load_study_text(text, "f.yaml", ".yaml")
        assert study.format == 1 and type(study.format) is int
    else:
        assert problems_text(text) == [
            f"mem.yaml:1: format: {written} must be 1, the only study format this version reads."
        ]


def test_a_whitespace_only_text_is_empty() -> None:
    assert problems_text(" \n\t\n") == ["mem.yaml: (file): is empty."]


# --- boundaries ----------------------------------------------------------------------------------


def one_segment(sample: str, segment: str = "CFA") -> str:
    return f"format: 1\nlimbs:\n  right:\n    segments:\n      {segment}: {{{sample}}}\n"


@pytest.mark.parametrize(
    ("sample", "rule"),
    [
        # common practice: no human artery shows a PSV or EDV above 800 cm/s
        ("psv: 799.9", None),
        ("psv: 800", None),
        ("psv: 800.1", "800.1 is refused: PSV above 800 cm/s is not physiological."),
        ("psv: 800, edv: 800", None),
        ("psv: 800, edv: 801", "801 is refused: EDV above 800 cm/s is not physiological."),
        # a peak velocity of 0 is no flow: recorded as occluded or flow: absent, not as a PSV
        ("psv: 0.1", None),
        (
            "psv: 0",
            "0 must be greater than 0. (record no flow with occluded: true or flow: absent)",
        ),
        (
            "psv: -0.1",
            "-0.1 must be greater than 0. (record no flow with occluded: true or flow: absent)",
        ),
        # an EDV above the PSV cannot happen in one cardiac cycle (common practice)
        ("psv: 120, edv: 120", None),
        ("psv: 120, edv: 120.5", "120.5 is above the PSV (120): EDV cannot exceed PSV."),
        # the insonation angle is measured between beam and flow, 0 to 90 degrees (physics)
        ("angle: 0", None),
        ("angle: 90", None),
        ("angle: 90.5", "90.5 must be between 0 and 90 degrees."),
        ("angle: -1", "-1 must be between 0 and 90 degrees."),
        ("vr: 0.1", None),
        (
            "vr: 0.09",
            "0.09 is refused: a velocity ratio must be between 0.1 and 20 to be plausible.",
        ),
        ("psv: true", "true must be a number."),
        ("occluded: 1", "1 must be true or false."),
    ],
)
def test_sample_value_boundaries(sample: str, rule: str | None) -> None:
    text = one_segment(sample)
    if rule is None:
        load_study_text(text, "mem.yaml", ".yaml")
        return
    lines = problems_text(text)
    assert len(lines) == 1
    assert lines[0].startswith("mem.yaml:5: limbs.right.segments.CFA.")
    assert lines[0].endswith(f": {rule}")


@pytest.mark.parametrize(
    ("value", "accepted"),
    [(0, True), (399.9, True), (400, True), (400.1, False), (-1, False)],
)
def test_pressure_boundaries(value: float, accepted: bool) -> None:
    # common practice: no limb systolic pressure above 400 mmHg
    text = f"format: 1\npressures:\n  left: {{toe: {value}}}\n"
    if accepted:
        assert load_study_text(text, "p.yaml", ".yaml").pressures.left.toe == value
    else:
        assert len(problems_text(text)) == 1


@pytest.mark.parametrize(
    ("at", "from_cm", "length_cm", "accepted"),
    [
        # nominal lengths from anatomy.py (from memory): SFA-M 9 cm; SFA-M to the plantar arch
        # along the posterior tibial: 9+9+9+7+3+30+6 = 73 cm
        ("SFA-M", 9, 0.5, True),
        ("SFA-M", 9.01, 0.5, False),
        ("SFA-M", 0, 73, True),
        ("SFA-M", 0, 73.01, False),
        ("SFA-M", 3, 70, True),
        ("SFA-M", 3, 70.5, False),
        ("PER-D", 0, 7.5, True),  # the peroneal ends at PER-D
        ("PER-D", 0, 7.6, False),
    ],
)
def test_lesion_extent_boundaries(
    at: str, from_cm: float, length_cm: float, accepted: bool
) -> None:
    assert anatomy.remaining_length_cm("SFA-M") == 73
    text = (
        "format: 1\nlimbs:\n  left:\n    lesions:\n"
        f"      - {{at: {at}, from_cm: {from_cm}, length_cm: {length_cm}}}\n"
    )
    if accepted:
        study = load_study_text(text, "l.yaml", ".yaml")
        assert study.limb(Side.LEFT).lesions[0].length_cm == length_cm
    else:
        assert len(problems_text(text)) == 1


@pytest.mark.parametrize(
    ("start", "end", "accepted"),
    [
        ("SFA-D", "SFA-D", True),
        ("SFA-D", "POP-AK", True),
        ("POP-BK", "ATA-P", True),  # a branch below the start is on one path
        ("POP-AK", "SFA-D", False),
        ("PTA-P", "PER-P", False),  # siblings
    ],
)
def test_stent_runs_down_one_path(start: str, end: str, accepted: bool) -> None:
    text = f"format: 1\nlimbs:\n  left:\n    stents: [{{from: {start}, to: {end}}}]\n"
    if accepted:
        stent = load_study_text(text, "s.yaml", ".yaml").limb(Side.LEFT).stents[0]
        assert (stent.from_, stent.to, stent.line) == (start, end, 4)
    else:
        assert len(problems_text(text)) == 1


@pytest.mark.parametrize(
    ("at", "target", "accepted"),
    [
        ("POP-AK", "POP-BK", True),
        ("POP-AK", "PER-D", True),
        ("POP-AK", "POP-AK", False),
        ("POP-AK", "SFA-D", False),
        ("ATA-P", "PTA-P", False),
    ],
)
def test_reconstitution_is_strictly_downstream(at: str, target: str, accepted: bool) -> None:
    text = (
        "format: 1\nlimbs:\n  left:\n    lesions:\n"
        f"      - {{at: {at}, occluded: true, reconstitutes: {target}}}\n"
    )
    if accepted:
        lesion = load_study_text(text, "r.yaml", ".yaml").limb(Side.LEFT).lesions[0]
        assert lesion.reconstitutes == target
    else:
        assert len(problems_text(text)) == 1


@pytest.mark.parametrize(
    ("written", "accepted"),
    [
        ("2026-11-20", True),
        ("2024-02-29", True),
        ("2026-02-29", False),
        ("2026-13-01", False),
        ("2026-1-5", False),
        ("2026-11-20 10:30:00", False),
        ("20261120", False),
    ],
)
def test_dates_are_iso_calendar_dates_in_yaml_and_json(written: str, accepted: bool) -> None:
    for text, name in (
        (f"format: 1\nexam:\n  date: {written}\n", "d.yaml"),
        (f'{{"format": 1, "exam": {{"date": "{written}"}}}}', "d.json"),
    ):
        if accepted:
            study = load_study_text(text, name, Path(name).suffix)
            assert study.exam.date == dt.date.fromisoformat(written)
        else:
            assert len(problems_text(text, name)) == 1


# --- valid studies ---------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("written", "canonical"),
    [
        ("sfa mid", "SFA-M"),
        ("FA-D", "SFA-D"),
        ("fibular distal", "PER-D"),
        ("Superficial Femoral Proximal", "SFA-P"),
        ("pop ak", "POP-AK"),
        ("posterior tibial mid", "PTA-M"),
        ("Common Femoral", "CFA"),
    ],
)
def test_segment_aliases_resolve_to_canonical_ids(written: str, canonical: str) -> None:
    study = load_study("tests/data/valid/aliases.yaml")
    segments = study.limb(Side.RIGHT).segments
    assert written not in segments
    assert segments[canonical].id == canonical


def test_aliases_in_references_resolve_too() -> None:
    limb = load_study("tests/data/valid/aliases.yaml").limb(Side.RIGHT)
    assert (limb.lesions[0].at, limb.lesions[0].reconstitutes) == ("POP-BK", "TPT")
    assert (limb.stents[0].from_, limb.stents[0].to) == ("SFA-P", "SFA-D")
    assert (limb.grafts[0].from_, limb.grafts[0].to) == ("CFA", "POP-AK")
    assert list(limb.segments) == ["SFA-M", "SFA-D", "PER-D", "SFA-P", "POP-AK", "PTA-M", "CFA"]


def expected_full(source: str, yaml_lines: bool) -> Study:
    """The full demo study as values; lines are those of full.yaml or of full.json."""
    # lines read off the two files: the key of each segment, the first line of each list item
    names = "AO CFA SFA-P L-CFA L-SFA-P SFA-D PER-M ATA-D les0 les1 stent graft g-pa g-mid g-da"
    yaml_at = (24, 25, 26, 29, 30, 31, 32, 33, 35, 42, 46, 48, 52, 53, 54)
    json_at = (38, 42, 46, 56, 63, 67, 72, 75, 81, 90, 98, 106, 111, 115, 119)
    line = dict(zip(names.split(), yaml_at if yaml_lines else json_at, strict=True))
    right = Limb(
        side=Side.RIGHT,
        segments={
            "AO": SegmentFinding(psv=98.0, waveform=Waveform.TRIPHASIC, line=line["AO"], id="AO"),
            "CFA": SegmentFinding(
                psv=112.0, waveform=Waveform.TRIPHASIC, line=line["CFA"], id="CFA"
            ),
            "SFA-P": SegmentFinding(
                psv=90.5,
                edv=0.0,
                waveform=Waveform.TRIPHASIC,
                flow=Flow.ANTEGRADE,
                line=line["SFA-P"],
                id="SFA-P",
            ),
        },
    )
    left = Limb(
        side=Side.LEFT,
        segments={
            "CFA": SegmentFinding(
                psv=105.0,
                waveform=Waveform.TRIPHASIC,
                angle=60.0,
                prf_hz=10000.0,
                f0_mhz=5.0,
                line=line["L-CFA"],
                id="CFA",
            ),
            "SFA-P": SegmentFinding(
                psv=88.0, waveform=Waveform.TRIPHASIC, line=line["L-SFA-P"], id="SFA-P"
            ),
            "SFA-D": SegmentFinding(
                psv=45.0,
                waveform=Waveform.MONOPHASIC,
                comment="damped",
                line=line["SFA-D"],
                id="SFA-D",
            ),
            "PER-M": SegmentFinding(not_assessed=True, line=line["PER-M"], id="PER-M"),
            "ATA-D": SegmentFinding(
                band="75-99", plaque=Plaque.MIXED, line=line["ATA-D"], id="ATA-D"
            ),
        },
        lesions=(
            Lesion(
                psv=390.0,
                edv=40.0,
                proximal_psv=92.0,
                plaque=Plaque.CALCIFIED,
                line=line["les0"],
                at="SFA-M",
                from_cm=3.0,
                length_cm=4.0,
            ),
            Lesion(
                occluded=True, line=line["les1"], at="POP-AK", length_cm=6.0, reconstitutes="POP-BK"
            ),
        ),
        stents=(
            Stent(from_="SFA-D", to="POP-AK", from_cm=2.0, length_cm=10.0, line=line["stent"]),
        ),
        grafts=(
            Graft(
                conduit="vein",
                from_="CFA",
                to="POP-BK",
                samples={
                    "proximal_anastomosis": Sample(
                        psv=150.0, waveform=Waveform.BIPHASIC, line=line["g-pa"]
                    ),
                    "mid": Sample(psv=80.0, edv=10.0, line=line["g-mid"]),
                    "distal_anastomosis": Sample(psv=310.0, proximal_psv=90.0, line=line["g-da"]),
                },
                line=line["graft"],
            ),
        ),
    )
    return Study(
        source=source,
        patient=Patient(
            name="Demo, Ada", id="D-0001", birth_date=dt.date(1948, 3, 14), sex="female"
        ),
        exam=Exam(
            date=dt.date(2026, 11, 20),
            accession="X-1234",
            site="Example Vascular Lab",
            operator="A. Sonographer",
            referrer="B. Referrer",
            indication="Left calf claudication at 100 m",
            criteria="native",
            study_uid="1.2.826.0.1.3680043.2.1143.1",
        ),
        pressures=Pressures(
            brachial_right=142.0,
            brachial_left=136.0,
            right=LimbPressures(pt=120.0, dp=118.0, toe=88.0),
            left=LimbPressures(pt=74.0, dp=70.0, toe=40.0),
        ),
        limbs={Side.RIGHT: right, Side.LEFT: left},
        prior="../2026-05-02/study.yaml",
        notes="free text",
        format=1,
    )


def test_full_yaml_study_gives_exact_values() -> None:
    study = load_study("tests/data/valid/full.yaml")
    assert study == expected_full("tests/data/valid/full.yaml", yaml_lines=True)
    psv = study.limb(Side.LEFT).lesions[0].psv
    assert isinstance(psv, float) and not isinstance(study.format, bool)


def test_full_json_study_gives_exact_values_with_lines() -> None:
    study = load_study(Path("tests/data/valid/full.json"))
    assert study == expected_full("tests/data/valid/full.json", yaml_lines=False)


def test_source_is_the_path_as_given() -> None:
    path = "tests/data/valid/minimal.json"
    assert load_study(Path(path)).source == path
    assert load_study_text('{"format": 1}', "editor buffer", "json").source == "editor buffer"


def test_minimal_study_has_defaults() -> None:
    study = load_study("tests/data/valid/minimal.json")
    assert study.exam.criteria == "native"
    assert study.limbs == {}
    assert study.limb(Side.LEFT) == Limb(side=Side.LEFT)


# --- the schema ------------------------------------------------------------------------------


def test_schema_is_a_valid_draft_2020_12_schema() -> None:
    schema = study_schema()
    jsonschema.Draft202012Validator.check_schema(schema)
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    schema["mutated"] = True
    assert "mutated" not in study_schema()


@pytest.mark.parametrize("path", [p for p in VALID if p.endswith(".json")])
def test_valid_json_files_pass_the_published_schema(path: str) -> None:
    import json

    validator = jsonschema.Draft202012Validator(study_schema())
    assert list(validator.iter_errors(json.loads((ROOT / path).read_text("utf-8")))) == []


def test_every_object_in_the_schema_forbids_unknown_keys() -> None:
    def objects(node: object) -> list[dict[str, object]]:
        if isinstance(node, dict):
            found = [node] if node.get("type") == "object" else []
            return found + [o for v in node.values() for o in objects(v)]
        if isinstance(node, list):
            return [o for v in node for o in objects(v)]
        return []

    found = objects(study_schema())
    assert len(found) > 10
    for obj in found:
        assert obj["additionalProperties"] is False or isinstance(obj["additionalProperties"], dict)


def _fields(cls: type, *drop: str) -> set[str]:
    import dataclasses

    names = {f.name for f in dataclasses.fields(cls)} - {"line", *drop}
    return {"from" if name == "from_" else name for name in names}


def test_schema_keys_are_the_dataclass_fields() -> None:
    schema = study_schema()
    defs, top = schema["$defs"], schema["properties"]
    assert set(defs["segment"]["properties"]) == _fields(SegmentFinding, "id")
    assert set(defs["lesion"]["properties"]) == _fields(Lesion)
    assert set(defs["stent"]["properties"]) == _fields(Stent)
    assert set(defs["graft"]["properties"]) == _fields(Graft)
    assert tuple(defs["graft"]["properties"]["samples"]["properties"]) == GRAFT_SITES
    assert set(defs["limb"]["properties"]) == _fields(Limb, "side")
    assert set(defs["limb_pressures"]["properties"]) == _fields(LimbPressures)
    assert set(top["patient"]["properties"]) == _fields(Patient)
    assert set(top["exam"]["properties"]) == _fields(Exam)
    assert set(top) == _fields(Study, "source", "import_notes")  # not a file key
    assert set(top["limbs"]["properties"]) == {side.value for side in Side}


def test_exam_criteria_names_are_carried() -> None:
    text = "format: 1\nexam: {criteria: lab.yaml, stent_criteria: s.yaml, graft_criteria: g.yaml}\n"
    exam = load_study_text(text, "c.yaml", ".yaml").exam
    assert (exam.criteria, exam.stent_criteria, exam.graft_criteria) == (
        "lab.yaml",
        "s.yaml",
        "g.yaml",
    )
    assert load_study_text("format: 1\n", "c.yaml", ".yaml").exam == Exam()


def test_import_stays_light() -> None:
    # rule of the product: jsonschema is imported only inside the function that validates
    code = "import sys, diagram.reading.load; print('jsonschema' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split() == ["False"]


FUZZ_BASES = {
    name: (ROOT / "tests/data/valid" / name).read_text("utf-8")
    for name in ("full.yaml", "full.json")
}


@settings(max_examples=400, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    name=st.sampled_from(sorted(FUZZ_BASES)),
    where=st.floats(min_value=0, max_value=1),
    cut=st.integers(min_value=0, max_value=6),
    insert=st.text(max_size=6),
)
def test_damaged_files_give_a_study_or_problems_never_a_traceback(
    name: str, where: float, cut: int, insert: str
) -> None:
    base = FUZZ_BASES[name]
    pos = int(where * len(base))
    text = base[:pos] + insert + base[pos + cut :]
    try:
        load_study_text(text, name, Path(name).suffix)
    except StudyError as err:
        assert err.lines()
        for line in err.lines():
            assert line.startswith(f"{name}")
            assert "Demo, Ada" not in line and "D-0001" not in line


# --- plausible ranges ----------------------------------------------------------------------------

# Every number of the study file has a plausible range; its basis is the schema's $comment
# (common practice, from memory, or geometry) and the table in DEVELOPERS.md.
RANGES = [
    # (where in a study file, low, high, low excluded, the rule's words)
    ("vr", 0.1, 20, False, "a velocity ratio must be between 0.1 and 20"),
    ("prf_hz", 100, 50000, False, "a pulse repetition frequency must be between 100 and 50000 Hz"),
    ("f0_mhz", 1, 20, False, "a transmit frequency must be between 1 and 20 MHz"),
    ("shift_hz", 0, 50000, True, "a Doppler shift must be above 0 and at most 50000 Hz"),
]


def _range_cases() -> list[tuple[str, float, str | None]]:
    cases: list[tuple[str, float, str | None]] = []
    for key, low, high, open_low, words in RANGES:
        rule = f"is refused: {words} to be plausible."
        step = 0.01
        cases += [(key, low + step, None), (key, high, None), (key, high + step, rule)]
        cases += [(key, low, rule if open_low else None), (key, low - step, rule)]
    return cases


def lit(value: float) -> str:
    """Return a number as a study file writes it (no float noise, no exponent)."""
    return f"{value:.6f}".rstrip("0").rstrip(".")


@pytest.mark.parametrize(("key", "value", "rule"), _range_cases())
def test_sample_numbers_outside_their_plausible_range_are_refused(
    key: str, value: float, rule: str | None
) -> None:
    # a shift stands for the PSV: given with its frequency and angle, without a PSV
    others = "f0_mhz: 20, angle: 0" if key == "shift_hz" else "psv: 100"
    text = one_segment(f"{others}, {key}: {lit(value)}")
    if rule is None:
        load_study_text(text, "mem.yaml", ".yaml")
        return
    assert problems_text(text) == [
        f"mem.yaml:5: limbs.right.segments.CFA.{key}: {lit(value)} {rule}"
    ]


@pytest.mark.parametrize(
    ("value", "accepted"), [(39.9, False), (40, True), (300, True), (300.1, False)]
)
def test_brachial_pressure_range(value: float, accepted: bool) -> None:
    # from memory: below 40 mmHg no outpatient exam is done; above 300 is beyond a cuff's use
    text = f"format: 1\npressures:\n  brachial: {{right: {value:g}}}\n"
    if accepted:
        assert load_study_text(text, "p.yaml", ".yaml").pressures.brachial_right == value
    else:
        assert problems_text(text) == [
            f"mem.yaml:3: pressures.brachial.right: {value:g} is refused: a brachial pressure "
            "must be between 40 and 300 mmHg to be plausible."
        ]


def test_a_phone_number_as_prf_is_refused_by_check_and_draw(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    from diagram.cli.main import main

    study = tmp_path / "s.yaml"
    study.write_text(one_segment("psv: 100, prf_hz: 5551234567"), "utf-8")
    line = (
        f"{study}:5: limbs.right.segments.CFA.prf_hz: 5551234567 is refused: a pulse repetition "
        "frequency must be between 100 and 50000 Hz to be plausible."
    )
    for args in (["check", str(study)], ["draw", str(study), "-o", str(tmp_path / "x.svg")]):
        with pytest.raises(SystemExit) as done:
            main(args)
        assert (done.value.code, capsys.readouterr().err) == (2, line + "\n")
    assert not (tmp_path / "x.svg").exists()


def _numbers(node: object, where: str = "") -> list[tuple[str, dict[str, object]]]:
    """Return every numeric property of the schema, its $refs resolved."""
    from diagram.reading.checks import study_schema

    schema = study_schema()

    def resolve(n: dict[str, object]) -> dict[str, object]:
        ref = n.get("$ref")
        if isinstance(ref, str):
            target = schema["$defs"][ref.rsplit("/", 1)[1]]
            return {**resolve(target), **{k: v for k, v in n.items() if k != "$ref"}}
        return n

    out: list[tuple[str, dict[str, object]]] = []
    if isinstance(node, dict):
        node = resolve(node)
        if node.get("type") in ("number", "integer"):
            out.append((where, node))
        for key, value in node.items():
            if key != "$defs":
                out += _numbers(value, f"{where}/{key}")
    return out


def test_every_number_in_the_schema_has_a_range_and_its_basis() -> None:
    from diagram.reading.checks import study_schema

    found = _numbers(study_schema())
    assert len(found) >= 20
    for where, node in found:
        if where.endswith("/format"):
            continue  # a version number, one value
        assert "maximum" in node and ("minimum" in node or "exclusiveMinimum" in node), where
        basis = str(node.get("$comment", ""))
        assert any(b in basis for b in ("common practice", "from memory", "geometry")), where
