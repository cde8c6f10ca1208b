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
