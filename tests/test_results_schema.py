"""The results schema is strict: every object closed, every field typed and described.

Every example's results document (alone, compared with its own findings as the prior, and the
follow-up pair with its real prior) validates; a copy damaged at any one position does not: an unknown key
injected into an object, a number turned into a string, a string into a number, a boolean into a
string. Positions that share one place in the layout (the same path, list items alike) are
tried once; ``LIMBCHART_EVERY_POSITION=1`` tries every position of every document instead.
"""

from __future__ import annotations

import json
import os
from collections.abc import Iterator
from functools import cache
from pathlib import Path
from typing import Any

import pytest

from diagram._version import __version__
from diagram.assess import assess
from diagram.output.results import results_document, results_schema
from diagram.reading.load import load_prior, load_study

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "examples").glob("*.yaml")) + sorted(
    (ROOT / "examples" / "sr").glob("*.*")
)
EVERY_POSITION = os.environ.get("LIMBCHART_EVERY_POSITION") == "1"


@cache
def validator():  # type: ignore[no-untyped-def]
    import jsonschema

    schema = results_schema()
    jsonschema.Draft202012Validator.check_schema(schema)
    return jsonschema.Draft202012Validator(schema)


def _documents() -> list[tuple[str, dict[str, Any]]]:
    """Return every example's results: alone, with its findings as a prior (the exam's own
    accession and UID taken off: a copy of the study is refused as its prior), and with its own
    prior."""
    from dataclasses import replace

    docs = []
    for path in EXAMPLES:
        study = load_study(path)
        same = replace(study, exam=replace(study.exam, accession=None, study_uid=None))
        runs = [("alone", None), ("self-prior", same)]
        own = load_prior(study)
        if own is not None:
            runs.append(("own-prior", own))
        for label, prior in runs:
            doc = results_document(assess(study, prior=prior), version=__version__)
            docs.append((f"{path.name}/{label}", json.loads(json.dumps(doc))))
    return docs


DOCUMENTS = _documents()


@pytest.mark.parametrize("doc", [d for _, d in DOCUMENTS], ids=[n for n, _ in DOCUMENTS])
def test_every_example_validates(doc: dict[str, Any]) -> None:
    assert [e.message for e in validator().iter_errors(doc)] == []


def test_the_comparison_is_exercised() -> None:
    """The documents hold every kind of comparison entry the mutations must reach."""
    comps = [d["comparison"] for _, d in DOCUMENTS if d["comparison"] is not None]
    assert all(any(c[k] for c in comps) for k in ("segments", "lesions", "devices", "abi"))


Path_ = tuple[Any, ...]


def _positions(node: Any, path: Path_ = ()) -> Iterator[tuple[Path_, str]]:
    """Yield (path, kind) for every mutable position below ``node``."""
    if isinstance(node, dict):
        yield path, "inject"
        for key, value in node.items():
            yield from _positions(value, (*path, key))
    elif isinstance(node, list):
        for i, value in enumerate(node):
            yield from _positions(value, (*path, i))
    elif isinstance(node, bool):
        yield path, "bool"
    elif isinstance(node, int | float):
        yield path, "number"
    elif isinstance(node, str):
        yield path, "string"


def _pattern(path: Path_) -> Path_:
    return tuple("[]" if isinstance(p, int) else p for p in path)


def _mutated(doc: dict[str, Any], path: Path_, kind: str) -> dict[str, Any]:
    copy: dict[str, Any] = json.loads(json.dumps(doc))
    parent: Any = copy
    for step in path[:-1]:
        parent = parent[step]
    if kind == "inject":
        target = parent[path[-1]] if path else copy
        target["unexpected"] = 1
        return copy
    value = parent[path[-1]]
    parent[path[-1]] = {"number": str, "bool": str, "string": lambda _: 7}[kind](value)
    return copy


def _mutations() -> list[tuple[str, Path_, str]]:
    seen: set[tuple[Any, ...]] = set()
    out = []
    for name, doc in DOCUMENTS:
        for path, kind in _positions(doc):
            key = (name, path, kind) if EVERY_POSITION else (_pattern(path), kind)
            if key not in seen:
                seen.add(key)
                out.append((name, path, kind))
    return out


def test_the_schema_rejects_every_mutation() -> None:
    docs = dict(DOCUMENTS)
    tried = _mutations()
    passed = [
        f"{name}: {kind} at {'/'.join(map(str, path)) or '(top)'}"
        for name, path, kind in tried
        if validator().is_valid(_mutated(docs[name], path, kind))
    ]
    kinds = {k: sum(1 for _, _, kind in tried if kind == k) for k in ("inject", "number")}
    print(f"mutations tried {len(tried)}, rejected {len(tried) - len(passed)}; {kinds}")
    assert kinds["inject"] > 100 and kinds["number"] > 100  # the walk reached the document
    assert passed == []


def _schema_nodes(node: Any, path: str = "") -> Iterator[tuple[str, dict[str, Any]]]:
    if isinstance(node, dict):
        yield path, node
        for key, value in node.items():
            yield from _schema_nodes(value, f"{path}/{key}")
    elif isinstance(node, list):
        for i, value in enumerate(node):
            yield from _schema_nodes(value, f"{path}/{i}")


def test_every_object_is_closed_and_every_field_described() -> None:
    problems = []
    for path, node in _schema_nodes(results_schema()):
        if node.get("type") == "object" and node.get("additionalProperties") is not False:
            problems.append(f"{path}: open object")
        if path.split("/")[-2:-1] == ["properties"] and not node.get("description"):
            problems.append(f"{path}: no description")
        if path.split("/")[-2:-1] == ["properties"] and not (
            {"type", "enum", "const", "$ref", "anyOf"} & set(node)
        ):
            problems.append(f"{path}: no type")
    assert problems == []


# Units a field's name promises (the house's naming rule: *_cm lengths, velocities in cm/s).
UNIT_BY_NAME = [
    ("_pct", "(%)"),
    ("_cm", "(cm)"),
    ("psv", "(cm/s)"),
    ("edv", "(cm/s)"),
    ("flow_velocity", "(cm/s)"),
]


def test_every_measured_field_names_its_unit() -> None:
    missing = []
    checked = 0
    for path, node in _schema_nodes(results_schema()):
        name = path.rsplit("/", 1)[-1]
        if path.split("/")[-2:-1] != ["properties"]:
            continue
        for part, unit in UNIT_BY_NAME:
            if part in name and "number" in str(node.get("type")):
                checked += 1
                if unit not in node["description"]:
                    missing.append(f"{path}: {node['description']!r} lacks {unit}")
                break
    assert checked >= 20 and missing == []
