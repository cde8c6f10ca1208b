"""The distribution's metadata: an SPDX licence expression and the licence texts it names."""

import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_the_licence_is_an_spdx_expression_with_its_texts_shipped() -> None:
    project = tomllib.loads((ROOT / "pyproject.toml").read_text("utf-8"))["project"]
    assert project["license"] == "MIT"  # SPDX expression, not the deprecated table form
    assert (ROOT / "LICENSE").read_text("utf-8").startswith("MIT License")
    for name in project["license-files"]:
        assert (ROOT / name).is_file(), name


def _setuptools() -> dict:  # type: ignore[type-arg]
    return tomllib.loads((ROOT / "pyproject.toml").read_text("utf-8"))["tool"]["setuptools"]


def test_every_package_and_data_folder_is_declared() -> None:
    """A folder left out is missing from the wheel and the sdist (editable installs hide it)."""
    config = _setuptools()
    declared = set(config["packages"])
    found = {
        ".".join(p.relative_to(ROOT).parts)
        for p in (ROOT / "diagram").rglob("*")
        if p.is_dir() and p.name != "__pycache__" and any(p.iterdir())
    }
    assert found - declared == set()
    for package, globs in config["package-data"].items():
        parts = package.split(".")[1:]
        folder = ROOT / ("templates_svg" if parts == ["templates_svg"] else "diagram")
        folder = folder.joinpath(*([] if parts == ["templates_svg"] else parts))
        files = {f for g in globs for f in folder.glob(g)}
        data = {f for f in folder.iterdir() if f.is_file() and f.suffix != ".py"}
        assert files and data <= files, package


def test_the_sdist_holds_what_the_tests_read() -> None:
    grafted = {
        line.split()[1]
        for line in (ROOT / "MANIFEST.in").read_text("utf-8").splitlines()
        if line.startswith("graft ")
    }
    assert {"examples", "tests", "tools"} <= grafted  # the rest ships as package data
