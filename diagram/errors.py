"""The tool's own errors.

::

    DiagramError            base; carries the exit status the command line uses
    ├── StudyError          a study file (or criteria file) with one or more problems
    ├── TemplateError       a map template that cannot be read or breaks the template contract
    └── ExportError         an output that could not be written

Any other exception is a bug. Messages never echo patient identifiers.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Problem:
    """One thing wrong with an input file, located as precisely as the file allows."""

    file: str
    line: int | None
    field: str
    value: str | None
    rule: str
    hint: str | None = None
    at: str | None = None  # a place other than a line, e.g. a content item of a DICOM file

    def __str__(self) -> str:
        where = self.file
        if self.line is not None:
            where = f"{self.file}:{self.line}"
        elif self.at is not None:
            where = f"{self.file}:{self.at}"
        value = f" {self.value}" if self.value is not None else ""
        hint = f" ({self.hint})" if self.hint else ""
        field = self.field or "(file)"
        return f"{where}: {field}:{value} {self.rule}{hint}"


class DiagramError(Exception):
    """Base of every error the tool reports to a user instead of a traceback."""

    exit_code = 2

    def lines(self) -> list[str]:
        """Return the message as the lines the command line prints."""
        return [str(self)]


class InputError(DiagramError):
    """An input file with one or more problems, each reported on its own line."""

    def __init__(self, problems: list[Problem] | tuple[Problem, ...]) -> None:
        self.problems: tuple[Problem, ...] = tuple(problems)
        super().__init__("\n".join(str(p) for p in self.problems))

    def lines(self) -> list[str]:
        return [str(p) for p in self.problems]


class StudyError(InputError):
    """A study file (or a file it refers to) that cannot be used as it is."""


class CriteriaError(InputError):
    """A criteria file that cannot be used as it is."""


class TemplateError(InputError):
    """A map template that cannot be read or breaks the template contract."""


class ExportError(DiagramError):
    """An output that could not be written; nothing partial is left behind."""
