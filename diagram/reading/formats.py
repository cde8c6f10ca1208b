"""The study formats: one registry of readers, chosen by content first and then by suffix.

Each reader turns a file's bytes into the same located tree (``checks.Parsed``) that the checks
and the study builder take, whatever the format. Adding a format is one entry in :data:`READERS`:
a name, its suffixes, a size limit, an optional sniffer that recognises its content (a DICOM
file by its preamble, whatever its name) and the parser, imported only when used.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from diagram.reading.checks import Parsed

MAX_BYTES = 2 * 1024 * 1024  # the text formats' size limit


class Refused(Exception):
    """Stop reading: the file is refused as a whole (at a line or another place), with a hint."""

    def __init__(
        self, line: int | None, rule: str, at: str | None = None, hint: str | None = None
    ) -> None:
        super().__init__(rule)
        self.line = line
        self.rule = rule
        self.at = at
        self.hint = hint


@dataclass(frozen=True)
class StudyReader:
    """One study format: how to recognise it and how to parse it into a located tree."""

    name: str
    suffixes: tuple[str, ...]  # lower case, with the dot
    parse: Callable[[bytes], Parsed]  # raises Refused for a file refused as a whole
    max_bytes: int = MAX_BYTES
    sniff: Callable[[bytes], bool] | None = None  # True when the content is surely this format


def _yaml(data: bytes) -> Parsed:
    from diagram.reading.text import parse_yaml_bytes

    return parse_yaml_bytes(data)


def _json(data: bytes) -> Parsed:
    from diagram.reading.text import parse_json_bytes

    return parse_json_bytes(data)


def _dicom_sr(data: bytes) -> Parsed:
    from diagram.reading.checks import Parsed
    from diagram.reading.sr import report_from_bytes

    def refuse(rule: str) -> Refused:
        return Refused(None, rule)

    report = report_from_bytes(data, refuse)
    return Parsed(kind="dicom", tree=report.tree, problems=report.problems, notes=report.notes)


def _dicom_preamble(data: bytes) -> bool:
    """Return True for the DICOM file preamble: 128 bytes, then ``DICM`` (PS3.10 7.1)."""
    return data[128:132] == b"DICM"


DICOM_MAX_BYTES = 16 * 1024 * 1024  # an SR of a whole exam is tens of kilobytes

READERS: tuple[StudyReader, ...] = (
    StudyReader("YAML", (".yaml", ".yml"), _yaml),
    StudyReader("JSON", (".json",), _json),
    # a vascular ultrasound structured report (DICOM SR, PS3.16 TID 5100); see reading/sr.py
    StudyReader("DICOM SR", (".dcm",), _dicom_sr, DICOM_MAX_BYTES, _dicom_preamble),
)


def study_suffixes() -> tuple[str, ...]:
    """Return every study format's suffixes, in the registry's order."""
    return tuple(s for r in READERS for s in r.suffixes)


def reader_for(data: bytes, suffix: str) -> StudyReader | None:
    """Return the reader whose sniffer knows the content, else the one for the suffix."""
    for reader in READERS:
        if reader.sniff is not None and reader.sniff(data):
            return reader
    kind = "." + suffix.lower().lstrip(".")
    return next((r for r in READERS if kind in r.suffixes), None)


def is_study_name(name: str) -> bool:
    """Return True for a file name with a study format's suffix."""
    return name.lower().endswith(study_suffixes())


def read_limit() -> int:
    """Return how many bytes a study may have in the largest format."""
    return max(r.max_bytes for r in READERS)


def suffix_list() -> str:
    """Return the suffixes in words: ``.yaml, .yml or .json``."""
    *rest, last = study_suffixes()
    return f"{', '.join(rest)} or {last}" if rest else last
