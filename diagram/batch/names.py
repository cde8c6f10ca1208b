"""Output names of a batch, all decided before anything is drawn.

Each study's file name comes from the ``--name`` pattern. Every name is computed first; two
studies that would get the same name (compared without case, as many file systems do), a name
that is the batch manifest's, or, without ``--overwrite``, a file that exists already, refuse
the whole batch before anything is drawn or written.
"""

from __future__ import annotations

import os
import string
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from diagram.errors import DiagramError, ExportError

DEFAULT_NAME = "map-{n:04d}"
NAME_FIELDS = ("n", "stem", "folder", "accession", "patient_id", "exam_date")
STUDY_FIELDS = frozenset({"accession", "patient_id", "exam_date"})  # need the study read first
MANIFEST_NAME = "manifest.json"
CLASH_HINT = (
    "give --name a field that tells them apart, such as {n}, {stem} or {folder}, "
    "e.g. --name '{folder}-{stem}'"
)
_SHOWN_EXISTING = 20  # existing files listed one per line; the rest are counted


class OutputNameError(ExportError):
    """Output names that cannot all be written; one line per problem, nothing was drawn."""

    def __init__(self, lines: Sequence[str]) -> None:
        self.problem_lines = tuple(lines)
        super().__init__("\n".join(self.problem_lines))

    def lines(self) -> list[str]:
        return list(self.problem_lines)


@dataclass(frozen=True)
class Named:
    """A study of the batch and the file name (without suffix) it will be written under."""

    n: int
    study: Path
    stem: str


@dataclass(frozen=True)
class Unnamed:
    """A study whose name needs its content, but which could not be read."""

    n: int
    study: Path
    errors: tuple[str, ...]


def pattern_fields(pattern: str) -> list[str]:
    """Return the field names a ``--name`` pattern uses, in order."""
    return [f for _, f, _, _ in string.Formatter().parse(pattern) if f is not None]


def check_pattern(pattern: str) -> None:
    """Refuse a naming pattern with an unknown field, a bad format or a folder separator."""
    try:
        fields = pattern_fields(pattern)
        sample = {"n": 1, **{f: "x" for f in NAME_FIELDS if f != "n"}}
        usable = set(fields) <= set(NAME_FIELDS) and bool(pattern.format(**sample))
    except (ValueError, IndexError, KeyError):  # an unclosed brace, '{stem:04d}' ...
        usable = False
    if not usable or "/" in pattern or "\\" in pattern or not pattern.strip():
        known = ", ".join(f"{{{f}}}" for f in NAME_FIELDS)
        raise OutputNameError(
            [
                f"--name {pattern!r}: is not a file name pattern: use only the fields {known}, "
                "and no / or \\ (e.g. --name '{folder}-{stem}')."
            ]
        )


def name_stem(pattern: str, n: int, path: Path, study: object | None) -> str:
    """Return the output file name (without suffix) of study number ``n`` from the pattern."""
    from diagram.reading.study import Study

    values: dict[str, object] = {
        "n": n,
        "stem": path.stem,
        "folder": Path(os.path.abspath(path)).parent.name or "no-folder",
    }
    if isinstance(study, Study):
        values["accession"] = study.exam.accession or "no-accession"
        values["patient_id"] = study.patient.id or "no-id"
        values["exam_date"] = study.exam.date.isoformat() if study.exam.date else "no-date"
    stem = pattern.format(**values)
    return "".join(c if c.isalnum() or c in "-_.+" else "_" for c in stem)


def plan_names(
    paths: Sequence[Path],
    pattern: str,
    formats: Sequence[str],
    out_dir: Path,
    *,
    overwrite: bool,
) -> tuple[list[Named], list[Unnamed]]:
    """Return every study's output name, and the studies that could not be read for one.

    Raises :class:`OutputNameError` when the names clash with each other or with the manifest,
    or (without ``overwrite``) name files that exist already.
    """
    check_pattern(pattern)
    named, unnamed = _name_all(paths, pattern)
    lines = _clashes(named, formats, out_dir)
    if not lines and not overwrite:
        lines = _existing(named, formats, out_dir)
    if lines:
        raise OutputNameError([*lines, "nothing was drawn."])
    return named, unnamed


def _name_all(paths: Sequence[Path], pattern: str) -> tuple[list[Named], list[Unnamed]]:
    from diagram.reading.load import load_study

    needs_study = bool(STUDY_FIELDS.intersection(pattern_fields(pattern)))
    named: list[Named] = []
    unnamed: list[Unnamed] = []
    for n, path in enumerate(paths, start=1):
        study = None
        if needs_study:
            try:
                study = load_study(path)
            except DiagramError as exc:  # drawn as failed, like any study that cannot be read
                unnamed.append(Unnamed(n, path, tuple(exc.lines())))
                continue
        named.append(Named(n, path, name_stem(pattern, n, path, study)))
    return named, unnamed


def _clashes(named: Sequence[Named], formats: Sequence[str], out_dir: Path) -> list[str]:
    groups: dict[str, list[Named]] = {}
    for item in named:
        groups.setdefault(item.stem.casefold(), []).append(item)
    lines = []
    for items in groups.values():
        target = out_dir / f"{items[0].stem}.{formats[0]}"
        if len(items) > 1:
            studies = ", ".join(str(i.study) for i in items)
            lines.append(f"{target}: would be written for {studies} ({CLASH_HINT}).")
        if "json" in formats and f"{items[0].stem}.json".casefold() == MANIFEST_NAME:
            lines.append(
                f"{out_dir / MANIFEST_NAME}: is the batch manifest's name, not one for "
                f"{items[0].study} (choose another --name)."
            )
    return lines


def _existing(named: Sequence[Named], formats: Sequence[str], out_dir: Path) -> list[str]:
    from diagram.output.export import exists_message, suffix_for

    found = [
        out_dir / f"{item.stem}.{suffix_for(fmt)}"
        for item in named
        for fmt in formats
        if os.path.lexists(out_dir / f"{item.stem}.{suffix_for(fmt)}")
    ]
    lines = [exists_message(path) for path in found[:_SHOWN_EXISTING]]
    if len(found) > _SHOWN_EXISTING:
        more = len(found) - _SHOWN_EXISTING
        lines.append(f"{out_dir}: and {more} more files that exist already.")
    return lines
