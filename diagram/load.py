"""Read a study file (YAML or JSON, DESIGN.md §3) into a validated :class:`Study`.

Every problem found is collected with its file and line, then raised once as a
:class:`StudyError`; nothing is returned unless the whole file is sound. Hostile input is refused
before it is built: files over 2 MB, binary files, YAML anchors and aliases (no alias bombs),
explicit YAML tags, nesting deeper than 20 levels and more than 10 000 values. The only value
changed on the way in is a segment alias, resolved to its canonical id.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import difflib
import functools
import json
import json.decoder
import json.scanner
import math
import re
from bisect import bisect_right
from collections.abc import Iterator
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import TYPE_CHECKING, Any, cast

from diagram import anatomy
from diagram.anatomy import Side
from diagram.errors import Problem, StudyError
from diagram.study import (
    Exam,
    Flow,
    Graft,
    Lesion,
    Limb,
    LimbPressures,
    Patient,
    Plaque,
    Pressures,
    Sample,
    SegmentFinding,
    Stent,
    Study,
    Waveform,
)

if TYPE_CHECKING:
    import jsonschema
    import yaml

MAX_BYTES = 2 * 1024 * 1024
MAX_DEPTH = 20
MAX_NODES = 10_000

Key = str | int
Loc = tuple[Key, ...]


@dataclass
class _Parsed:
    """A parsed file: plain values plus where each one was written."""

    kind: str = "yaml"
    tree: object = None
    lines: dict[Loc, int] = field(default_factory=dict)
    raw: dict[Loc, str] = field(default_factory=dict)  # source text of non-string scalars
    problems: list[Problem] = field(default_factory=list)
    unreadable: set[Loc] = field(default_factory=set)  # values already refused

    def note(self, loc: Loc, line: int, rule: str, value: str | None = None) -> None:
        self.problems.append(Problem("", line, _dotted(loc), value, rule))


_NO_VALUE = object()  # a problem about a key or an item, not about a value
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
            data = handle.read(MAX_BYTES + 1)
    except OSError as err:
        problem = Problem(name, None, "", None, f"cannot be read: {err.strerror}.")
        raise StudyError([problem]) from None
    return _load_bytes(data, name, Path(path).suffix)


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


def study_schema() -> dict[str, Any]:
    """Return the JSON Schema (Draft 2020-12) of the study file, a fresh copy on every call."""
    schema: dict[str, Any] = json.loads(_schema_text())
    return schema


@functools.cache
def _schema_text() -> str:
    return resources.files("diagram").joinpath("schema/study.schema.json").read_text("utf-8")


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
    checker = _Checker(name, parsed)
    checker.check()
    if checker.problems:
        raise StudyError(sorted(checker.problems, key=lambda p: p.line or 0))
    return _build(parsed, name)


# --- YAML -------------------------------------------------------------------------------------


def _parse_yaml(text: str) -> _Parsed:
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
    parsed = _Parsed()
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


def _yaml_value(node: yaml.Node, loc: Loc, out: _Parsed, ctor: Any) -> object:
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


def _parse_json(text: str) -> _Parsed:
    try:
        top = _LocatingDecoder().decode(text)
    except json.JSONDecodeError as err:
        raise _Refused(err.lineno, f"is not valid JSON: {err.msg}.") from None
    except ValueError:  # an integer with more digits than Python converts
        raise _Refused(None, "holds a number too long to read.") from None
    starts = [i for i, ch in enumerate(text) if ch == "\n"]
    parsed = _Parsed(kind="json")

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


# --- checks -----------------------------------------------------------------------------------

_MEASURED = ("psv", "edv", "vr", "proximal_psv", "shift_hz")  # none of them where no flow
_TYPE_RULES = {
    "number": "must be a number",
    "integer": "must be a whole number",
    "string": "must be text",
    "boolean": "must be true or false",
    "object": "must be a mapping of keys to values",
    "array": "must be a list",
}
_LIMIT_LABELS = {"psv": "PSV", "edv": "EDV", "proximal_psv": "a proximal PSV"}
_PATIENT_KEYS = {f.name for f in dataclasses.fields(Patient)}
_YAML_BOOLEAN_WORDS = {"yes", "no", "on", "off"}
_PLAIN_DECIMAL = re.compile(r"[-+]?(0|[1-9][0-9]*)(\.[0-9]*)?([eE][-+]?[0-9]+)?|[-+]?\.[0-9]+")


def _dotted(loc: Loc) -> str:
    """Return the field path as messages print it: ``limbs.left.lesions[0].psv``."""
    if loc[:1] == ("patient",) and len(loc) > 1 and loc[1] not in _PATIENT_KEYS:
        loc = (loc[0], "(unknown key)", *loc[2:])  # a stray key there may itself identify
    out = ""
    for key in loc:
        out += f"[{key}]" if isinstance(key, int) else (f".{key}" if out else key)
    return out


def _num(value: float) -> str:
    return str(int(value)) if float(value).is_integer() else repr(value)


def _number(value: object) -> float | None:
    """Return a finite number, or None for anything else (bools are not numbers)."""
    if isinstance(value, bool) or not isinstance(value, int | float):
        return None
    return float(value) if math.isfinite(value) else None


def _private(loc: Loc) -> bool:
    """Return True where a value may identify the patient and must not be echoed."""
    if loc[:1] in (("patient",), ("notes",)) or loc[-1:] == ("comment",):
        return True
    if loc[:1] == ("exam",):  # every exam fact but the criteria names
        return len(loc) < 2 or not str(loc[1]).endswith("criteria")
    return False


def _close(word: str, choices: list[str]) -> str | None:
    folded = {c.lower(): c for c in choices}
    match = difflib.get_close_matches(word.lower(), list(folded), n=1, cutoff=0.6)
    return f"did you mean {folded[match[0]]}?" if match else None


class _Checker:
    """Collect every problem of a parsed study: schema, number literals, the arterial tree."""

    def __init__(self, name: str, parsed: _Parsed) -> None:
        self.name = name
        self.parsed = parsed
        self.problems: list[Problem] = [
            Problem(name, p.line, p.field, p.value, p.rule, p.hint) for p in parsed.problems
        ]
        self.bad: set[Loc] = set(parsed.unreadable)
        self.seen: set[tuple[int | None, str, str]] = set()

    def line(self, loc: Loc) -> int | None:
        for end in range(len(loc), -1, -1):
            if loc[:end] in self.parsed.lines:
                return self.parsed.lines[loc[:end]]
        return None

    def show(self, loc: Loc, value: object) -> str | None:
        if _private(loc):
            return None
        if loc in self.parsed.raw:
            return self.parsed.raw[loc][:40] or "(empty)"
        if isinstance(value, str):
            return repr(value if len(value) <= 40 else value[:40] + "...")
        if isinstance(value, bool):
            return "true" if value else "false"
        if value is None:
            return "null"
        if isinstance(value, dict):
            return "{...}"
        if isinstance(value, list):
            return "[...]"
        number = _number(value)
        return _num(number) if number is not None else repr(value)

    def report(
        self, loc: Loc, rule: str, value: object = _NO_VALUE, *, hint: str | None = None
    ) -> None:
        if any(loc[:end] in self.bad for end in range(len(loc) + 1)):
            return  # one problem per value, none inside a value already refused
        line = self.line(loc)
        text = None if value is _NO_VALUE else self.show(loc, value)
        if (line, _dotted(loc), rule) in self.seen:
            return
        self.seen.add((line, _dotted(loc), rule))
        self.problems.append(Problem(self.name, line, _dotted(loc), text, rule, hint))

    def refuse(
        self, item: dict[str, object], loc: Loc, key: str, rule: str, hint: str | None = None
    ) -> None:
        """Report the value of ``key`` in the mapping ``item`` found at ``loc``."""
        self.report((*loc, key), rule, item[key], hint=hint)

    def check(self) -> None:
        import jsonschema

        tree = self.parsed.tree
        for error in jsonschema.Draft202012Validator(study_schema()).iter_errors(tree):
            self.schema_error(error)
        self.literals(tree, ())
        if not isinstance(tree, dict):
            return
        for key in ("patient", "exam"):
            section = tree.get(key)
            if isinstance(section, dict):
                for date_key in ("birth_date", "date"):
                    if isinstance(section.get(date_key), str):
                        self.date((key, date_key), section[date_key])
        limbs = tree.get("limbs")
        if isinstance(limbs, dict):
            self.limbs(limbs)

    # -- schema errors --

    def schema_error(self, error: jsonschema.ValidationError) -> None:
        loc: Loc = tuple(error.absolute_path)
        kind, schema, value = error.validator, error.schema, error.instance
        if kind == "additionalProperties" and isinstance(value, dict):
            allowed = list(schema.get("properties", {}))
            for key in value:
                if key not in allowed:
                    self.report((*loc, key), "is not a known key.", hint=_close(str(key), allowed))
                    self.bad.add((*loc, key))
            return
        if kind == "required" and isinstance(value, dict):
            for key in error.validator_value:
                if key not in value:
                    self.report((*loc, key), "is required.")
            return
        hint = None
        if kind != "type" and isinstance(value, float) and not math.isfinite(value):
            rule = "must be a finite number."
        elif "pattern" in schema and kind in ("type", "pattern", "maxLength"):
            rule = f"must be {schema['description']}."
        elif kind == "type":
            expected = str(error.validator_value)
            rule = f"{_TYPE_RULES.get(expected, 'has the wrong type')}."
            hint = self.type_hint(loc, value, expected)
        elif kind == "enum":
            choices = [str(c) for c in error.validator_value]
            rule = f"must be one of {', '.join(choices)}."
            hint = _close(value, choices) if isinstance(value, str) else None
        elif kind == "const":
            rule = f"must be {error.validator_value}, the only study format this version reads."
        elif kind in ("minimum", "maximum") and loc[-1:] == ("angle",):
            low, high = _num(schema["minimum"]), _num(schema["maximum"])
            rule = f"must be between {low} and {high} degrees."
        elif kind == "minimum":
            limit = error.validator_value
            rule = "must not be negative." if limit == 0 else f"must be at least {_num(limit)}."
        elif kind == "exclusiveMinimum" and loc[-1:] in (("psv",), ("proximal_psv",)):
            rule = "must be greater than 0."
            hint = "record no flow with occluded: true or flow: absent"
        elif kind == "exclusiveMinimum":
            rule = f"must be greater than {_num(error.validator_value)}."
        elif kind == "maximum" and loc[:1] == ("pressures",):
            limit = _num(error.validator_value)
            rule = f"is refused: a pressure above {limit} mmHg is not physiological."
        elif kind == "maximum" and loc[-1:] and str(loc[-1]) in _LIMIT_LABELS:
            label, limit = _LIMIT_LABELS[str(loc[-1])], _num(error.validator_value)
            rule = f"is refused: {label} above {limit} cm/s is not physiological."
        elif kind == "maximum":
            rule = f"must be at most {_num(error.validator_value)}."
        else:
            rule = f"breaks the schema rule {kind!r}."
        if value is None:
            hint = "leave the key out when there is no value"
        self.report(loc, rule, value, hint=hint)
        self.bad.add(loc)  # one problem per value: later checks skip it

    def type_hint(self, loc: Loc, value: object, expected: str) -> str | None:
        raw = self.parsed.raw.get(loc, "")
        if isinstance(value, bool) and raw.lower() in _YAML_BOOLEAN_WORDS:
            advice = "quote text" if expected == "string" else f"give a {expected}"
            if _private(loc):  # say it without echoing the value
                return f"YAML reads yes, no, on and off as true or false; {advice}"
            return f"YAML reads {raw} as {str(value).lower()}; {advice}"
        if expected == "number" and isinstance(value, str):
            text = value.strip()
            if self.parsed.kind == "yaml" and re.fullmatch(r"[-+]?[0-9]+[eE][-+]?[0-9]+", text):
                return f"YAML 1.1 reads {text} as text; write {_num(float(text))}"
            if _PLAIN_DECIMAL.fullmatch(text):
                return "write the number without quotes"
        if expected == "string" and _number(value) is not None:
            return "put it in quotes"
        return None

    # -- numbers and dates --

    def literals(self, value: object, loc: Loc) -> None:
        """Refuse NaN, infinities and YAML 1.1 number forms that change the value read."""
        if isinstance(value, dict):
            for key, item in value.items():
                self.literals(item, (*loc, key))
        elif isinstance(value, list):
            for i, item in enumerate(value):
                self.literals(item, (*loc, i))
        elif isinstance(value, float) and not math.isfinite(value):
            self.report(loc, "must be a finite number.", value)
        elif self.parsed.kind == "yaml" and isinstance(value, int | float):
            raw = self.parsed.raw.get(loc, "")
            if raw and not isinstance(value, bool) and not _PLAIN_DECIMAL.fullmatch(raw):
                self.report(
                    loc,
                    "must be written as a plain decimal number.",
                    value,
                    hint=f"YAML 1.1 reads {raw} as {_num(value)}",
                )

    def date(self, loc: Loc, text: str) -> None:
        try:
            dt.date.fromisoformat(text)
        except ValueError:
            self.report(loc, "is not a calendar date.", text)

    # -- the arterial tree --

    def segment(self, loc: Loc, name: object, *, shown: bool = True) -> str | None:
        """Return the canonical id named at ``loc``, reporting an unknown name."""
        if not isinstance(name, str) or loc in self.bad:
            return None
        seg = anatomy.resolve(name)
        if seg is None:
            close = anatomy.suggest(name)
            self.report(
                loc,
                "is not a segment id or alias.",
                name if shown else _NO_VALUE,
                hint=f"did you mean {close}?" if close else None,
            )
        return seg

    def limbs(self, limbs: dict[str, object]) -> None:
        aorta: dict[str, list[Loc]] = {}
        for side in ("right", "left"):
            limb = limbs.get(side)
            if not isinstance(limb, dict):
                continue
            base: Loc = ("limbs", side)
            segments = limb.get("segments")
            if isinstance(segments, dict):
                first: dict[str, Loc] = {}
                for key, sample in segments.items():
                    loc = (*base, "segments", key)
                    seg = self.segment(loc, key, shown=False)
                    if seg is not None and seg in first:
                        self.report(
                            loc,
                            f"names the same segment as {first[seg][-1]!r} "
                            f"(line {self.line(first[seg])}): give each segment once.",
                        )
                    elif seg is not None:
                        first[seg] = loc
                    if seg == "AO":
                        aorta.setdefault(side, []).append(loc)
                    if isinstance(sample, dict):
                        self.sample(loc, sample, "segment")
            for i, lesion in enumerate(self.items(limb, "lesions")):
                loc = (*base, "lesions", i)
                if self.lesion(loc, lesion) == "AO":
                    aorta.setdefault(side, []).append((*loc, "at"))
            for i, stent in enumerate(self.items(limb, "stents")):
                self.stent((*base, "stents", i), stent)
            for i, graft in enumerate(self.items(limb, "grafts")):
                for key in ("from", "to"):
                    self.segment((*base, "grafts", i, key), graft.get(key))
                samples = graft.get("samples")
                for site, sample in samples.items() if isinstance(samples, dict) else ():
                    if isinstance(sample, dict):
                        self.sample((*base, "grafts", i, "samples", site), sample, "graft site")
        if len(aorta) == 2:
            sides = sorted(aorta, key=lambda s: self.line(aorta[s][0]) or 0)
            other = aorta[sides[0]][0]
            for loc in aorta[sides[1]]:
                self.report(
                    loc,
                    f"is refused: the aorta is unpaired and is already under "
                    f"limbs.{sides[0]} (line {self.line(other)}); record AO under one "
                    "limb only.",
                )

    @staticmethod
    def items(limb: dict[str, object], key: str) -> list[dict[str, object]]:
        values = limb.get(key)
        return [v for v in values if isinstance(v, dict)] if isinstance(values, list) else []

    def sample(self, loc: Loc, sample: dict[str, object], noun: str) -> None:
        psv, edv = _number(sample.get("psv")), _number(sample.get("edv"))
        if psv is not None and edv is not None and edv > psv:
            self.refuse(
                sample, loc, "edv", f"is above the PSV ({_num(psv)}): EDV cannot exceed PSV."
            )
        for flag, why in (
            ("occluded", f"an occluded {noun} has no velocity"),
            ("not_assessed", f"a {noun} not assessed has no measurements"),
        ):
            if sample.get(flag) is True:
                for key in _MEASURED if flag == "not_assessed" else ("psv", "edv", "shift_hz"):
                    if key in sample:
                        self.refuse(sample, loc, key, f"is refused: {why}.")

    def extent(self, loc: Loc, seg: str, item: dict[str, object]) -> None:
        """Check that an extent starts inside ``seg`` and ends inside the limb."""
        nominal = anatomy.SEGMENTS[seg].length_cm
        start = _number(item.get("from_cm"))
        if start is not None and start > nominal and (*loc, "from_cm") not in self.bad:
            self.refuse(
                item,
                loc,
                "from_cm",
                f"is beyond the end of {seg} (nominal length {_num(nominal)} cm).",
            )
            return
        length = _number(item.get("length_cm"))
        remaining = anatomy.remaining_length_cm(seg, start or 0.0)
        if length is not None and length > remaining:
            where = f"{seg} at {_num(start)} cm" if start else f"the start of {seg}"
            rule = f"is longer than the limb: {_num(remaining)} cm remain below {where}"
            rule += " (nominal lengths)."
            self.refuse(item, loc, "length_cm", rule)

    def lesion(self, loc: Loc, lesion: dict[str, object]) -> str | None:
        self.sample(loc, lesion, "lesion")
        seg = self.segment((*loc, "at"), lesion.get("at"))
        if seg is not None:
            self.extent(loc, seg, lesion)
        if "reconstitutes" not in lesion:
            return seg
        target = self.segment((*loc, "reconstitutes"), lesion["reconstitutes"])
        if target is None:
            return seg
        if lesion.get("occluded") is not True:
            rule = "is refused: only an occluded lesion reconstitutes."
            self.refuse(lesion, loc, "reconstitutes", rule, hint="add occluded: true")
        elif seg is not None and not anatomy.is_downstream(target, seg):
            rule = f"is not downstream of {seg}, where the occlusion starts."
            self.refuse(lesion, loc, "reconstitutes", rule)
        return seg

    def stent(self, loc: Loc, stent: dict[str, object]) -> None:
        start = self.segment((*loc, "from"), stent.get("from"))
        end = self.segment((*loc, "to"), stent.get("to"))
        if start is not None:
            self.extent(loc, start, stent)
        if start and end and end != start and not anatomy.is_downstream(end, start):
            rule = f"is not {start} or downstream of it: a stent runs down one path."
            self.refuse(stent, loc, "to", rule)


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
        segments[seg] = SegmentFinding(**_fields(SegmentFinding, item, at("segments", key)), id=seg)
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
    )


def _date(value: Any) -> dt.date | None:
    return None if value is None else dt.date.fromisoformat(value)


def _float(value: Any) -> float | None:
    return None if value is None else float(value)


def _build(parsed: _Parsed, name: str) -> Study:
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
