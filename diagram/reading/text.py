"""The text study readers: YAML and JSON, each value located by its line.

Both refuse hostile input before anything is built: NUL bytes, text that is not UTF-8, YAML
anchors and aliases (no alias bombs), explicit YAML tags, nesting deeper than 20 levels and more
than 10 000 values. Keys given twice are reported, not silently overwritten. A file that fails
to decode or parse is explained in a user's words where it can be (:mod:`diagram.reading.diagnose`:
a Word document, UTF-16 or Latin-1 text, a tab in YAML, a trailing comma in JSON).
"""

from __future__ import annotations

import json
import json.decoder
import json.scanner
import re
from bisect import bisect_right
from collections.abc import Iterator
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, cast

from diagram.reading import diagnose
from diagram.reading.checks import Loc, Parsed
from diagram.reading.formats import Refused

if TYPE_CHECKING:
    import yaml

MAX_DEPTH = 20
MAX_NODES = 10_000

_ONCE = "give each key once."


def parse_yaml_bytes(data: bytes) -> Parsed:
    """Parse a YAML study's bytes into a located tree (not yet checked)."""
    return _parse_yaml(_text(data))


def parse_json_bytes(data: bytes) -> Parsed:
    """Parse a JSON study's bytes into a located tree (not yet checked)."""
    return _parse_json(_text(data))


def _text(data: bytes) -> str:
    """Return the file's text; refuse documents, binary files and text that is not UTF-8."""
    found = diagnose.not_a_text_file(data)
    if found is not None:  # a Word document, a UTF-16 file ...
        raise Refused(found.line, found.rule, hint=found.hint)
    if b"\0" in data:
        line = data.count(b"\n", 0, data.index(b"\0")) + 1
        raise Refused(line, "is a binary file (it holds NUL bytes), not a YAML or JSON study.")
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as err:
        found = diagnose.not_utf8(data, err.start)
        raise Refused(found.line, found.rule, hint=found.hint) from None


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
        plain = diagnose.yaml_hint(text, line, mark.column if mark is not None else None)
        if plain is not None:
            raise Refused(plain.line, plain.rule, hint=plain.hint) from None
        raise Refused(line, f"is not valid YAML: {err.problem or err.context}{where}.") from None
    except yaml.YAMLError as err:
        raise Refused(None, f"is not valid YAML: {err}.") from None
    if root is None:
        raise Refused(None, "holds no study (only comments or blank lines).")
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
                raise Refused(line, "holds more than one YAML document.")
        if not isinstance(event, yaml.NodeEvent):
            if isinstance(event, yaml.CollectionEndEvent):
                depth -= 1
            continue
        nodes += 1
        if nodes > MAX_NODES:
            raise Refused(line, f"holds more than {MAX_NODES} values.")
        if event.anchor is not None:
            sign = "*" if isinstance(event, yaml.AliasEvent) else "&"
            raise Refused(
                line,
                f"uses a YAML anchor or alias ({sign}{event.anchor}): anchors and "
                "aliases are not allowed in a study file; write each value out.",
            )
        tag = getattr(event, "tag", None)
        if tag is not None:
            tag = re.sub(r"^tag:yaml\.org,2002:", "!!", tag)
            raise Refused(
                line,
                f"uses an explicit YAML tag ({tag}): tags are not allowed; quote text instead.",
            )
        if isinstance(event, yaml.CollectionStartEvent):
            depth += 1
            if depth > MAX_DEPTH:
                raise Refused(line, f"is nested deeper than {MAX_DEPTH} levels.")


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
                raise Refused(s.count("\n", 0, idx) + 1, f"holds more than {MAX_NODES} values.")
            opener = s[idx : idx + 1]
            if opener not in ("{", "["):
                value, end = scalar(s, idx)
                return _At(value, idx, end), end
            depth += 1
            if depth > MAX_DEPTH:
                line = s.count("\n", 0, idx) + 1
                raise Refused(line, f"is nested deeper than {MAX_DEPTH} levels.")
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
        plain = diagnose.json_hint(text, err.pos)
        if plain is not None:
            raise Refused(plain.line, plain.rule, hint=plain.hint) from None
        raise Refused(err.lineno, f"is not valid JSON: {err.msg}.") from None
    except ValueError:  # an integer with more digits than Python converts
        raise Refused(None, "holds a number too long to read.") from None
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
