"""Messages and options a user can act on: suggestions, lists, schemas, consistent options.

Invalid study files with their exact lines are fixtures in ``tests/data/invalid`` (checked by
``test_load.py``); this module covers what is not a study file.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

from diagram import anatomy
from diagram.cli.draw import FORMATS
from diagram.cli.main import main

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"
LAB_EXAMPLE = EXAMPLES / "lab" / "example-lab.yaml"


def run(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    with pytest.raises(SystemExit) as done:
        main(args)
    out, err = capsys.readouterr()
    return int(done.value.code or 0), out, err


# --- segment names ------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("typed", "resolved", "hint"),
    [
        ("AK pop", "POP-AK", "did you mean POP-AK?"),  # level before vessel
        ("BK popliteal", "POP-BK", "did you mean POP-BK?"),
        ("popliteal", None, "did you mean POP-AK or POP-BK?"),  # both levels of the vessel
        ("femoral mid", None, "did you mean SFA-M?"),  # never another artery's mid third
        ("prox AT", "ATA-P", "did you mean ATA-P?"),
        ("dist peroneal", "PER-D", "did you mean PER-D?"),
        ("tibial dist", None, "did you mean ATA-D or PTA-D?"),
        ("SFA-X", None, "did you mean SFA-P, SFA-M or SFA-D?"),
        ("popliteel", None, "did you mean POP-AK or POP-BK?"),
        ("iliac ext", None, "did you mean EIA?"),
        (
            "LT SFA mid",
            None,
            "did you mean SFA-M? the side comes from the limb it is listed under",
        ),
        ("R CFA", None, "did you mean CFA? the side comes from the limb it is listed under"),
        ("xyz", None, None),
    ],
)
def test_suggestions_stay_within_the_vessel_named(
    typed: str, resolved: str | None, hint: str | None
) -> None:
    assert anatomy.resolve(typed) == resolved
    assert anatomy.did_you_mean(typed) == hint


def test_every_alias_listed_resolves_to_its_segment() -> None:
    for seg, names in anatomy.ALIAS_NAMES.items():
        for name in names:
            assert anatomy.resolve(name) == seg, name


def test_segments_lists_ids_levels_lengths_aliases_and_band_ids(
    capsys: pytest.CaptureFixture[str],
) -> None:
    code, out, _ = run(["segments"], capsys)
    assert code == 0
    lines = out.splitlines()
    assert lines[0].split() == ["segment", "level", "length", "name", "aliases"]
    rows = {line.split()[0]: line for line in lines[1:24]}
    assert list(rows) == list(anatomy.SEGMENT_IDS)
    assert rows["POP-AK"].split("  ")[0] == "POP-AK"
    assert " popliteal " in rows["POP-AK"] and " 9 cm " in rows["POP-AK"]
    assert rows["POP-AK"].endswith(
        "AK POP, popliteal AK, AK popliteal, popliteal above knee, above knee popliteal"
    )
    assert " 7.5 cm " in rows["PER-M"] and "fibular mid" in rows["PER-M"]
    assert "native    normal, lt50, 50-74, 75-99, occluded, not-assessed" in lines
    from diagram.criteria import load_criteria, shipped_names

    for name in shipped_names():  # every shipped set, with the band ids a band: may name
        assert f"{name:<8}  {', '.join(load_criteria(name).band_ids)}" in lines


# --- consistent options ------------------------------------------------------------------------


def test_top_level_help_names_every_output_format(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = run(["--help"], capsys)
    assert code == 0
    text = " ".join(out.split())
    assert (
        "Output formats: SVG, PDF, PNG, DICOM (.dcm, Encapsulated PDF), JSON (the computed "
        "results) and FHIR (.fhir.json, an HL7 FHIR R4 Bundle)" in text
    )
    listed = text.split("Output formats:")[1].split("Bundle")[0]
    for fmt in FORMATS:  # every format draw --format takes is named
        assert (f".{fmt}" if fmt == "dcm" else fmt.upper()) in listed, fmt
    assert "segments" in text


def test_criteria_list_has_column_headings(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = run(["criteria", "list"], capsys)
    assert code == 0
    assert out.splitlines()[0].split() == ["name", "applies", "to", "title"]
    assert out.splitlines()[2] == "native  native      Native arteries, velocity ratio"


def test_template_check_of_an_unknown_name_lists_the_shipped_ones(
    capsys: pytest.CaptureFixture[str],
) -> None:
    code, _, err = run(["template", "check", "legs"], capsys)
    assert code == 2
    assert err == (
        "legs: (file): is neither a shipped map nor a file (the shipped maps are bilateral, "
        "infrainguinal-left, infrainguinal-right; a lab's own map is given by its path, e.g. "
        "maps/our-legs.svg)\n"
    )
    code, _, err = run(["template", "check", "legs.svg"], capsys)  # a path: said as a path
    assert code == 2
    assert err == (
        "legs.svg: (file): cannot be read: No such file or directory (check the template's "
        "path; the shipped maps are bilateral, infrainguinal-left, infrainguinal-right)\n"
    )


@pytest.mark.parametrize(
    ("typed", "line"),
    [
        (
            "sfa-m",
            "Error: Invalid value for '--target': 'sfa-m' is not a tibial artery (give ATA, PTA "
            "or PER: anterior tibial, posterior tibial, peroneal; SFA-M is a femoral segment).",
        ),
        (
            "PTA-D",
            "Error: Invalid value for '--target': 'PTA-D' is not a tibial artery (did you mean "
            "PTA? the target names the whole artery).",
        ),
        (
            "xyz",
            "Error: Invalid value for '--target': 'xyz' is not a tibial artery (give ATA, PTA or "
            "PER: anterior tibial, posterior tibial, peroneal).",
        ),
    ],
)
def test_a_target_that_is_not_a_tibial_artery_says_what_to_give(
    typed: str, line: str, capsys: pytest.CaptureFixture[str]
) -> None:
    study = str(EXAMPLES / "claudicant-sfa.yaml")
    code, out, err = run(["check", study, "--target", typed], capsys)
    assert (code, out, err) == (2, "", line + "\n")


@pytest.mark.parametrize(
    ("args", "line"),
    [
        (["drwa"], "Error: No such command 'drwa'. Did you mean 'draw'? (see limbchart --help)"),
        (
            ["draw", "x.yaml"],
            "Error: Missing option '-o' / '--output'. (see limbchart draw --help)",
        ),
        (
            ["draw", "x.yaml", "-o", "x.pdf", "--fromat", "pdf"],
            "Error: No such option '--fromat'. Did you mean '--format'? (see limbchart draw --help)",
        ),
        (["check"], "Error: Missing argument 'STUDY...'. (see limbchart check --help)"),
        (
            ["schema", "--lab", "--results"],
            "Error: give --results or --lab, not both.",  # its own hint: no pointer to --help
        ),
    ],
)
def test_a_command_line_mistake_is_one_line(
    args: list[str], line: str, capsys: pytest.CaptureFixture[str]
) -> None:
    code, out, err = run(args, capsys)
    assert (code, out, err) == (2, "", line + "\n")


@pytest.mark.parametrize("typed", ["pta", "Pta", "PTA"])
def test_target_is_read_without_regard_to_case(
    typed: str, capsys: pytest.CaptureFixture[str]
) -> None:
    code, out, _ = run(
        ["check", str(EXAMPLES / "claudicant-sfa.yaml"), "--target", typed, "--json"], capsys
    )
    assert code == 0
    assert json.loads(out)["limbs"]["left"]["planning"]["target"] == "PTA"


@pytest.mark.parametrize("command", ["draw", "teach", "check", "gallery"])
def test_template_option_reads_the_same_everywhere(
    command: str, capsys: pytest.CaptureFixture[str]
) -> None:
    code, out, _ = run([command, "--help"], capsys)
    assert code == 0
    if command != "check":
        assert "--template FILE.svg|NAME" in out
    if command in ("draw", "teach", "check"):
        assert f"Usage: limbchart {command} [OPTIONS] STUDY..." in out
    if command in ("draw", "gallery"):
        assert "--overwrite" in out and "--lab" in out


def test_teach_refuses_dpi_without_a_png(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    code, _, err = run(
        ["teach", str(EXAMPLES / "normal.yaml"), "-o", str(tmp_path / "t"), "--dpi", "300"],
        capsys,
    )
    assert code == 2
    assert err.splitlines()[-1] == (
        "Error: --dpi sets the resolution of PNG output, and the output here is PDF, YAML "
        "(vector, drawn at any size); leave --dpi out."
    )
    assert not (tmp_path / "t").exists()


# --- the lab profile ----------------------------------------------------------------------------


def test_the_lab_profile_schema_is_a_json_schema_the_example_meets(
    capsys: pytest.CaptureFixture[str],
) -> None:
    import jsonschema
    import yaml

    from diagram.drawing.labprofile import load_lab_profile

    code, out, _ = run(["schema", "--lab"], capsys)
    assert code == 0
    schema = json.loads(out)
    jsonschema.Draft202012Validator.check_schema(schema)
    for path in (LAB_EXAMPLE, ROOT / "tests" / "data" / "lab" / "lab.yaml"):
        jsonschema.validate(yaml.safe_load(path.read_text("utf-8")), schema)
    profile = load_lab_profile(LAB_EXAMPLE)
    assert (profile.lab_name, profile.page, profile.template) == (
        "Harbourside Demo Vascular Lab",
        "letter",
        "bilateral",
    )


@pytest.mark.parametrize(
    "text",
    [
        "format: 2\n",
        "page: a5\n",
        "font: Arial\n",
        "colour: red\n",
        "bands: {lt50: {tint: red}}\n",
        "bands: {lt50: {hatch: rings}}\n",
        "bands: {lt50: {spacing_pt: 0.5}}\n",
        "bands: {lt50: {angle_deg: 180}}\n",
        "bands: {severe: {hatch: dots}}\n",
        'lab_name: ""\n',
    ],
)
def test_the_schema_refuses_what_the_loader_refuses(text: str, tmp_path: Path) -> None:
    import jsonschema
    import yaml

    from diagram.drawing.labprofile import LabProfileError, lab_profile_schema, load_lab_profile

    path = tmp_path / "lab.yaml"
    path.write_text(text)
    with pytest.raises(LabProfileError):
        load_lab_profile(path)
    assert not jsonschema.Draft202012Validator(lab_profile_schema()).is_valid(yaml.safe_load(text))


def test_draw_warns_when_the_profile_style_fails_the_style_check(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    lab = ROOT / "tests" / "data" / "lab" / "clash.yaml"
    out = tmp_path / "m.svg"
    code, _, err = run(
        ["draw", str(EXAMPLES / "normal.yaml"), "--lab", str(lab), "-o", str(out)], capsys
    )
    assert code == 0 and out.is_file()
    lines = err.splitlines()
    assert lines[0].startswith(f"warning: {lab}:5: bands.lt50/50-74: grey 92/84")
    assert lines[-2] == (
        "warning: the lab profile's band style fails the style check; the maps are drawn with "
        f"it all the same (see limbchart style check {lab})"
    )
    assert lines[-1] == f"wrote {out}"


def test_a_profile_that_passes_the_style_check_draws_without_a_warning(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "m.svg"
    code, _, err = run(
        ["draw", str(EXAMPLES / "normal.yaml"), "--lab", str(LAB_EXAMPLE), "-o", str(out)], capsys
    )
    assert (code, err) == (0, f"wrote {out}\n")


# --- a noncompressible vessel recorded ---------------------------------------------------------


def test_a_recorded_noncompressible_artery_gives_no_abi_and_the_tbi_is_the_index(
    capsys: pytest.CaptureFixture[str], tmp_path: Path
) -> None:
    study = tmp_path / "nc.yaml"
    study.write_text(
        "format: 1\npressures:\n  brachial: {right: 140, left: 136}\n"
        "  left: {noncompressible: [pt], dp: 90, toe: 60}\n"
        "limbs:\n  left:\n    segments:\n      CFA: {psv: 100}\n"
    )
    code, out, _ = run(["check", str(study), "--json"], capsys)
    assert code == 0
    left = json.loads(out)["limbs"]["left"]
    # 2016 AHA/ACC PAD guideline: a noncompressible ankle artery makes the ABI unreliable (as
    # an ABI > 1.40 does): no ABI figure; the TBI is the index. TBI = toe / higher brachial =
    # 60 / 140 = 0.43, abnormal (<= 0.70: the guideline's figure 2, "Abnormal (≤0.70)").
    assert (left["abi"], left["abi_category"]) == (None, "noncompressible")
    assert left["abi_basis"] == "PT noncompressible (recorded): no ABI"
    assert (left["tbi"], left["tbi_category"]) == (0.43, "abnormal")
    # WIfI ischaemia (Mills 2014) from the toe alone: toe pressure 60 mmHg >= 60 -> grade 0
    assert left["ischaemia_grade"] == 0
    warnings = [w["message"] for w in json.loads(out)["warnings"] if w["code"] == "noncompressible"]
    assert warnings == ["PT noncompressible (recorded): no ABI; rely on the TBI."]


# --- check shows what draw would ------------------------------------------------------------------


def test_check_lists_the_aorta_once_and_names_the_segments_not_assessed(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    study = tmp_path / "ao.yaml"
    study.write_text(
        "format: 1\nlimbs:\n  right:\n    segments:\n      AO: {psv: 100}\n      CFA: {psv: 90}\n"
    )
    code, out, _ = run(["check", str(study)], capsys)
    assert code == 0
    lines = out.splitlines()
    assert [line.split()[:2] for line in lines[2:4]] == [["-", "AO"], ["right", "CFA"]]
    assert sum(line.split()[1:2] == ["AO"] for line in lines) == 1  # not under each leg
    right = ", ".join(s for s in anatomy.SEGMENT_IDS if s not in ("AO", "CFA"))
    left = ", ".join(s for s in anatomy.SEGMENT_IDS if s != "AO")
    assert lines[4:7] == ["not assessed: 43 segments", f"  right: {right}", f"  left: {left}"]


def test_check_shows_the_change_since_the_prior_exam(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = run(["check", str(EXAMPLES / "followup-current.yaml")], capsys)
    assert code == 0
    lines = out.splitlines()
    start = lines.index("change since the prior exam (interval 203 days):")
    changes = lines[start + 1 : lines.index("", start)]
    assert "  right SFA-M: 50-74 -> 75-99 (worse)" in changes
    assert "  left POP-AK: normal -> occluded (new-occlusion)" in changes
    assert "  right lesion SFA-M at 3 cm: PSV 230 -> 410 cm/s (+78%); 50-74 -> 75-99" in changes
    # a fall of more than 0.15 is significant (SVS 2018 follow-up guideline; Westerband 1997):
    # left 0.95 -> 0.63 is -0.32; right 0.79 -> 0.80 is a rise
    assert (
        "  left ABI 0.95 -> 0.63 (-0.32): significant fall > 0.15 (SVS 2018; Westerband 1997)"
        in (changes)
    )
    assert "  right ABI 0.79 -> 0.80 (+0.01): not significant" in changes


def test_check_takes_folders_and_lists_like_draw(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    folder = tmp_path / "in"
    folder.mkdir()
    (folder / "a.yaml").write_text((EXAMPLES / "normal.yaml").read_text())
    (folder / "b.yaml").write_text("format: 1\npatient: {sex: M}\n")
    (tmp_path / "more").mkdir()
    (tmp_path / "more" / "c.yaml").write_text((EXAMPLES / "normal.yaml").read_text())
    (tmp_path / "list.txt").write_text("more/c.yaml\n")
    code, out, err = run(["check", str(folder), str(tmp_path / "list.txt")], capsys)
    assert code == 2
    assert err.splitlines() == [
        f"{folder / 'b.yaml'}:2: patient.sex: 'M' must be one of female, male, other, unknown. "
        "(did you mean male?)"
    ]
    heads = [line for line in out.splitlines() if line.startswith("== ")]
    assert heads == [f"== {folder / 'a.yaml'}", f"== {tmp_path / 'more' / 'c.yaml'}"]
    assert out.count("Schematic aid for the report") == 1
    code, out, _ = run(["check", str(folder), "--json"], capsys)
    assert code == 2
    docs = json.loads(out)
    assert [(d["input"], d["results"] is None) for d in docs] == [
        (str(folder / "a.yaml"), False),
        (str(folder / "b.yaml"), True),
    ]
    assert docs[1]["errors"][0].endswith("(did you mean male?)")


# --- the README and the help agree -------------------------------------------------------------

README = (ROOT / "README.md").read_text("utf-8")
USE_LINES = [
    "limbchart " + part.strip().removeprefix("limbchart ")
    for line in README.split("## Use", 1)[1].split("```sh", 1)[1].split("```", 1)[0].splitlines()
    if line.startswith("limbchart ")
    for part in re.split(r" ; | \| (?!-)", line.split("#")[0])
]


@pytest.mark.parametrize("line", USE_LINES)
def test_every_option_the_readme_shows_is_in_the_commands_help(
    line: str, capsys: pytest.CaptureFixture[str]
) -> None:
    words = line.replace("[", " ").replace("]", " ").split()
    command = [words[1]]
    if words[1] in ("criteria", "template", "style"):
        command.append(words[2])
    code, out, _ = run([*command, "--help"], capsys)
    assert code == 0, line
    for option in (w for w in words if w.startswith("--")):
        assert option in out, (line, option)


def test_the_set_up_command_writes_outside_the_checkout() -> None:
    setup = README.split("```sh", 1)[1].split("```", 1)[0]
    draw = setup.split("limbchart draw", 1)[1].split()
    target = draw[draw.index("-o") + 1]
    assert target.startswith(("~/", "/")), target  # not a file in the checkout
    ignored = (ROOT / ".gitignore").read_text().splitlines()
    assert "*.egg-info/" in ignored and "build/" in ignored  # what pip install -e . leaves
    assert "__pycache__/" in ignored  # what the first run leaves where bytecode is written


def test_gallery_refuses_an_existing_file_unless_overwrite(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "g.svg"
    out.write_text("kept")
    code, _, err = run(["gallery", "-o", str(out)], capsys)
    assert (code, err) == (
        2,
        f"{out}: exists already and was left as it was (give --overwrite to replace it).\n",
    )
    assert out.read_text() == "kept"
    code, _, err = run(["gallery", "-o", str(out), "--overwrite"], capsys)
    assert (code, err) == (0, f"wrote {out}\n")
    assert out.read_text().startswith("<?xml")


# --- a new user's mistakes, each typed into a copy of a shipped example ------------------------

CLAUDICANT = (EXAMPLES / "claudicant-sfa.yaml").read_text("utf-8")


def _docx() -> bytes:
    import io
    import zipfile

    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as archive:  # the order Word writes: the body comes late
        archive.writestr("[Content_Types].xml", "<Types/>" + " " * 8000)
        archive.writestr("_rels/.rels", "<Relationships/>")
        archive.writestr("word/document.xml", "<w:document/>")
    return buffer.getvalue()


def _json_with_trailing_comma() -> bytes:
    text = json.dumps({"format": 1, "patient": {"id": "DEMO-9", "sex": "male"}}, indent=2)
    return text.replace('"sex": "male"', '"sex": "male",').encode()


MISTAKES: list[tuple[str, str, bytes, str]] = [
    # (name, suffix, file content, the one line expected after "FILE:")
    (
        "tab",
        ".yaml",
        CLAUDICANT.replace('  id: "DEMO-0101"', '\tid: "DEMO-0101"').encode(),
        "5: (file): is not valid YAML: a tab indents this line. (indent with spaces; YAML does "
        "not allow tabs for indentation)",
    ),
    (
        "comma",
        ".json",
        _json_with_trailing_comma(),
        "5: (file): is not valid JSON: a comma after the last item of the object. (remove the "
        "trailing comma; JSON does not allow one)",
    ),
    (
        "utf16",
        ".yaml",
        CLAUDICANT.encode("utf-16"),
        "1: (file): is not UTF-8 text: it looks like UTF-16. (open it in a text editor and save "
        "it with the encoding UTF-8)",
    ),
    (
        "latin1",
        ".yaml",
        CLAUDICANT.replace("Demo Vascular Lab", "Démo Vascular Lab").encode("latin-1"),
        "11: (file): is not UTF-8 text (byte 0xe9); it looks like Windows-1252 or Latin-1 "
        "(ISO 8859-1). (open it in a text editor and save it with the encoding UTF-8)",
    ),
    (
        "docx",
        ".yaml",
        _docx(),
        "1: (file): is a Word (.docx) document, not a YAML or JSON study. (save it from the word "
        "processor as plain text (.txt), then rename it to .yaml or .json)",
    ),
    (
        "unit",
        ".yaml",
        CLAUDICANT.replace("psv: 385", "psv: 385 cm/s").encode(),
        "67: limbs.left.lesions[0].psv: '385 cm/s' must be a number. (drop the unit and write "
        "385: velocities are in cm/s)",
    ),
    (
        "sex",
        ".yaml",
        CLAUDICANT.replace("sex: male", "sex: M").encode(),
        "7: patient.sex: 'M' must be one of female, male, other, unknown. (did you mean male?)",
    ),
    (
        "date",
        ".yaml",
        CLAUDICANT.replace("date: 2026-11-20", "date: 02/11/2026").encode(),
        "9: exam.date: must be a date written YYYY-MM-DD. (e.g. 2026-11-02 for 2 November 2026: "
        "a day and month split by '/' are read day-first in some countries, month-first in "
        "others, so they are not guessed; the date is not repeated here, as it can identify the "
        "patient)",
    ),
    (
        "nc",
        ".yaml",
        CLAUDICANT.replace("left: {pt: 96,", "left: {pt: NC,").encode(),
        "19: pressures.left.pt: 'NC' must be a number. (a vessel the cuff could not compress has "
        "no pressure: leave pt out and list it as noncompressible: [pt] under pressures.left; the "
        "ABI is then not given and the TBI (toe pressure) is the index)",
    ),
    (
        "popliteal",
        ".yaml",
        CLAUDICANT.replace("- at: SFA-M", "- at: popliteal").encode(),
        "64: limbs.left.lesions[0].at: 'popliteal' is not a segment id or alias. (did you mean "
        "POP-AK or POP-BK?)",
    ),
    (
        "femoral-mid",
        ".yaml",
        CLAUDICANT.replace("- at: SFA-M", "- at: femoral mid").encode(),
        "64: limbs.left.lesions[0].at: 'femoral mid' is not a segment id or alias. (did you mean "
        "SFA-M?)",
    ),
    (
        "side",
        ".yaml",
        CLAUDICANT.replace("- at: SFA-M", "- at: LT SFA prox").encode(),
        "64: limbs.left.lesions[0].at: 'LT SFA prox' is not a segment id or alias. (did you mean "
        "SFA-P? the side comes from the limb it is listed under)",
    ),
]


@pytest.mark.parametrize(
    ("name", "suffix", "content", "line"), MISTAKES, ids=[m[0] for m in MISTAKES]
)
def test_a_typing_mistake_gets_one_line_that_says_what_to_do(
    name: str,
    suffix: str,
    content: bytes,
    line: str,
    tmp_path: Path,
    capsys: pytest.CaptureFixture[str],
) -> None:
    study = tmp_path / f"{name}{suffix}"
    study.write_bytes(content)
    out = tmp_path / "map.pdf"
    code, stdout, err = run(["draw", str(study), "-o", str(out)], capsys)
    assert (code, stdout, err) == (2, "", f"{study}:{line}\n")
    assert sorted(p.name for p in tmp_path.iterdir()) == [study.name]  # nothing written
