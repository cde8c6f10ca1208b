"""Many studies at once: one bad study does not stop the batch; nothing partial is left.

Output names are all decided before anything is drawn; a clash refuses the batch; a file is
never replaced without --overwrite; the manifest records which study became which file.
"""

from __future__ import annotations

import json
import os
import shutil
from pathlib import Path
from typing import Any

import pytest

from diagram.cli.main import main

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"


def run(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str]:
    with pytest.raises(SystemExit) as done:
        main(args)
    return int(done.value.code or 0), capsys.readouterr().err


@pytest.mark.parametrize("jobs", ["1", "2"])
def test_bad_study_is_reported_and_the_rest_are_drawn(
    inputs: Path, tmp_path: Path, jobs: str, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "out"
    code, err = run(
        [
            "draw",
            str(inputs),
            "-o",
            f"{out}/",
            "--format",
            "svg",
            "--format",
            "json",
            "--jobs",
            jobs,
        ],
        capsys,
    )
    assert code == 2
    assert sorted(os.listdir(out)) == [
        "manifest.json",
        "map-0001.json",
        "map-0001.svg",
        "map-0002.json",
        "map-0002.svg",
        "map-0003.json",
        "map-0003.svg",
    ]
    assert "zz-broken.yaml:2: limbs.left.segments.SFA-X: is not a segment id" in err
    assert err.strip().splitlines()[-1] == "3 of 4 studies drawn, 1 failed."
    assert "Traceback" not in err
    manifest = read_manifest(out)
    assert manifest["batch"] == {"status": "finished", "drawn": 3, "failed": 1, "not_drawn": 0}
    assert [(s["input"], s["outputs"], s["status"]) for s in manifest["studies"]] == [
        (str(inputs / "claudicant-sfa.yaml"), ["map-0001.svg", "map-0001.json"], "drawn"),
        (str(inputs / "multilevel-occlusion.yaml"), ["map-0002.svg", "map-0002.json"], "drawn"),
        (str(inputs / "normal.yaml"), ["map-0003.svg", "map-0003.json"], "drawn"),
        (str(inputs / "zz-broken.yaml"), [], "failed"),
    ]
    assert manifest["studies"][3]["errors"][0].startswith(
        f"{inputs / 'zz-broken.yaml'}:2: limbs.left.segments.SFA-X: is not a segment id"
    )


def read_manifest(out: Path) -> dict[str, Any]:
    doc = json.loads((out / "manifest.json").read_text("utf-8"))
    assert isinstance(doc, dict)
    return doc


def test_existing_files_are_kept_unless_overwrite(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "out"
    study = str(EXAMPLES / "normal.yaml")
    assert run(["draw", study, "-o", f"{out}/", "--format", "svg", "--jobs", "1"], capsys)[0] == 0
    (out / "map-0001.svg").write_text("mine")
    code, err = run(["draw", study, "-o", f"{out}/", "--format", "svg", "--jobs", "1"], capsys)
    assert code == 2
    assert err.splitlines() == [
        f"{out / 'map-0001.svg'}: exists already and was left as it was (give --overwrite to "
        "replace it).",
        "nothing was drawn.",
    ]
    assert (out / "map-0001.svg").read_text() == "mine"
    code, _ = run(
        ["draw", study, "-o", f"{out}/", "--format", "svg", "--jobs", "1", "--overwrite"], capsys
    )
    assert code == 0 and (out / "map-0001.svg").read_text().startswith("<?xml")


def test_default_names_carry_no_identifier_and_patterns_are_checked(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "out"
    study = str(EXAMPLES / "claudicant-sfa.yaml")
    run(["draw", study, "-o", f"{out}/", "--format", "json", "--jobs", "1", "--quiet"], capsys)
    assert sorted(os.listdir(out)) == ["manifest.json", "map-0001.json"]
    code, _ = run(
        [
            "draw",
            study,
            "-o",
            f"{out}/",
            "--format",
            "json",
            "--jobs",
            "1",
            "--name",
            "{accession}-{stem}",
        ],
        capsys,
    )
    assert code == 0 and (out / "DEMO-ACC-0101-claudicant-sfa.json").exists()
    code, err = run(["draw", study, "-o", f"{out}/", "--name", "{surname}"], capsys)
    assert code == 2 and err.startswith("--name '{surname}': is not a file name pattern")


def test_manifest_lists_paths_relative_to_itself(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    shutil.copy(EXAMPLES / "normal.yaml", tmp_path / "a.yaml")
    (tmp_path / "list.txt").write_text("# studies\na.yaml\n\nmissing.yaml\n")
    code, err = run(
        [
            "draw",
            str(tmp_path / "list.txt"),
            "-o",
            f"{tmp_path}/out/",
            "--format",
            "svg",
            "--jobs",
            "1",
        ],
        capsys,
    )
    assert code == 2
    assert "missing.yaml: (file): cannot be read" in err
    assert sorted(os.listdir(tmp_path / "out")) == ["manifest.json", "map-0001.svg"]


def test_quiet_batch_prints_only_the_summary(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    code, err = run(
        [
            "draw",
            str(EXAMPLES / "normal.yaml"),
            str(EXAMPLES / "claudicant-sfa.yaml"),
            "-o",
            f"{tmp_path}/",
            "--format",
            "json",
            "--jobs",
            "1",
            "--quiet",
        ],
        capsys,
    )
    assert code == 0 and err == "2 of 2 studies drawn, 0 failed.\n"


# --- names decided before anything is drawn -----------------------------------------------------


@pytest.fixture()
def same_stem(tmp_path: Path) -> tuple[Path, Path]:
    """Two different patients' studies, both named study.yaml, in folders a/ and b/."""
    first, second = tmp_path / "a" / "study.yaml", tmp_path / "b" / "study.yaml"
    for path, example in ((first, "normal.yaml"), (second, "claudicant-sfa.yaml")):
        path.parent.mkdir()
        shutil.copy(EXAMPLES / example, path)
    return first, second


@pytest.mark.parametrize("attempt", range(5))  # repeated: a race between workers would show
def test_two_studies_sharing_a_name_refuse_the_batch_before_anything_is_written(
    same_stem: tuple[Path, Path], tmp_path: Path, attempt: int, capsys: pytest.CaptureFixture[str]
) -> None:
    first, second = same_stem
    out = tmp_path / "out"
    args = ["draw", str(first.parent), str(second.parent), "-o", f"{out}/", "--name", "{stem}"]
    code, err = run([*args, "--format", "json", "--jobs", "2"], capsys)
    assert code == 2
    assert err.splitlines() == [
        f"{out / 'study.json'}: would be written for {first}, {second} (give --name a field "
        "that tells them apart, such as {n}, {stem} or {folder}, e.g. --name '{folder}-{stem}').",
        "nothing was drawn.",
    ]
    assert not out.exists()


@pytest.mark.parametrize("attempt", range(5))
def test_every_study_drawn_is_a_file_of_its_own_with_two_workers(
    same_stem: tuple[Path, Path], tmp_path: Path, attempt: int, capsys: pytest.CaptureFixture[str]
) -> None:
    first, second = same_stem
    out = tmp_path / "out"
    args = ["draw", str(first), str(second), str(EXAMPLES / "normal.yaml"), "-o", f"{out}/"]
    code, err = run(
        [*args, "--name", "{folder}-{stem}", "--format", "json", "--jobs", "2", "--quiet"], capsys
    )
    assert (code, err) == (0, "3 of 3 studies drawn, 0 failed.\n")
    files = sorted(os.listdir(out))
    assert files == ["a-study.json", "b-study.json", "examples-normal.json", "manifest.json"]
    # each file shows its own patient (the results echo the study)
    ids = {n: json.loads((out / n).read_text())["study"]["patient"]["id"] for n in files[:3]}
    assert ids["a-study.json"] == ids["examples-normal.json"] == "DEMO-0303"
    assert ids["b-study.json"] == "DEMO-0101"
    entries = read_manifest(out)["studies"]
    assert [(e["input"], e["outputs"]) for e in entries] == [
        (str(first), ["a-study.json"]),
        (str(second), ["b-study.json"]),
        (str(EXAMPLES / "normal.yaml"), ["examples-normal.json"]),
    ]


def test_a_shared_patient_id_names_every_study_that_shares_it(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    folder = tmp_path / "in"
    folder.mkdir()
    names = ("followup-current.yaml", "followup-prior.yaml", "normal.yaml", "stent-and-graft.yaml")
    for name in names:  # three of them are exams of patient DEMO-0404
        shutil.copy(EXAMPLES / name, folder / name)
    out = tmp_path / "out"
    code, err = run(
        ["draw", str(folder), "-o", f"{out}/", "--name", "{patient_id}", "--jobs", "2"], capsys
    )
    assert code == 2
    shared = ", ".join(str(folder / n) for n in names if n != "normal.yaml")
    assert err.splitlines() == [
        f"{out / 'DEMO-0404.pdf'}: would be written for {shared} (give --name a field that tells "
        "them apart, such as {n}, {stem} or {folder}, e.g. --name '{folder}-{stem}').",
        "nothing was drawn.",
    ]
    assert not out.exists()


def test_names_differing_only_in_case_clash(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # many file systems (macOS, Windows, shared drives) hold one file for both names
    upper, lower = tmp_path / "A.yaml", tmp_path / "a.yaml"
    shutil.copy(EXAMPLES / "normal.yaml", upper)
    shutil.copy(EXAMPLES / "claudicant-sfa.yaml", lower)
    out = tmp_path / "out"
    code, err = run(["draw", str(upper), str(lower), "-o", f"{out}/", "--name", "{stem}"], capsys)
    assert code == 2 and f"{out / 'A.pdf'}: would be written for {upper}, {lower} (" in err
    assert not out.exists()


def test_the_manifest_name_is_not_an_output_name(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    study = tmp_path / "manifest.yaml"
    shutil.copy(EXAMPLES / "normal.yaml", study)
    out = tmp_path / "out"
    code, err = run(
        ["draw", str(study), "-o", f"{out}/", "--name", "{stem}", "--format", "json"], capsys
    )
    assert code == 2
    assert err.splitlines() == [
        f"{out / 'manifest.json'}: is the batch manifest's name, not one for {study} "
        "(choose another --name).",
        "nothing was drawn.",
    ]


@pytest.mark.parametrize("pattern", ["{surname}", "{stem:04d}", "{n", "a/{n}", "{0}", ""])
def test_a_bad_name_pattern_is_refused(
    pattern: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    code, err = run(
        ["draw", str(EXAMPLES / "normal.yaml"), "-o", f"{tmp_path}/out/", "--name", pattern],
        capsys,
    )
    assert code == 2
    assert err.splitlines() == [
        f"--name {pattern!r}: is not a file name pattern: use only the fields {{n}}, {{stem}}, "
        "{folder}, {accession}, {patient_id}, {exam_date}, and no / or \\ (e.g. --name "
        "'{folder}-{stem}')."
    ]
    assert not (tmp_path / "out").exists()


def test_a_file_made_by_someone_else_during_the_batch_is_never_replaced(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    import diagram.batch.run as batch

    out = tmp_path / "out"
    real = batch.draw_one

    def another_process_first(task: batch.BatchTask) -> batch.BatchResult:
        if task.n == 2:  # after the names were checked, before this study is written
            (out / "map-0002.json").write_text("another process's file")
        return real(task)

    monkeypatch.setattr(batch, "draw_one", another_process_first)
    studies = [
        str(EXAMPLES / n) for n in ("normal.yaml", "claudicant-sfa.yaml", "clti-multilevel.yaml")
    ]
    code, err = run(["draw", *studies, "-o", f"{out}/", "--format", "json", "--jobs", "1"], capsys)
    assert code == 2
    assert f"{out / 'map-0002.json'}: exists already and was left as it was" in err
    assert err.splitlines()[-1] == "2 of 3 studies drawn, 1 failed."
    assert (out / "map-0002.json").read_text() == "another process's file"
    assert sorted(os.listdir(out)) == [
        "manifest.json",
        "map-0001.json",
        "map-0002.json",
        "map-0003.json",
    ]
    assert [e["status"] for e in read_manifest(out)["studies"]] == ["drawn", "failed", "drawn"]


def test_a_study_unreadable_for_its_name_fails_and_the_rest_are_drawn(
    inputs: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "out"
    args = ["draw", str(inputs), "-o", f"{out}/", "--name", "{accession}", "--format", "json"]
    code, err = run([*args, "--jobs", "1", "--quiet"], capsys)
    assert code == 2
    assert err.splitlines()[-1] == "3 of 4 studies drawn, 1 failed."
    assert sorted(os.listdir(out)) == [
        "DEMO-ACC-0101.json",
        "DEMO-ACC-0202.json",
        "DEMO-ACC-0303.json",
        "manifest.json",
    ]
    assert read_manifest(out)["batch"]["failed"] == 1


def test_a_second_batch_keeps_the_first_ones_manifest_entries(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "out"
    base = ["-o", f"{out}/", "--name", "{stem}", "--format", "json", "--jobs", "1"]
    assert run(["draw", str(EXAMPLES / "normal.yaml"), *base], capsys)[0] == 0
    assert run(["draw", str(EXAMPLES / "claudicant-sfa.yaml"), *base], capsys)[0] == 0
    entries = read_manifest(out)["studies"]
    assert [e["outputs"] for e in entries] == [["normal.json"], ["claudicant-sfa.json"]]
    # drawn again with --overwrite: one entry per file still
    assert run(["draw", str(EXAMPLES / "normal.yaml"), *base, "--overwrite"], capsys)[0] == 0
    entries = read_manifest(out)["studies"]
    assert [e["outputs"] for e in entries] == [["claudicant-sfa.json"], ["normal.json"]]


def test_a_manifest_json_of_someone_else_is_not_replaced(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "out"
    out.mkdir()
    (out / "manifest.json").write_text('{"mine": true}')
    code, err = run(["draw", str(EXAMPLES / "normal.yaml"), "-o", f"{out}/"], capsys)
    assert code == 2
    assert err == (
        f"{out / 'manifest.json'}: exists and is not a limbchart batch manifest; it was left as "
        "it was (move it, or give --overwrite to replace it).\n"
    )
    assert os.listdir(out) == ["manifest.json"]


# --- one output file --------------------------------------------------------------------------


def test_one_study_onto_an_existing_file_is_refused_unless_overwrite(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    target = tmp_path / "exists.pdf"
    target.write_bytes(b"another patient's map")
    code, err = run(["draw", str(EXAMPLES / "normal.yaml"), "-o", str(target)], capsys)
    assert code == 2
    assert err == (
        f"{target}: exists already and was left as it was (give --overwrite to replace it).\n"
    )
    assert target.read_bytes() == b"another patient's map"
    code, err = run(
        ["draw", str(EXAMPLES / "normal.yaml"), "-o", str(target), "--overwrite"], capsys
    )
    assert (code, err) == (0, f"wrote {target}\n")
    assert target.read_bytes()[:5] == b"%PDF-"


@pytest.mark.parametrize(
    "studies",
    [("normal.yaml", "claudicant-sfa.yaml"), (".",)],  # two files; a folder
    ids=["two-files", "a-folder"],
)
def test_many_studies_to_one_file_name_are_refused(
    studies: tuple[str, ...],
    tmp_path: Path,
    monkeypatch: pytest.MonkeyPatch,
    capsys: pytest.CaptureFixture[str],
) -> None:
    monkeypatch.chdir(EXAMPLES)
    target = tmp_path / "two.pdf"
    code, err = run(["draw", *studies, "-o", str(target)], capsys)
    assert code == 2
    assert err.splitlines()[-1] == (
        f"Error: -o {target} is a file name, but the studies given are many (or a folder or a "
        f"list of them); for many studies give a folder, ending in /: -o {target}/"
    )
    assert os.listdir(tmp_path) == []


def test_an_existing_folder_without_a_slash_is_a_folder(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    code, _ = run(
        ["draw", str(EXAMPLES / "normal.yaml"), "-o", str(tmp_path), "--format", "svg"], capsys
    )
    assert code == 0
    assert sorted(os.listdir(tmp_path)) == ["manifest.json", "map-0001.svg"]


@pytest.mark.parametrize(
    ("output", "formats", "refused"),
    [
        ("m.pdf", [], True),
        ("m.svg", [], True),
        ("m.dcm", [], True),
        ("m.png", [], False),
        ("out/", ["--format", "pdf"], True),
        ("out/", ["--format", "pdf", "--format", "png"], False),
    ],
)
def test_dpi_without_a_png_output_is_refused(
    output: str,
    formats: list[str],
    refused: bool,
    tmp_path: Path,
    capsys: pytest.CaptureFixture[str],
) -> None:
    args = ["draw", str(EXAMPLES / "normal.yaml"), "-o", f"{tmp_path}/{output}", *formats]
    code, err = run([*args, "--dpi", "300"], capsys)
    if refused:
        assert code == 2
        assert err.splitlines()[-1].startswith(
            "Error: --dpi sets the resolution of PNG output, and the output here is "
        )
        assert err.splitlines()[-1].endswith("(vector, drawn at any size); leave --dpi out.")
        assert os.listdir(tmp_path) == []
    else:
        assert code == 0, err


def test_a_folder_takes_structured_reports_and_names_a_dicom_that_is_not_one(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    folder = tmp_path / "in"
    folder.mkdir()
    shutil.copy(EXAMPLES / "sr" / "bilateral.dcm", folder / "exam.dcm")
    shutil.copy(EXAMPLES / "normal.yaml", folder / "normal.yaml")
    code, _ = run(["draw", str(EXAMPLES / "normal.yaml"), "-o", str(folder / "map.dcm")], capsys)
    assert code == 0  # the map's own DICOM (an Encapsulated PDF) is no study
    out = tmp_path / "out"
    code, err = run(["draw", str(folder), "-o", f"{out}/", "--format", "json"], capsys)
    assert code == 2 and "Traceback" not in err
    lines = [line for line in err.splitlines() if "map.dcm" in line]
    assert lines == [
        f"{folder / 'map.dcm'}: (file): is a DICOM file but not a structured report (SR); "
        "give a vascular ultrasound report or a study file."
    ]
    assert err.strip().splitlines()[-1] == "2 of 3 studies drawn, 1 failed."
    drawn = {s["input"]: s["outputs"] for s in read_manifest(out)["studies"] if s["outputs"]}
    report = json.loads((out / drawn[str(folder / "exam.dcm")][0]).read_text("utf-8"))
    # the report's values (tests/sr_build.py builds it from the same table as its YAML twin)
    twin = json.loads(
        _drawn_json(EXAMPLES / "sr" / "bilateral.yaml", tmp_path / "twin.json", capsys)
    )
    assert report["limbs"] == twin["limbs"]


def _drawn_json(study: Path, out: Path, capsys: pytest.CaptureFixture[str]) -> str:
    code, _ = run(["draw", str(study), "-o", str(out)], capsys)
    assert code == 0
    return out.read_text("utf-8")


def test_check_takes_a_structured_report_in_a_folder(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    folder = tmp_path / "in"
    folder.mkdir()
    shutil.copy(EXAMPLES / "sr" / "bilateral.dcm", folder / "exam.dcm")
    with pytest.raises(SystemExit) as done:
        main(["check", str(folder)])
    out = capsys.readouterr().out
    assert not done.value.code
    assert f"== {folder / 'exam.dcm'}" in out and "SFA-M" in out


def _twice(tmp_path: Path, how: str) -> tuple[list[str], Path, Path]:
    """Return the inputs naming one study twice in the way ``how`` says, the path the study
    is first named by and the one it is named again by."""
    folder = tmp_path / "studies"
    folder.mkdir()
    study = folder / "exam.yaml"
    shutil.copy(EXAMPLES / "normal.yaml", study)
    shutil.copy(EXAMPLES / "claudicant-sfa.yaml", folder / "other.yaml")
    if how == "the same path":
        return [str(study), str(study)], study, study
    if how == "another path":
        again = folder / ".." / "studies" / "exam.yaml"
        return [str(study), str(again)], study, again
    if how == "a folder and a file in it":
        return [str(folder), str(study)], study, study
    if how == "a list":
        listing = tmp_path / "batch.txt"
        listing.write_text("studies/other.yaml\nstudies/exam.yaml\n", "utf-8")
        return [str(study), str(listing)], study, tmp_path / "studies" / "exam.yaml"
    link = tmp_path / "link.yaml"  # a symbolic link to the file
    link.symlink_to(study)
    return [str(study), str(link)], study, link


@pytest.mark.parametrize(
    "how", ["the same path", "another path", "a folder and a file in it", "a list", "a link"]
)
@pytest.mark.parametrize("command", ["draw", "teach"])
def test_a_study_named_twice_is_refused_before_anything_is_written(
    how: str, command: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    inputs, first, again = _twice(tmp_path, how)
    out = tmp_path / "out"
    code, err = run([command, *inputs, "-o", f"{out}/"], capsys)
    assert code == 2 and not out.exists()
    if command == "draw":
        assert err.splitlines()[0] == (
            f"{again}: (file): is given twice (also as {first}): a batch takes each study once. "
            "(name each study once)"
        )
    else:  # a teaching run names no study file: a file name may name the patient
        assert "is given twice: a batch takes each study once. (name each study once)" in err
        assert "exam.yaml" not in err and str(tmp_path) not in err
    assert len(err.splitlines()) <= 2  # the one problem (and no traceback or summary of maps)


def test_studies_named_once_each_by_a_folder_and_a_list_are_drawn(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    folder = tmp_path / "a"
    folder.mkdir()
    shutil.copy(EXAMPLES / "normal.yaml", folder / "one.yaml")
    (tmp_path / "b").mkdir()
    shutil.copy(EXAMPLES / "normal.yaml", tmp_path / "b" / "copy.yaml")  # same content, own file
    listing = tmp_path / "more.txt"
    listing.write_text("b/copy.yaml\n", "utf-8")
    out = tmp_path / "out"
    code, _ = run(["draw", str(folder), str(listing), "-o", f"{out}/", "--format", "json"], capsys)
    assert code == 0
    assert len(list(out.glob("*.json"))) == 3  # two maps and the manifest
