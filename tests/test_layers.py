"""The stages' import layers (pyproject.toml, [tool.importlinter]) hold, and a breach is caught."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def lint_imports(config: Path, path: Path | None = None) -> subprocess.CompletedProcess[str]:
    """Run import-linter on ``config``; ``path`` goes first on the import path (a copy)."""
    env = dict(os.environ)
    if path is not None:
        env["PYTHONPATH"] = os.pathsep.join([str(path), env.get("PYTHONPATH", "")])
    code = "import sys; from importlinter.cli import lint_imports_command; lint_imports_command()"
    return subprocess.run(
        [sys.executable, "-c", code, str(config), "--no-cache", "--no-logo"],
        capture_output=True,
        text=True,
        check=False,
        env=env,
        cwd=config.parent,
    )


def test_every_contract_is_kept() -> None:
    done = lint_imports(ROOT / "pyproject.toml")
    assert done.returncode == 0, done.stdout + done.stderr
    assert "4 kept, 0 broken" in done.stdout


def _copy(tmp_path: Path) -> Path:
    """Copy the package's Python files and the contracts into ``tmp_path``."""
    for source in (ROOT / "diagram").rglob("*.py"):
        target = tmp_path / "src" / source.relative_to(ROOT)
        target.parent.mkdir(parents=True, exist_ok=True)
        shutil.copyfile(source, target)
    shutil.copyfile(ROOT / "pyproject.toml", tmp_path / "pyproject.toml")
    return tmp_path / "src"


def test_an_import_that_climbs_up_is_caught(tmp_path: Path) -> None:
    src = _copy(tmp_path)
    rules = src / "diagram" / "assess" / "grading.py"
    rules.write_text(rules.read_text("utf-8") + "\nimport diagram.drawing.layout\n", "utf-8")
    done = lint_imports(tmp_path / "pyproject.toml", src)
    assert done.returncode == 1
    assert "Stages are layered (no import climbs back up) BROKEN" in done.stdout
    assert "diagram.assess.grading -> diagram.drawing.layout" in done.stdout


def test_a_result_type_importing_a_rule_is_caught(tmp_path: Path) -> None:
    src = _copy(tmp_path)
    results = src / "diagram" / "assess" / "results.py"
    text = results.read_text("utf-8") + "\nimport diagram.assess.compare\n"
    results.write_text(text, "utf-8")
    done = lint_imports(tmp_path / "pyproject.toml", src)
    assert done.returncode == 1
    assert "The assessment's result types import none of its rules BROKEN" in done.stdout
