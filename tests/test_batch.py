"""Many studies at once: one bad study does not stop the batch; nothing partial is left."""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import pytest

from diagram.cli.main import main

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"


def run(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str]:
    with pytest.raises(SystemExit) as done:
        main(args)
    return int(done.value.code or 0), capsys.readouterr().err


@pytest.fixture()
def inputs(tmp_path: Path) -> Path:
    folder = tmp_path / "in"
    folder.mkdir()
    for name in ("claudicant-sfa.yaml", "multilevel-occlusion.yaml", "normal.yaml"):
        shutil.copy(EXAMPLES / name, folder / name)
    (folder / "zz-broken.yaml").write_text(
        "format: 1\nlimbs: {left: {segments: {SFA-X: {psv: 9}}}}\n"
    )
    return folder


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


def test_existing_files_are_kept_unless_overwrite(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "out"
    study = str(EXAMPLES / "normal.yaml")
    assert run(["draw", study, "-o", f"{out}/", "--format", "svg", "--jobs", "1"], capsys)[0] == 0
    (out / "map-0001.svg").write_text("mine")
    code, err = run(["draw", study, "-o", f"{out}/", "--format", "svg", "--jobs", "1"], capsys)
    assert code == 2 and "exists; use --overwrite" in err
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
    assert os.listdir(out) == ["map-0001.json"]
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
    assert code == 2 and "--name" in err


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
    assert os.listdir(tmp_path / "out") == ["map-0001.svg"]


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
