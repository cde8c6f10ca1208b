"""The public API is exactly what diagram/__init__ exports, and importing it stays light."""

from __future__ import annotations

import importlib
import subprocess
import sys
from pathlib import Path

import pytest

import diagram

ROOT = Path(__file__).resolve().parents[1]
PUBLIC = [
    "Assessment",
    "Criteria",
    "CriteriaError",
    "CriteriaSets",
    "DiagramError",
    "Drawing",
    "ExportError",
    "ExportOptions",
    "Inputs",
    "LabProfile",
    "Problem",
    "Study",
    "StudyError",
    "Template",
    "TemplateError",
    "__version__",
    "assess_file",
    "assess_study",
    "draw",
    "draw_file",
    "export",
    "load_criteria",
    "load_inputs",
    "load_lab_profile",
    "load_prior",
    "load_study",
    "load_study_text",
    "load_template",
    "load_template_for",
    "study_criteria",
    "study_schema",
]


def test_public_names_are_pinned() -> None:
    assert sorted(diagram.__all__) == PUBLIC
    assert sorted(set(dir(diagram)) & set(PUBLIC)) == PUBLIC


@pytest.mark.parametrize(
    ("name", "module", "original"),
    [
        ("assess_study", "diagram.assess", "assess"),
        ("draw", "diagram.pipeline", "draw"),
        ("draw_file", "diagram.inputs", "draw_file"),
        ("load_study", "diagram.reading.load", "load_study"),
        ("Study", "diagram.reading.study", "Study"),
        ("CriteriaSets", "diagram.criteria", "CriteriaSets"),
        ("Template", "diagram.drawing.template.mapfile", "Template"),
        ("Drawing", "diagram.output.export", "Drawing"),
    ],
)
def test_public_names_are_the_stages_own_objects(name: str, module: str, original: str) -> None:
    assert getattr(diagram, name) is getattr(importlib.import_module(module), original)


def test_an_unknown_name_is_an_attribute_error() -> None:
    with pytest.raises(AttributeError, match="no attribute 'load_yaml'"):
        _ = diagram.load_yaml  # type: ignore[attr-defined]


def test_old_flat_paths_are_gone() -> None:
    for gone in ("diagram.load", "diagram.cli_options", "diagram.teach_cli", "diagram.sheet"):
        with pytest.raises(ModuleNotFoundError):
            importlib.import_module(gone)


def test_error_tree() -> None:
    for cls in (diagram.StudyError, diagram.TemplateError, diagram.CriteriaError):
        assert issubclass(cls, diagram.DiagramError)
    assert issubclass(diagram.ExportError, diagram.DiagramError)


def test_a_study_held_in_memory_draws_with_inputs_loaded_at_the_edge(tmp_path: Path) -> None:
    """A study with no file beside it: the sets and the template come in as values."""
    text = (ROOT / "examples" / "claudicant-sfa.yaml").read_text("utf-8")
    study = diagram.load_study_text(text, "in-memory", ".yaml")
    inputs = diagram.load_inputs(study)
    assert inputs.criteria.native.name == study.exam.criteria and inputs.prior is None
    drawing = diagram.draw(
        study, criteria=inputs.criteria, template=diagram.load_template_for(None)
    )
    assert drawing.svg == diagram.draw_file(ROOT / "examples" / "claudicant-sfa.yaml").svg
    assert drawing.results["criteria"]["name"] == study.exam.criteria


def test_a_lab_criteria_file_is_read_at_the_edge_not_by_the_assessment(tmp_path: Path) -> None:
    lab = tmp_path / "lab.yaml"
    shipped = (ROOT / "diagram" / "criteria" / "native.yaml").read_text("utf-8")
    lab.write_text(shipped.replace("name: native", "name: lab-native", 1), "utf-8")
    text = (ROOT / "examples" / "claudicant-sfa.yaml").read_text("utf-8")
    text = text.replace("  criteria: native\n", "  criteria: lab.yaml\n", 1)
    (tmp_path / "s.yaml").write_text(text, "utf-8")
    study = diagram.load_study(tmp_path / "s.yaml")
    with pytest.raises(diagram.StudyError, match="load the lab's file first"):
        diagram.assess_study(study)  # no file read below the edge
    assessment = diagram.assess_file(tmp_path / "s.yaml")
    assert assessment.criteria_name == "lab-native"
    assert assessment.criteria_used[0][2] == str(lab)


LIGHT = ("cairo", "cairosvg", "cairocffi", "svgwrite", "fontTools", "jsonschema", "pydicom", "yaml")
EDITOR = ("starlette", "uvicorn", "ruamel.yaml")  # the optional edit extra, imported by edit alone
CLUSTER = ("dask", "distributed")  # the optional dask extra, imported by --scheduler alone
NEVER_ON_HELP = (
    *LIGHT,
    *CLUSTER,
    *EDITOR,
    "diagram.assess",
    "diagram.criteria",
    "diagram.reading.checks",
)


def _imported_by(args: list[str]) -> list[str]:
    code = (
        "import sys\n"
        "from diagram.cli.main import cli\n"
        "try:\n"
        f"    cli.main({args!r}, standalone_mode=False)\n"
        "except SystemExit:\n"
        "    pass\n"
        f"print(sorted(m for m in {NEVER_ON_HELP!r} if m in sys.modules))\n"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    ).stdout
    return list(eval(out.strip().splitlines()[-1]))  # a printed list of names


def test_importing_the_package_stays_light() -> None:
    code = f"import sys, diagram\nprint(sorted(m for m in {NEVER_ON_HELP!r} if m in sys.modules))"
    out = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    ).stdout
    assert out.strip() == "[]"


def test_help_stays_light() -> None:
    assert _imported_by(["--help"]) == []


def test_every_command_help_stays_light() -> None:
    from diagram.cli.main import cli

    for name, command in sorted(cli.commands.items()):
        assert _imported_by([name, "--help"]) == [], name
        for sub in sorted(getattr(command, "commands", {})):
            assert _imported_by([name, sub, "--help"]) == [], f"{name} {sub}"
