"""The registry of study formats: a reader is chosen by content first, then by suffix."""

from __future__ import annotations

from pathlib import Path

import pytest

from diagram.errors import Problem, StudyError
from diagram.reading import formats
from diagram.reading.checks import Parsed
from diagram.reading.formats import Refused, StudyReader, reader_for
from diagram.reading.load import load_study

ROOT = Path(__file__).resolve().parents[1]
MAGIC = b"LCHT"  # the made-up format of these tests: a marker, then nothing a study needs


def _parse_marked(data: bytes) -> Parsed:
    """A reader placing its values by item number, not by line (as a DICOM SR reader would)."""
    if data.rstrip().endswith(b"!"):
        raise Refused(None, "is cut short.", at="item 9")
    loc = ("limbs", "left", "segments", "SFA-M", "psv")
    parsed = Parsed(kind="marked")
    parsed.tree = {"format": 1, "limbs": {"left": {"segments": {"SFA-M": {"psv": -5}}}}}
    parsed.places = {("limbs", "left"): "item 1", loc: "item 1.4.2"}
    return parsed


MARKED = StudyReader("marked", (".lcht",), _parse_marked, sniff=lambda data: data.startswith(MAGIC))


@pytest.fixture
def with_marked(monkeypatch: pytest.MonkeyPatch) -> None:
    """Register the made-up format: one entry in the registry, as a real one would be."""
    monkeypatch.setattr(formats, "READERS", (*formats.READERS, MARKED))


@pytest.mark.parametrize(
    ("data", "suffix", "name"),
    [
        (b"format: 1\n", ".yaml", "YAML"),
        (b"format: 1\n", ".YML", "YAML"),
        (b"format: 1\n", "yml", "YAML"),
        (b'{"format": 1}', ".json", "JSON"),
        (b"format: 1\n", ".txt", None),
        (b"format: 1\n", "", None),
    ],
)
def test_the_text_formats_are_chosen_by_suffix(data: bytes, suffix: str, name: str | None) -> None:
    reader = reader_for(data, suffix)
    assert (reader.name if reader else None) == name


def test_the_registry_gives_the_suffixes_everywhere(with_marked: None) -> None:
    assert formats.study_suffixes() == (".yaml", ".yml", ".json", ".dcm", ".lcht")
    assert formats.suffix_list() == ".yaml, .yml, .json, .dcm or .lcht"
    assert formats.is_study_name("A.LCHT") and not formats.is_study_name("a.txt")


def test_a_format_is_recognised_by_content_whatever_its_name(
    with_marked: None, tmp_path: Path
) -> None:
    path = tmp_path / "exported"  # no suffix at all
    path.write_bytes(MAGIC + b"\x00\x01 binary content")
    assert reader_for(path.read_bytes(), "").name == "marked"  # type: ignore[union-attr]
    with pytest.raises(StudyError) as err:
        load_study(path)
    # placed by the reader's item number, in the same words as a YAML file's line
    (line,) = err.value.lines()  # the rule's wording is the checks' own (tested in test_load)
    assert line.startswith(f"{path}:item 1.4.2: limbs.left.segments.SFA-M.psv: -5 must be ")


def test_a_refusal_can_be_placed_by_item(with_marked: None, tmp_path: Path) -> None:
    path = tmp_path / "cut.lcht"
    path.write_bytes(MAGIC + b"!")
    with pytest.raises(StudyError) as err:
        load_study(path)
    assert err.value.lines() == [f"{path}:item 9: (file): is cut short."]


def test_an_unknown_suffix_names_every_registered_one(with_marked: None, tmp_path: Path) -> None:
    path = tmp_path / "study.txt"
    path.write_text("format: 1\n", "utf-8")
    with pytest.raises(StudyError) as err:
        load_study(path)
    assert err.value.lines() == [
        f"{path}: (file): has an unknown suffix '.txt': a study file ends in "
        ".yaml, .yml, .json, .dcm or .lcht."
    ]


@pytest.mark.parametrize(
    ("problem", "text"),
    [
        (
            Problem("s.yaml", 4, "exam.date", "'x'", "must be a date."),
            "s.yaml:4: exam.date: 'x' must be a date.",
        ),
        (
            Problem("s.dcm", None, "exam.date", None, "is missing.", at="item 2"),
            "s.dcm:item 2: exam.date: is missing.",
        ),
        (Problem("s.dcm", 7, "f", None, "r.", at="item 2"), "s.dcm:7: f: r."),  # a line wins
        (Problem("s.yaml", None, "", None, "is empty."), "s.yaml: (file): is empty."),
    ],
)
def test_a_problem_is_placed_by_line_or_by_item(problem: Problem, text: str) -> None:
    assert str(problem) == text
