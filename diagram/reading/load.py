"""Read a study file (YAML or JSON, DESIGN.md §3) into a validated :class:`Study`.

Every problem found is collected with its file and line (the checks are in
:mod:`diagram.reading.checks`), then raised once as a :class:`StudyError`; nothing is returned
unless the whole file is sound. Hostile input is refused before it is built: files over 2 MB, binary
files, YAML anchors and aliases (no alias bombs), explicit YAML tags, nesting deeper than 20
levels and more than 10 000 values. The only value changed on the way in is a segment alias,
resolved to its canonical id.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import json
import json.decoder
import json.scanner
import re
from bisect import bisect_right
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any, cast

from diagram import anatomy
from diagram.anatomy import Side
from diagram.errors import Problem, StudyError
from diagram.reading import sr
from diagram.reading.checks import Checker, Key, Loc, Parsed
from diagram.reading.checks import (
    study_schema as study_schema,  # the checks' schema, importable here
)
from diagram.reading.study import (
    Exam,
    Flow,
    Graft,
    Lesion,
    Limb,
    LimbPressures,
    Patient,
    Plaque,
    Presentation,
    Pressures,
    Sample,
    SegmentFinding,
    Stent,
    Study,
    Waveform,
)

if TYPE_CHECKING:
    import yaml

MAX_BYTES = 2 * 1024 * 1024
MAX_DEPTH = 20
MAX_NODES = 10_000

_ONCE = "give each key once."


class _Refused(Exception):
    """Stop parsing: the file is refused as a whole."""

    def __init__(self, line: int | None, rule: str) -> None:
        super().__init__(rule)
        self.line = line
        self.rule = rule


def load_study(path: str | Path) -> Study:
    """Read and validate one study file."""
    name = str(path)
    try:
        with open(path, "rb") as handle:
            head = handle.read(132)
            if sr.looks_like_dicom(head) or Path(path).suffix.lower() == ".dcm":
                return load_report(path)[0]
            data = head + handle.read(MAX_BYTES + 1 - len(head))
    except OSError as err:
        problem = Problem(name, None, "", None, f"cannot be read: {err.strerror}.")
        raise StudyError([problem]) from None
    return _load_bytes(data, name, Path(path).suffix)


def load_report(path: str | Path) -> tuple[Study, sr.Report]:
    """Read a vascular ultrasound structured report (DICOM SR) into a Study, and its tree.

    The tree goes through the same checks as a study file; what the report holds that cannot be
    placed on the map is listed in the study's ``import_notes``.
    """
    name = str(path)
    report = sr.read_report(path)
    parsed = Parsed(kind="dicom", tree=report.tree)
    study = _checked(parsed, name, report.problems)
    return dataclasses.replace(study, import_notes=tuple(report.notes)), report


def load_prior(study: Study, override: str | Path | None = None) -> Study | None:
    """Read the earlier exam a study names (``prior:``, relative to its file) or ``override``.

    A prior file with problems is reported as the prior's own problems; a missing one as a
    problem of the study's ``prior`` field.
    """
    if override is not None:
        path = Path(override)
    elif study.prior:
        path = Path(study.prior)
        if not path.is_absolute():
            path = Path(study.source).parent / path
    else:
        return None
    if not path.is_file():
        shown = repr(str(override)) if override is not None else repr(study.prior)
        field = "--prior" if override is not None else "prior"
        raise StudyError([Problem(study.source, None, field, shown, "names no study file.")])
    return load_study(path)


def load_study_text(text: str, name: str, suffix: str) -> Study:
    """Validate a study held in memory; ``name`` stands for the file in messages."""
    return _load_bytes(text.encode("utf-8", "surrogatepass"), name, suffix)


def _load_bytes(data: bytes, name: str, suffix: str) -> Study:
    def refuse(rule: str, line: int | None = None) -> StudyError:
        return StudyError([Problem(name, line, "", None, rule)])

    kind = suffix.lower().lstrip(".")
    if kind not in ("yaml", "yml", "json"):
        shown = f" {suffix!r}" if suffix else ""
        raise refuse(f"has an unknown suffix{shown}: a study file ends in .yaml, .yml or .json.")
    if len(data) > MAX_BYTES:
        raise refuse(f"is over the 2 MB size limit for a study file ({MAX_BYTES} bytes).")
    if not data.strip():
        raise refuse("is empty.")
    if b"\0" in data:
        line = data.count(b"\n", 0, data.index(b"\0")) + 1
        raise refuse("is a binary file (it holds NUL bytes), not a YAML or JSON study.", line)
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as err:
        line = data.count(b"\n", 0, err.start) + 1
        raise refuse(f"is not UTF-8 text (byte 0x{data[err.start]:02x}).", line) from None
    try:
        parsed = _parse_json(text) if kind == "json" else _parse_yaml(text)
    except _Refused as err:
        raise refuse(err.rule, err.line) from None
    return _checked(parsed, name)


def _checked(parsed: Parsed, name: str, found: list[Problem] | None = None) -> Study:
    """Check a parsed tree and build its study; raise every problem found at once."""
    checker = Checker(name, parsed)
    checker.check()
    problems = [*(found or ()), *checker.problems]
    if problems:
        raise StudyError(sorted(problems, key=lambda p: p.line or 0))
    return _build(parsed, name)


# --- YAML -------------------------------------------------------------------------------------


def _parse_yaml(text: str) -> Parsed:
    """Parse YAML safely: refuse anchors, aliases, tags and deep nesting before building."""
    import yaml

    loader_cls = getattr(yaml, "CSafeLoader", yaml.SafeLoader)
    try:
        _screen_events(yaml.parse(text, Loader=loader_cls))
        root = yaml.compose(text, Loader=loader_cls)
    except yaml.MarkedYAMLError as err:
        mark, where = err.problem_mark or err.context_mark, ""
        line = mark.line + 1 if mark is not None else None
        if err.context and err.context_mark is not None and err.context_mark.line + 1 != line:
            where = f" ({err.context} on line {err.context_mark.line + 1})"
        raise _Refused(line, f"is not valid YAML: {err.problem or err.context}{where}.") from None
    except yaml.YAMLError as err:
        raise _Refused(None, f"is not valid YAML: {err}.") from None
    if root is None:
        raise _Refused(None, "holds no study (only comments or blank lines).")
    parsed = Parsed()
    parsed.tree = _yaml_value(root, (), parsed, yaml.constructor.SafeConstructor())
    return parsed


def _screen_events(events: Iterator[yaml.Event]) -> None:
    import yaml

    depth = nodes = documents = 0
    for event in events:
        line = event.start_mark.line + 1 if event.start_mark is not None else None
        if isinstance(event, yaml.DocumentStartEvent):
            documents += 1
            if documents > 1:
                raise _Refused(line, "holds more than one YAML document.")
        if not isinstance(event, yaml.NodeEvent):
            if isinstance(event, yaml.CollectionEndEvent):
                depth -= 1
            continue
        nodes += 1
        if nodes > MAX_NODES:
            raise _Refused(line, f"holds more than {MAX_NODES} values.")
        if event.anchor is not None:
            sign = "*" if isinstance(event, yaml.AliasEvent) else "&"
            raise _Refused(
                line,
                f"uses a YAML anchor or alias ({sign}{event.anchor}): anchors and "
                "aliases are not allowed in a study file; write each value out.",
            )
        tag = getattr(event, "tag", None)
        if tag is not None:
            tag = re.sub(r"^tag:yaml\.org,2002:", "!!", tag)
            raise _Refused(
                line,
                f"uses an explicit YAML tag ({tag}): tags are not allowed; quote text instead.",
            )
        if isinstance(event, yaml.CollectionStartEvent):
            depth += 1
            if depth > MAX_DEPTH:
                raise _Refused(line, f"is nested deeper than {MAX_DEPTH} levels.")


def _yaml_value(node: yaml.Node, loc: Loc, out: Parsed, ctor: Any) -> object:
    import yaml

    out.lines.setdefault(loc, node.start_mark.line + 1)
    if isinstance(node, yaml.MappingNode):
        mapping: dict[str, object] = {}
        for key_node, value_node in node.value:
            line = key_node.start_mark.line + 1
            if not isinstance(key_node, yaml.ScalarNode):
                out.note(loc, line, "has a non-text key.")
                continue
            key = key_node.value  # keys as written: `no:` stays the text "no"
            if key in mapping:
                first = out.lines[(*loc, key)]
                out.note((*loc, key), line, f"is given twice (first on line {first}): {_ONCE}")
                continue
            out.lines[(*loc, key)] = line
            mapping[key] = _yaml_value(value_node, (*loc, key), out, ctor)
        return mapping
    if isinstance(node, yaml.SequenceNode):
        return [_yaml_value(item, (*loc, i), out, ctor) for i, item in enumerate(node.value)]
    tag = node.tag.rsplit(":", 1)[-1]
    if tag not in ("int", "float", "bool", "null"):
        return node.value  # text, and dates kept as written (checked as YYYY-MM-DD)
    out.raw[loc] = node.value
    try:
        value: object = ctor.construct_object(node)
    except ValueError:
        out.note(loc, out.lines[loc], "is not a number this tool can read.", node.value[:40])
        out.unreadable.add(loc)
        return None
    return value


# --- JSON -------------------------------------------------------------------------------------


@dataclass(frozen=True)
class _At:
    """A JSON value with the offsets of its source text."""

    value: object
    start: int
    end: int


class _Pairs(list[tuple[str, _At]]):
    """The key/value pairs of one JSON object, in order, duplicates kept."""


class _LocatingDecoder(json.JSONDecoder):
    """The stdlib decoder, recording where each value starts and bounding nesting and size."""

    def __init__(self) -> None:
        super().__init__(object_pairs_hook=_Pairs)
        scalar = json.scanner.make_scanner(cast(Any, self))
        memo: dict[str, str] = {}
        depth = 0
        nodes = 0

        def scan_once(s: str, idx: int) -> tuple[_At, int]:
            nonlocal depth, nodes
            nodes += 1
            if nodes > MAX_NODES:
                raise _Refused(s.count("\n", 0, idx) + 1, f"holds more than {MAX_NODES} values.")
            opener = s[idx : idx + 1]
            if opener not in ("{", "["):
                value, end = scalar(s, idx)
                return _At(value, idx, end), end
            depth += 1
            if depth > MAX_DEPTH:
                line = s.count("\n", 0, idx) + 1
                raise _Refused(line, f"is nested deeper than {MAX_DEPTH} levels.")
            try:
                if opener == "{":
                    value, end = json.decoder.JSONObject(  # type: ignore[attr-defined]
                        (s, idx + 1), True, scan_once, None, _Pairs, memo
                    )
                else:
                    value, end = json.decoder.JSONArray(  # type: ignore[attr-defined]
                        (s, idx + 1), scan_once
                    )
            finally:
                depth -= 1
            return _At(value, idx, end), end

        self.scan_once = scan_once


def _parse_json(text: str) -> Parsed:
    try:
        top = _LocatingDecoder().decode(text)
    except json.JSONDecodeError as err:
        raise _Refused(err.lineno, f"is not valid JSON: {err.msg}.") from None
    except ValueError:  # an integer with more digits than Python converts
        raise _Refused(None, "holds a number too long to read.") from None
    starts = [i for i, ch in enumerate(text) if ch == "\n"]
    parsed = Parsed(kind="json")

    def unwrap(at: _At, loc: Loc) -> object:
        line = bisect_right(starts, at.start) + 1
        parsed.lines.setdefault(loc, line)
        if isinstance(at.value, _Pairs):
            mapping: dict[str, object] = {}
            for key, item in at.value:
                if key in mapping:
                    first = parsed.lines[(*loc, key)]
                    line = bisect_right(starts, item.start) + 1
                    parsed.note(
                        (*loc, key), line, f"is given twice (first on line {first}): {_ONCE}"
                    )
                    continue
                mapping[key] = unwrap(item, (*loc, key))
            return mapping
        if isinstance(at.value, list):
            return [unwrap(item, (*loc, i)) for i, item in enumerate(at.value)]
        if not isinstance(at.value, str):
            parsed.raw[loc] = text[at.start : at.end]
        return at.value

    parsed.tree = unwrap(top, ())
    return parsed


# --- building the study -----------------------------------------------------------------------


_ENUMS: dict[str, type[Waveform | Flow | Plaque]] = {
    "waveform": Waveform,
    "flow": Flow,
    "plaque": Plaque,
}
_SEGMENT_REFS = ("at", "reconstitutes", "from", "to")


def _fields(cls: type, item: dict[str, Any], line: int | None = None) -> dict[str, Any]:
    """Return the keyword arguments of ``cls`` from a checked mapping.

    Numbers become floats and words enums; segment names become canonical ids, the only value
    changed on the way in. ``samples`` is left to the caller.
    """
    names = {f.name for f in dataclasses.fields(cls)}
    out: dict[str, Any] = {"line": line} if "line" in names else {}
    for key, value in item.items():
        name = "from_" if key == "from" else key
        if name not in names or key == "samples":
            continue
        if key in _ENUMS:
            out[name] = _ENUMS[key](value)
        elif key in _SEGMENT_REFS:
            out[name] = anatomy.resolve(value) or value
        elif isinstance(value, int | float) and not isinstance(value, bool):
            out[name] = float(value)
        else:
            out[name] = value
    return out


def _limb(side: str, limb: dict[str, Any], lines: dict[Loc, int]) -> Limb:
    def at(*loc: Key) -> int | None:
        return lines.get(("limbs", side, *loc))

    segments = {}
    for key, item in limb.get("segments", {}).items():
        seg = anatomy.resolve(key) or key
        repeats = tuple(Sample(**_fields(Sample, x)) for x in item.get("samples", ()))
        segments[seg] = SegmentFinding(
            **_fields(SegmentFinding, item, at("segments", key)), id=seg, samples=repeats
        )
    grafts = []
    for i, item in enumerate(limb.get("grafts", [])):
        samples = {
            site: Sample(**_fields(Sample, sample, at("grafts", i, "samples", site)))
            for site, sample in item.get("samples", {}).items()
        }
        grafts.append(Graft(**_fields(Graft, item, at("grafts", i)), samples=samples))
    return Limb(
        side=Side(side),
        segments=segments,
        lesions=tuple(
            Lesion(**_fields(Lesion, item, at("lesions", i)))
            for i, item in enumerate(limb.get("lesions", []))
        ),
        stents=tuple(
            Stent(**_fields(Stent, item, at("stents", i)))
            for i, item in enumerate(limb.get("stents", []))
        ),
        grafts=tuple(grafts),
        presentation=Presentation(limb["presentation"]) if "presentation" in limb else None,
    )


def _date(value: Any) -> dt.date | None:
    return None if value is None else dt.date.fromisoformat(value)


def _float(value: Any) -> float | None:
    return None if value is None else float(value)


def _build(parsed: Parsed, name: str) -> Study:
    """Turn a checked tree into the study's values; every check has passed."""
    tree: dict[str, Any] = parsed.tree  # type: ignore[assignment]
    patient, exam = tree.get("patient", {}), tree.get("exam", {})
    pressures = tree.get("pressures", {})
    brachial = pressures.get("brachial", {})

    def limb_pressures(side: str) -> LimbPressures:
        return LimbPressures(**_fields(LimbPressures, pressures.get(side, {})))

    return Study(
        source=name,
        # the file's keys are the field names (the schema admits no others)
        patient=Patient(**{**patient, "birth_date": _date(patient.get("birth_date"))}),
        exam=Exam(**{**exam, "date": _date(exam.get("date"))}),
        pressures=Pressures(
            brachial_right=_float(brachial.get("right")),
            brachial_left=_float(brachial.get("left")),
            right=limb_pressures("right"),
            left=limb_pressures("left"),
        ),
        limbs={
            Side(side): _limb(side, limb, parsed.lines)
            for side, limb in tree.get("limbs", {}).items()
        },
        prior=tree.get("prior"),
        notes=tree.get("notes"),
        format=int(tree["format"]),
    )
