"""Validate a criteria file's text into a :class:`Criteria`, every problem reported at once.

The YAML is screened before anything is built: anchors and aliases (how a YAML bomb expands),
explicit tags, nesting deeper than 20 levels, keys that are not plain words or given twice.
"""

from __future__ import annotations

import difflib
import math
from dataclasses import replace
from typing import Any

from diagram.criteria.model import LOOKS, NOT_ASSESSED, BandRule, Criteria
from diagram.errors import CriteriaError, Problem

_MAX_DEPTH = 20
_BAND_KEYS = ("id", "label", "look", "when", "occlusion", "source")
_WHEN_KEYS = ("vr_min", "psv_min", "match")
_TOP_KEYS = ("format", "name", "title", "kind", "source", "lesion_floor", "bands")


def _default_looks(bands: list[BandRule]) -> list[BandRule]:
    """Give each band without a look the house look of its place in the severity order."""
    graded = [b for b in bands if not b.occlusion]
    out = []
    for b in bands:
        if b.look:
            out.append(b)
        elif b.occlusion:
            out.append(replace(b, look="occluded"))
        else:
            place = graded.index(b) * (len(LOOKS) - 2) // max(len(graded) - 1, 1)
            out.append(replace(b, look=LOOKS[place]))
    return out


class _Report:
    """The problems found so far in one criteria file."""

    def __init__(self, file: str) -> None:
        self.file = file
        self.problems: list[Problem] = []

    def bad(
        self, line: int | None, field: str, value: Any, rule: str, hint: str | None = None
    ) -> None:
        shown = None if value is None else repr(value)
        self.problems.append(Problem(self.file, line, field, shown, rule, hint))

    def refuse(self, at: Any, rule: str) -> CriteriaError:
        return CriteriaError([Problem(self.file, at.line + 1 if at else None, "", None, rule)])


def _near(word: object, choices: tuple[str, ...] | list[str]) -> str | None:
    found = difflib.get_close_matches(str(word), choices, n=1)
    return f"did you mean {found[0]}?" if found else None


def _refuse_complex_keys(root: Any, report: _Report) -> None:
    """Refuse a key that is a list or a mapping (YAML allows it; we do not), or given twice."""
    import yaml

    stack = [root]
    while stack:
        node = stack.pop()
        if isinstance(node, yaml.MappingNode):
            seen: set[str] = set()
            for key, value in node.value:
                if not isinstance(key, yaml.ScalarNode):
                    raise report.refuse(key.start_mark, "must use plain words as keys.")
                if key.value in seen:  # PyYAML would silently keep the last one
                    raise report.refuse(key.start_mark, f"gives the key {key.value!r} twice.")
                seen.add(key.value)
                stack.append(value)
        elif isinstance(node, yaml.SequenceNode):
            stack.extend(node.value)


def _is_number(v: Any) -> bool:
    return isinstance(v, int | float) and not isinstance(v, bool) and math.isfinite(v)


def _screen(text: str, report: _Report) -> tuple[Any, Any]:
    """Return the file's node tree and its plain data, refusing hostile YAML before building.

    Anchors and aliases (how a YAML bomb expands), explicit tags (object construction) and deep
    nesting are refused from the event stream, before anything is built.
    """
    import yaml

    try:
        depth = 0
        for event in yaml.parse(text, Loader=yaml.SafeLoader):
            if isinstance(event, yaml.AliasEvent) or getattr(event, "anchor", None):
                raise report.refuse(event.start_mark, "must not use YAML anchors or aliases.")
            implicit = getattr(event, "implicit", True)
            explicit = not any(implicit) if isinstance(implicit, tuple) else not implicit
            if getattr(event, "tag", None) is not None and explicit:
                raise report.refuse(event.start_mark, "must not use explicit YAML tags.")
            if isinstance(event, yaml.CollectionStartEvent):
                depth += 1
                if depth > _MAX_DEPTH:
                    rule = f"is nested deeper than {_MAX_DEPTH} levels."
                    raise report.refuse(event.start_mark, rule)
            elif isinstance(event, yaml.CollectionEndEvent):
                depth -= 1
        node = yaml.compose(text, Loader=yaml.SafeLoader)
        if node is not None:
            _refuse_complex_keys(node, report)
        raw = yaml.safe_load(text)
    except yaml.YAMLError as exc:
        mark: Any = getattr(exc, "problem_mark", None)
        line = mark.line + 1 if mark is not None else None
        raise CriteriaError([Problem(report.file, line, "", None, "is not valid YAML.")]) from None
    if node is None or not isinstance(node, yaml.MappingNode) or not isinstance(raw, dict):
        rule = "must be a mapping of criteria fields."
        raise CriteriaError([Problem(report.file, 1, "", None, rule)])
    return node, raw


def _check_top(raw: dict[Any, Any], lines: dict[Any, int], report: _Report) -> str:
    """Check the set's own fields; return its kind."""
    for key in raw:
        if key not in _TOP_KEYS:
            hint = _near(key, _TOP_KEYS)
            report.bad(lines.get(key), str(key), None, "is not a criteria field.", hint)
    if raw.get("format") != 1:
        report.bad(lines.get("format"), "format", raw.get("format"), "must be 1.")
    for key in ("name", "title", "source"):
        if not isinstance(raw.get(key), str) or not raw.get(key):
            report.bad(lines.get(key, 1), key, raw.get(key), "must be a non-empty text.")
    kind = raw.get("kind", "native")
    if kind not in ("native", "stent", "graft"):
        report.bad(lines.get("kind"), "kind", kind, "must be one of native, stent, graft.")
    return str(kind)


class _Bands:
    """The bands read so far, with what a later band is checked against."""

    def __init__(self) -> None:
        self.rules: list[BandRule] = []
        self.seen: set[str] = set()
        self.last_vr = -math.inf


def _check_when(when: Any, where: str, line: int | None, report: _Report) -> dict[str, Any]:
    """Check a band's conditions; return them as a mapping (empty when unusable)."""
    if not isinstance(when, dict):
        report.bad(line, f"{where}.when", when, "must be a mapping of vr_min, psv_min, match.")
        return {}
    for key in when:
        if key not in _WHEN_KEYS:
            hint = _near(key, _WHEN_KEYS)
            report.bad(line, f"{where}.when.{key}", None, "is not a condition.", hint)
    for key, hi in (("vr_min", 50.0), ("psv_min", 800.0)):
        val = when.get(key)
        if val is not None and (not _is_number(val) or not 0 < val <= hi):
            rule = f"must be a number above 0 and at most {hi:g}."
            report.bad(line, f"{where}.when.{key}", val, rule)
    if when.get("match", "all") not in ("all", "any"):
        report.bad(line, f"{where}.when.match", when.get("match"), "must be all or any.")
    return when


def _check_band_fields(rb: dict[Any, Any], where: str, line: int | None, report: _Report) -> None:
    for key in rb:
        if key not in _BAND_KEYS:
            hint = _near(key, _BAND_KEYS)
            report.bad(line, f"{where}.{key}", None, "is not a band field.", hint)


def _read_band(
    i: int, rb: Any, line: int | None, bands: _Bands, report: _Report
) -> BandRule | None:
    """Check one band and return it (None when it cannot be used at all)."""
    where = f"bands[{i}]"
    if not isinstance(rb, dict):
        report.bad(line, where, None, "must be a mapping with id, label and when.")
        return None
    _check_band_fields(rb, where, line, report)
    bid, label = rb.get("id"), rb.get("label")
    if not isinstance(bid, str) or not bid or bid == NOT_ASSESSED:
        report.bad(line, f"{where}.id", bid, f"must be a text other than {NOT_ASSESSED}.")
        return None
    if bid in bands.seen:
        report.bad(line, f"{where}.id", bid, "is used by an earlier band.")
    bands.seen.add(bid)
    if not isinstance(label, str) or not label:
        report.bad(line, f"{where}.label", label, "must be a non-empty text.")
    when = rb.get("when", {})
    occlusion = rb.get("occlusion", False)
    if not isinstance(occlusion, bool):
        report.bad(line, f"{where}.occlusion", occlusion, "must be true or false.")
        occlusion = False
    when = _check_when(when, where, line, report)
    look = rb.get("look")
    if look is not None and look not in LOOKS:
        rule = f"must be one of {', '.join(LOOKS)}."
        report.bad(line, f"{where}.look", look, rule, _near(look, LOOKS))
        look = None
    vr_min: Any = when.get("vr_min")
    psv_min: Any = when.get("psv_min")
    match = when.get("match", "all")
    if not occlusion and _is_number(vr_min):
        if vr_min <= bands.last_vr:
            rule = "must be higher than the vr_min of the milder bands before it."
            report.bad(line, f"{where}.when.vr_min", vr_min, rule)
        bands.last_vr = vr_min
    return BandRule(
        id=bid,
        label=str(label),
        rank=len(bands.rules),
        vr_min=float(vr_min) if _is_number(vr_min) else None,
        psv_min=float(psv_min) if _is_number(psv_min) else None,
        match=match if match in ("all", "any") else "all",
        occlusion=occlusion,
        source=str(rb.get("source", "")),
        look=look or "",
    )


def _read_bands(node: Any, raw: dict[Any, Any], lines: dict[Any, int], report: _Report) -> _Bands:
    """Check the list of bands and each band in it."""
    import yaml

    band_nodes = next((v for k, v in node.value if k.value == "bands"), None)
    raw_bands = raw.get("bands")
    bands = _Bands()
    if (
        not isinstance(raw_bands, list)
        or not raw_bands
        or not isinstance(band_nodes, yaml.SequenceNode)
    ):
        report.bad(lines.get("bands", 1), "bands", None, "must be a non-empty list of bands.")
        return bands
    for i, rb in enumerate(raw_bands):
        line = band_nodes.value[i].start_mark.line + 1
        band = _read_band(i, rb, line, bands, report)
        if band is not None:
            bands.rules.append(band)
    rules = bands.rules
    if sum(b.occlusion for b in rules) != 1:
        rule = "must hold exactly one band with occlusion: true."
        report.bad(lines.get("bands"), "bands", None, rule)
    if rules and not rules[-1].occlusion and any(b.occlusion for b in rules):
        rule = "must list the occlusion band last (the worst)."
        report.bad(lines.get("bands"), "bands", None, rule)
    return bands


def parse_criteria(text: str, file: str, origin: str) -> Criteria:
    """Validate a criteria file's text and return the set; every problem is reported at once."""
    report = _Report(file)
    node, raw = _screen(text, report)
    lines = {k.value: k.start_mark.line + 1 for k, _ in node.value}
    kind = _check_top(raw, lines, report)
    bands = _read_bands(node, raw, lines, report)
    floor = raw.get("lesion_floor")
    if floor is not None and (not isinstance(floor, str) or floor not in bands.seen):
        hint = _near(floor, sorted(bands.seen))
        rule = "must be one of the set's band ids."
        report.bad(lines.get("lesion_floor"), "lesion_floor", floor, rule, hint)
    if report.problems:
        raise CriteriaError(sorted(report.problems, key=lambda p: (p.line or 0, p.field)))
    return Criteria(
        name=raw["name"],
        title=raw["title"],
        kind=kind,
        source=" ".join(str(raw["source"]).split()),
        lesion_floor=floor,
        bands=tuple(_default_looks(bands.rules)),
        origin=origin,
    )
