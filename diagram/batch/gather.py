"""The study files a batch draws: files, folders and lists of paths, each study once.

A folder gives the study files in it (by name); a list (``.txt``, ``.list``, ``.manifest``)
gives one path a line, relative to the list, ``#`` starting a comment. A study named twice (by
two paths, a folder and a file, or a list) is refused: it would give two maps, or two teaching
cases, of one exam.
"""

from __future__ import annotations

import os
from collections.abc import Iterable, Sequence
from pathlib import Path

from diagram.errors import Problem, StudyError
from diagram.reading.formats import study_suffixes

MANIFEST_SUFFIXES = (".txt", ".list", ".manifest")  # lists of study paths, one a line


def expand_inputs(inputs: Iterable[Path], *, echo_paths: bool = True) -> list[Path]:
    """Return the study files named by ``inputs``: files, folders, and manifests of paths.

    ``echo_paths=False`` keeps the other path of a study named twice out of the message (a file
    name may name the patient)."""
    out: list[Path] = []
    problems: list[Problem] = []
    for item in inputs:
        if item.is_dir():
            found = sorted(p for p in item.iterdir() if p.suffix.lower() in study_suffixes())
            if not found:
                problems.append(
                    Problem(str(item), None, "", None, "is a folder with no study files in it.")
                )
            out.extend(found)
        elif item.suffix.lower() in MANIFEST_SUFFIXES and item.is_file():
            for raw in item.read_text("utf-8").splitlines():
                text = raw.strip()
                if not text or text.startswith("#"):
                    continue
                path = Path(text)
                # a missing file is reported with the rest of the batch, not here
                out.append(path if path.is_absolute() else item.parent / path)
        else:
            out.append(item)
    problems += _given_twice(out, echo_paths)
    if problems:
        raise StudyError(problems)
    return out


def _given_twice(paths: Sequence[Path], echo_paths: bool) -> list[Problem]:
    """Return a problem for each study file named again (by another path, a folder or a list):
    drawn twice it would give two maps, or two teaching cases, of one exam."""
    first: dict[str, int] = {}
    problems = []
    for n, path in enumerate(paths):
        earlier = first.setdefault(os.path.realpath(path), n)
        if earlier != n:
            also = f" (also as {paths[earlier]})" if echo_paths else ""
            rule = f"is given twice{also}: a batch takes each study once."
            problems.append(Problem(str(path), None, "", None, rule, "name each study once"))
    return problems
