"""The public API is exactly what diagram/__init__ exports."""

from __future__ import annotations

import subprocess
import sys

import diagram


def test_public_names_are_pinned() -> None:
    assert sorted(diagram.__all__) == [
        "Assessment",
        "CriteriaError",
        "DiagramError",
        "Drawing",
        "ExportError",
        "ExportOptions",
        "Problem",
        "Study",
        "StudyError",
        "TemplateError",
        "__version__",
        "assess",
        "draw",
        "export",
        "load_study",
        "load_study_text",
        "study_schema",
    ]
    for name in diagram.__all__:
        assert hasattr(diagram, name), name


def test_error_tree() -> None:
    for cls in (diagram.StudyError, diagram.TemplateError, diagram.CriteriaError):
        assert issubclass(cls, diagram.DiagramError)
    assert issubclass(diagram.ExportError, diagram.DiagramError)


def test_importing_the_package_and_help_stay_light() -> None:
    heavy = (
        "cairo",
        "cairosvg",
        "cairocffi",
        "svgwrite",
        "fontTools",
        "jsonschema",
        "pydicom",
        "yaml",
    )
    code = (
        "import sys\n"
        "from diagram.cli.main import cli\n"
        "try:\n"
        "    cli.main(['--help'], standalone_mode=False)\n"
        "except SystemExit:\n"
        "    pass\n"
        f"print(sorted(m for m in {heavy!r} if m in sys.modules))\n"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    ).stdout
    assert out.strip().splitlines()[-1] == "[]"
