"""The command line: exit codes, one line per problem, no traceback, no partial output."""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from diagram.cli.main import main

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "examples").glob("*.yaml"))
INVALID = ROOT / "tests" / "data" / "invalid"


def run(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    with pytest.raises(SystemExit) as done:
        main(args)
    out, err = capsys.readouterr()
    return int(done.value.code or 0), out, err


@pytest.mark.parametrize("example", EXAMPLES, ids=lambda p: p.name)
def test_check_examples_exit_0_with_table_and_caution(
    example: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    code, out, err = run(["check", str(example)], capsys)
    assert code == 0, err
    assert out.splitlines()[1].split()[:3] == ["side", "segment", "band"]
    assert "not a substitute for the images" in out


def test_check_json_has_the_documented_fields(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = run(["check", str(ROOT / "examples" / "claudicant-sfa.yaml"), "--json"], capsys)
    assert code == 0
    doc = json.loads(out)
    left = doc["limbs"]["left"]
    assert left["segments"]["SFA-M"]["band"] == "75-99"
    assert left["segments"]["CFA"]["vr"] is None  # no upstream sample: not computable
    assert left["segments"]["SFA-P"]["psv"] == 92
    lesion = left["lesions"][0]
    # 385 / 92 (SFA-P, nearest non-stenotic upstream sample) = 4.18 -> 75-99 (Polak 2004: Vr >= 4)
    assert (lesion["at"], lesion["band"], lesion["vr"], lesion["length_cm"]) == (
        "SFA-M",
        "75-99",
        4.18,
        3,
    )
    assert lesion["reference"]["segment"] == "SFA-P"
    assert doc["warnings"] == []  # a focal SFA stenosis with sound measurements: nothing to flag
    # identifiers appear only in the study echo of a normal (identified) export
    assert doc["study"]["patient"]["id"] == "DEMO-0101"
    del doc["study"]
    assert "Testcase" not in json.dumps(doc) and "DEMO-0101" not in json.dumps(doc)
    # pressure indices: 2016 AHA/ACC PAD guideline; left PT 96 / brachial 138 = 0.696 -> 0.70
    assert (left["abi"], left["abi_category"]) == (0.7, "abnormal")
    assert left["tbi"] == 0.51 and left["ischaemia_grade"] == 1  # toe 70 / 138; WIfI ABI 0.60-0.79


def test_check_json_warnings_carry_their_fields(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = run(["check", str(ROOT / "examples" / "clti-multilevel.yaml"), "--json"], capsys)
    assert code == 0
    # 2016 AHA/ACC PAD guideline and WIfI: ABI < 0.40, ankle < 50 mmHg, toe and TcPO2 < 30 mmHg
    assert json.loads(out)["warnings"] == [
        {
            "code": "clti-pressure",
            "side": "right",
            "segment": None,
            "message": "pressures in the range of chronic limb-threatening ischaemia: "
            "ABI 0.29 < 0.40, ankle 44 < 50 mmHg, toe 18 < 30 mmHg, TcPO2 16 < 30 mmHg.",
        }
    ]


def test_schema_is_a_json_schema(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = run(["schema"], capsys)
    assert code == 0
    schema = json.loads(out)
    assert schema["$schema"].startswith("https://json-schema.org/draft/2020-12")
    import jsonschema

    jsonschema.Draft202012Validator.check_schema(schema)


@pytest.mark.parametrize(
    "name", ["many_problems.yaml", "duplicate_keys.yaml", "alias_bomb.yaml", "json_problems.json"]
)
def test_invalid_study_exits_2_with_the_expected_lines(
    name: str, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(ROOT)
    path = f"tests/data/invalid/{name}"
    code, out, err = run(["check", path], capsys)
    assert code == 2
    expected = (INVALID / name).with_suffix(".expected").read_text().splitlines()
    assert err.splitlines() == expected
    assert "Traceback" not in err and out == ""


def test_missing_file_is_a_one_line_error(capsys: pytest.CaptureFixture[str]) -> None:
    code, _, err = run(["check", "no/such/study.yaml"], capsys)
    assert code == 2
    assert len(err.splitlines()) == 1 and "no/such/study.yaml" in err


def test_unknown_criteria_name_gets_a_hint(capsys: pytest.CaptureFixture[str]) -> None:
    code, _, err = run(["check", str(EXAMPLES[0]), "--criteria", "natve"], capsys)
    assert code == 2
    assert "did you mean native?" in err


def test_python_dash_m_is_the_same_command() -> None:
    done = subprocess.run(
        [sys.executable, "-m", "diagram", "--version"], capture_output=True, text=True, check=False
    )
    assert done.returncode == 0
    assert done.stdout.startswith("limbchart, version ")


def test_lab_profile_names_the_lab_and_sets_page_and_template(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "map.svg"
    lab = ROOT / "tests" / "data" / "lab" / "lab.yaml"
    code, _, err = run(["draw", str(EXAMPLES[0]), "--lab", str(lab), "-o", str(out)], capsys)
    assert code == 0, err
    svg = out.read_text()
    assert ">Riverside Demo Vascular Lab<" in svg and ">Demo Vascular Lab<" not in svg
    assert 'width="8.5in"' in svg  # the profile's Letter page
    assert "#7FB3D5" in svg.upper() or "#7fb3d5" in svg  # the profile's 50-74 tint
    # an explicit option beats the profile
    args = ["draw", str(EXAMPLES[0]), "--lab", str(lab), "--page", "a4", "-o", str(out)]
    code, _, _ = run([*args, "--overwrite"], capsys)
    assert code == 0 and 'width="210mm"' in out.read_text()


def test_bad_lab_profile_is_one_line_per_problem(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    lab = ROOT / "tests" / "data" / "lab" / "bad.yaml"
    out = tmp_path / "x.svg"
    code, _, err = run(["draw", str(EXAMPLES[0]), "--lab", str(lab), "-o", str(out)], capsys)
    assert code == 2 and "Traceback" not in err and not out.exists()
    expected = (ROOT / "tests" / "data" / "lab" / "bad.expected").read_text().splitlines()
    assert err.splitlines() == [line.replace("{f}", str(lab)) for line in expected]


def test_every_command_is_on_the_installed_group() -> None:
    """The group the ``limbchart`` script runs lists every command; no test adds one itself."""
    from diagram.cli.main import cli

    assert sorted(cli.commands) == [
        "check",
        "criteria",
        "draw",
        "edit",
        "gallery",
        "import",
        "schema",
        "segments",
        "style",
        "teach",
        "template",
    ]


def test_the_script_lists_every_command() -> None:
    from diagram.cli.main import cli

    out = subprocess.run(
        [sys.executable, "-m", "diagram", "--help"], capture_output=True, text=True, check=True
    ).stdout
    block = out.split("Commands:\n")[1].split("\n\n")[0]
    assert [line.split()[0] for line in block.splitlines()] == sorted(cli.commands)


@pytest.mark.parametrize(
    "example",
    [*EXAMPLES, *sorted((ROOT / "examples" / "sr").glob("*.dcm"))],
    ids=lambda p: p.name,
)
def test_check_json_prints_the_bytes_draw_writes(
    example: Path, tmp_path: Path, capsysbinary: pytest.CaptureFixture[bytes]
) -> None:
    with pytest.raises(SystemExit) as done:
        main(["check", "--json", str(example)])
    assert not done.value.code
    printed = capsysbinary.readouterr().out
    out = tmp_path / "results.json"
    with pytest.raises(SystemExit) as done:
        main(["draw", str(example), "-o", str(out)])
    assert not done.value.code
    assert printed == out.read_bytes()
    assert printed.endswith(b"}\n") and b"\\u2014" not in printed  # UTF-8, not escapes


def test_check_json_of_several_studies_is_utf8_like_one(
    tmp_path: Path, capsysbinary: pytest.CaptureFixture[bytes]
) -> None:
    names = ("claudicant-sfa.yaml", "clti-multilevel.yaml")
    for name in names:
        shutil.copy(ROOT / "examples" / name, tmp_path / name)
    with pytest.raises(SystemExit) as done:
        main(["check", "--json", str(tmp_path)])
    assert not done.value.code
    printed = capsysbinary.readouterr().out
    assert b"\\u00b7" not in printed and b"\\u2014" not in printed  # no ASCII escapes
    assert "\u2014".encode() in printed and printed.endswith(b"]\n")  # an em dash, as UTF-8
    singles = []
    for name in names:
        with pytest.raises(SystemExit):
            main(["check", "--json", str(tmp_path / name)])
        singles.append(json.loads(capsysbinary.readouterr().out.decode("utf-8")))
    docs = json.loads(printed.decode("utf-8"))
    assert [d["input"] for d in docs] == [str(tmp_path / n) for n in names]
    assert [d["results"] for d in docs] == singles
