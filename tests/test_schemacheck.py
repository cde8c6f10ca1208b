"""The quick schema check never passes what jsonschema refuses (it may only be stricter).

The reference is jsonschema's Draft 2020-12 validator on the shipped study schema (the
specification's own behaviour, as implemented by a library nobody here wrote).
"""

from __future__ import annotations

import copy
import math
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import jsonschema
import pytest

from diagram.reading.checks import study_schema
from diagram.reading.schemacheck import conforms
from diagram.reading.text import parse_yaml_bytes

EXAMPLES = sorted((Path(__file__).parents[1] / "examples").glob("*.yaml"))
SCHEMA = study_schema()
VALIDATOR = jsonschema.Draft202012Validator(SCHEMA)
ODD_VALUES: list[object] = [
    None, True, 0, -1, 1.5, 1e9, "", "x" * 300, "SFA-X", [], {}, [1], {"zz": 1}, math.nan
]  # fmt: skip


def _tree(path: Path) -> Any:
    parsed = parse_yaml_bytes(path.read_bytes())
    assert not parsed.problems
    return parsed.tree


def _places(tree: Any, loc: tuple[Any, ...] = ()) -> Iterator[tuple[Any, ...]]:
    yield loc
    if isinstance(tree, dict):
        for key, value in tree.items():
            yield from _places(value, (*loc, key))
    elif isinstance(tree, list):
        for i, value in enumerate(tree):
            yield from _places(value, (*loc, i))


def _set(tree: Any, loc: tuple[Any, ...], value: object) -> Any:
    out = copy.deepcopy(tree)
    holder = out
    for key in loc[:-1]:
        holder = holder[key]
    holder[loc[-1]] = value
    return out


def _mutants(tree: Any) -> Iterator[Any]:
    for loc in _places(tree):
        if not loc:
            continue
        for odd in ODD_VALUES:
            yield _set(tree, loc, odd)
        parent = tree
        for key in loc[:-1]:
            parent = parent[key]
        if isinstance(parent, dict):
            dropped = copy.deepcopy(tree)
            holder = dropped
            for key in loc[:-1]:
                holder = holder[key]
            del holder[loc[-1]]
            yield dropped
            yield _set(tree, (*loc[:-1], "unknown_key"), 1)


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_every_example_conforms_both_ways(path: Path) -> None:
    tree = _tree(path)
    assert VALIDATOR.is_valid(tree)
    assert conforms(tree, SCHEMA)


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_never_looser_than_jsonschema_on_altered_examples(path: Path) -> None:
    refused = passed = 0
    stricter = []
    for mutant in _mutants(_tree(path)):
        quick, reference = conforms(mutant, SCHEMA), VALIDATOR.is_valid(mutant)
        assert not quick or reference, "passed a study jsonschema refuses"
        refused += not reference
        passed += quick
        if quick != reference and "nan" not in repr(mutant):
            stricter.append(mutant)  # NaN is left to jsonschema on purpose
    assert refused > 100 and passed > 10  # both answers were exercised
    assert not stricter  # no needless jsonschema import for plain JSON values


@pytest.mark.parametrize(
    ("value", "schema", "expected"),
    [
        (1, {"type": "integer"}, True),
        (True, {"type": "integer"}, False),  # a boolean is not a number in JSON
        (1.0, {"type": "number", "minimum": 1}, True),
        (0.999, {"type": "number", "minimum": 1}, False),
        (1, {"exclusiveMinimum": 1}, False),
        (math.inf, {"type": "number"}, False),
        ("SFA-M", {"pattern": "^[A-Z]+-[A-Z]$"}, True),
        ("abc", {"maxLength": 2}, False),
        ([1, 2, 3], {"maxItems": 2}, False),
        ({"a": 1}, {"required": ["a", "b"]}, False),
        ({"a": 1}, {"properties": {"a": {"type": "string"}}}, False),
        ({"b": "x"}, {"additionalProperties": {"type": "string"}}, True),
        ({"b": 1}, {"additionalProperties": False}, False),
        ("x", {"anyOf": [{"type": "string"}]}, False),  # a keyword it does not know: not shown
        ("x", {"$ref": "https://example.org/s"}, False),  # only the schema's own $defs
        (1, {"enum": [1.0]}, False),  # stricter than the schema (1 == 1.0 there)
    ],
)
def test_keywords(value: object, schema: dict[str, Any], expected: bool) -> None:
    assert conforms(value, schema) is expected
    if expected:  # what it passes, the specification's validator passes too
        assert jsonschema.Draft202012Validator(schema).is_valid(value)
