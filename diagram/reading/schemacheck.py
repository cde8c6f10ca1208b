"""A quick yes/no check of a parsed study against the study file's JSON Schema.

Most study files are valid, and importing jsonschema costs more than reading, checking and
assessing a study together. This checker knows the keywords the study schema uses and answers
"conforms" only when every value passes them. Anything else (a value that fails, a keyword it
does not know, a ``$ref`` outside the schema's ``$defs``, a value that is not plain JSON such as a
non-finite number) answers "not shown", and the caller then runs jsonschema, which words the
problems. So it may be stricter than the schema, never looser: ``tests/test_schemacheck.py``
compares it with jsonschema on every example and on thousands of altered copies of them.

Keywords follow JSON Schema Draft 2020-12 (json-schema.org, "Validation" and "Core"); ``format``
is an annotation there unless a format checker is asked for, and the study check asks for none.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Mapping
from functools import lru_cache
from typing import Any

Schema = Mapping[str, Any] | bool

_ANNOTATIONS = frozenset(
    {"$schema", "$id", "$comment", "title", "description", "default", "examples", "format"}
)
_JSON_TYPES: dict[str, Callable[[object], bool]] = {
    "object": lambda v: type(v) is dict and all(type(k) is str for k in v),
    "array": lambda v: type(v) is list,
    "string": lambda v: type(v) is str,
    "boolean": lambda v: type(v) is bool,
    "null": lambda v: v is None,
    "integer": lambda v: type(v) is int,
    "number": lambda v: type(v) is int or (type(v) is float and math.isfinite(v)),
}


def conforms(value: object, schema: Mapping[str, Any]) -> bool:
    """Return True when ``value`` is shown to conform to ``schema``; False when not shown."""
    return _Walk(schema).ok(value, schema)


class _Walk:
    def __init__(self, root: Mapping[str, Any]) -> None:
        self.root = root

    def ok(self, value: object, schema: Schema) -> bool:
        if isinstance(schema, bool):
            return schema
        if type(value) is float and not math.isfinite(value):
            return False  # jsonschema compares NaN and infinities in its own way: let it judge
        for key, rule in schema.items():
            if key in _ANNOTATIONS:
                continue
            check = _KEYWORDS.get(key)
            if check is None or not check(self, value, rule, schema):
                return False
        return True

    def ref(self, value: object, rule: object, _schema: Mapping[str, Any]) -> bool:
        if not isinstance(rule, str) or not rule.startswith("#/$defs/"):
            return False
        target = self.root.get("$defs", {}).get(rule[len("#/$defs/") :])
        return target is not None and self.ok(value, target)

    def properties(self, value: object, rule: Any, _schema: Mapping[str, Any]) -> bool:
        if type(value) is not dict:
            return True
        return all(self.ok(value[k], sub) for k, sub in rule.items() if k in value)

    def additional(self, value: object, rule: Any, schema: Mapping[str, Any]) -> bool:
        if type(value) is not dict:
            return True
        known = schema.get("properties", {})
        return all(self.ok(v, rule) for k, v in value.items() if k not in known)

    def items(self, value: object, rule: Any, _schema: Mapping[str, Any]) -> bool:
        return type(value) is not list or all(self.ok(v, rule) for v in value)


def _type(_w: _Walk, value: object, rule: Any, _s: Mapping[str, Any]) -> bool:
    names = rule if isinstance(rule, list) else [rule]
    return any(name in _JSON_TYPES and _JSON_TYPES[name](value) for name in names)


def _same(value: object, wanted: object) -> bool:
    """Equal and of one JSON type (stricter than the schema's equality, which takes 1 == 1.0)."""
    scalar = (str, int, float, bool, type(None))
    return type(value) is type(wanted) and isinstance(value, scalar) and value == wanted


def _enum(_w: _Walk, value: object, rule: Any, _s: Mapping[str, Any]) -> bool:
    return any(_same(value, choice) for choice in rule)


def _const(_w: _Walk, value: object, rule: Any, _s: Mapping[str, Any]) -> bool:
    return _same(value, rule)


def _numeric(test: Callable[[float, float], bool]) -> Callable[..., bool]:
    def check(_w: _Walk, value: object, rule: Any, _s: Mapping[str, Any]) -> bool:
        if type(value) not in (int, float):
            return True  # applies to numbers only
        return isinstance(rule, int | float) and test(value, rule)  # type: ignore[arg-type]

    return check


def _required(_w: _Walk, value: object, rule: Any, _s: Mapping[str, Any]) -> bool:
    return type(value) is not dict or all(key in value for key in rule)


def _max_length(_w: _Walk, value: object, rule: Any, _s: Mapping[str, Any]) -> bool:
    return type(value) is not str or len(value) <= rule


def _max_items(_w: _Walk, value: object, rule: Any, _s: Mapping[str, Any]) -> bool:
    return type(value) is not list or len(value) <= rule


@lru_cache(maxsize=64)
def _regex(pattern: str) -> re.Pattern[str]:
    return re.compile(pattern)


def _pattern(_w: _Walk, value: object, rule: Any, _s: Mapping[str, Any]) -> bool:
    return type(value) is not str or _regex(rule).search(value) is not None


_KEYWORDS: dict[str, Callable[[_Walk, object, Any, Mapping[str, Any]], bool]] = {
    "type": _type,
    "enum": _enum,
    "const": _const,
    "minimum": _numeric(lambda v, r: v >= r),
    "maximum": _numeric(lambda v, r: v <= r),
    "exclusiveMinimum": _numeric(lambda v, r: v > r),
    "exclusiveMaximum": _numeric(lambda v, r: v < r),
    "required": _required,
    "maxLength": _max_length,
    "maxItems": _max_items,
    "pattern": _pattern,
    "$ref": _Walk.ref,
    "$defs": lambda _w, _v, _r, _s: True,  # definitions, used through $ref
    "properties": _Walk.properties,
    "additionalProperties": _Walk.additional,
    "items": _Walk.items,
}
