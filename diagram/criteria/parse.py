"""Validate a criteria file's text into a :class:`Criteria`, every problem reported at once.

The YAML is screened before anything is built: anchors and aliases (how a YAML bomb expands),
explicit tags, nesting deeper than 20 levels, keys that are not plain words or given twice.
The file is then read part by part, in its order: the header fields, the bands (each band's
``when`` conditions), ``lesion_floor``, the PSV-only rule. The bands and the PSV-only rule are
both lists of rows read by one row reader, so a row is judged the same way in either.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field, replace
from typing import Any, TypeGuard

from diagram.criteria.model import LOOKS, NOT_ASSESSED, BandRule, Criteria, PsvOnlyRule
from diagram.errors import CriteriaError, Problem

_MAX_DEPTH = 20
_WHEN_KEYS = ("vr_min", "vr_over", "psv_min", "psv_over", "flow_below", "match")
_TOP_KEYS = (
    "format",
    "name",
    "title",
    "kind",
    "source",
    "match",
    "lesion_floor",
    "psv_only",
    "psv_only_source",
    "bands",
)


@dataclass(frozen=True)
class _RowKind:
    """One list of rows in a criteria file: its key, what a row holds and the keys it may use."""

    name: str  # the list's key, and the row's name in a message: bands[2]
    shape: str  # what a row must hold, in words
    keys: tuple[str, ...]  # the keys a row may use
    kind: str  # the kind of field in "is not a ... field."


_BAND_ROWS = _RowKind(
    "bands", "id, label and when", ("id", "label", "look", "when", "occlusion", "source"), "band"
)
_PSV_ONLY_ROWS = _RowKind(
    "psv_only",
    "band and psv_min or psv_over",
    ("band", "psv_min", "psv_over", "flow_below"),
    "PSV-only",
)


@dataclass
class _Problems:
    """The problems found in one criteria file, gathered so that all are reported at once."""

    file: str
    found: list[Problem] = field(default_factory=list)

    def __call__(
        self, line: int | None, field: str, value: Any, rule: str, hint: str | None = None
    ) -> None:
        shown = None if value is None else repr(value)
        self.found.append(Problem(self.file, line, field, shown, rule, hint))


def parse_criteria(text: str, file: str, origin: str) -> Criteria:
    """Validate a criteria file's text and return the set; every problem is reported at once."""
    bad = _Problems(file)
    node, raw = _read_yaml(text, file)
    lines: dict[str, int] = {k.value: k.start_mark.line + 1 for k, _ in node.value}
    _unknown_keys(raw, _TOP_KEYS, "", "is not a criteria field.", bad, line_of=lines.get)
    kind, set_match = _header(raw, lines, bad)
    band_nodes = next((v for k, v in node.value if k.value == "bands"), None)
    bands = _bands(raw.get("bands"), band_nodes, lines, set_match, bad)
    band_ids = {b.id for b in bands}  # every band with a usable id, problems or not
    floor = raw.get("lesion_floor")
    if floor is not None:
        _known_band(floor, band_ids, lines.get("lesion_floor"), "lesion_floor", bad)
    psv_only = _psv_only(raw.get("psv_only"), lines.get("psv_only"), band_ids, bad)
    psv_only_source = raw.get("psv_only_source", "")
    if not isinstance(psv_only_source, str):
        bad(lines.get("psv_only_source"), "psv_only_source", None, "must be a text.")
        psv_only_source = ""
    if bad.found:
        raise CriteriaError(sorted(bad.found, key=lambda p: (p.line or 0, p.field)))
    return Criteria(
        name=raw["name"],
        title=raw["title"],
        kind=kind,
        source=" ".join(str(raw["source"]).split()),
        lesion_floor=floor,
        bands=tuple(_default_looks(bands)),
        origin=origin,
        match=set_match,
        psv_only=psv_only,
        psv_only_source=" ".join(psv_only_source.split()),
    )


def _read_yaml(text: str, file: str) -> tuple[Any, dict[Any, Any]]:
    """Return the file's top mapping node and its data, refusing hostile or non-mapping YAML."""
    import yaml

    def refuse(at: Any, rule: str) -> CriteriaError:
        return CriteriaError([Problem(file, at.line + 1 if at else None, "", None, rule)])

    loader = getattr(yaml, "CSafeLoader", yaml.SafeLoader)  # libyaml when present, as for studies
    try:
        _screen_events(yaml.parse(text, Loader=loader), refuse)
        node = yaml.compose(text, Loader=loader)
        if node is not None:
            _refuse_complex_keys(node, refuse)
        raw = yaml.load(text, Loader=loader)  # a safe loader
    except yaml.YAMLError as exc:
        mark: Any = getattr(exc, "problem_mark", None)
        line = mark.line + 1 if mark is not None else None
        raise CriteriaError([Problem(file, line, "", None, "is not valid YAML.")]) from None
    if node is None or not isinstance(node, yaml.MappingNode) or not isinstance(raw, dict):
        raise CriteriaError([Problem(file, 1, "", None, "must be a mapping of criteria fields.")])
    return node, raw


def _screen_events(events: Iterator[Any], refuse: Callable[[Any, str], CriteriaError]) -> None:
    """Refuse anchors and aliases (how a YAML bomb expands), explicit tags and deep nesting.

    Runs over the event stream, before any node or object is built.
    """
    import yaml

    depth = 0
    for event in events:
        if isinstance(event, yaml.AliasEvent) or getattr(event, "anchor", None):
            raise refuse(event.start_mark, "must not use YAML anchors or aliases.")
        implicit = getattr(event, "implicit", True)
        explicit = not any(implicit) if isinstance(implicit, tuple) else not implicit
        if getattr(event, "tag", None) is not None and explicit:
            raise refuse(event.start_mark, "must not use explicit YAML tags.")
        if isinstance(event, yaml.CollectionStartEvent):
            depth += 1
            if depth > _MAX_DEPTH:
                raise refuse(event.start_mark, f"is nested deeper than {_MAX_DEPTH} levels.")
        elif isinstance(event, yaml.CollectionEndEvent):
            depth -= 1


def _refuse_complex_keys(root: Any, refuse: Callable[[Any, str], CriteriaError]) -> None:
    """Refuse a key that is a list or a mapping (YAML allows it; we do not), or given twice."""
    import yaml

    stack = [root]
    while stack:
        node = stack.pop()
        if isinstance(node, yaml.MappingNode):
            seen: set[str] = set()
            for key, value in node.value:
                if not isinstance(key, yaml.ScalarNode):
                    raise refuse(key.start_mark, "must use plain words as keys.")
                if key.value in seen:  # PyYAML would silently keep the last one
                    raise refuse(key.start_mark, f"gives the key {key.value!r} twice.")
                seen.add(key.value)
                stack.append(value)
        elif isinstance(node, yaml.SequenceNode):
            stack.extend(node.value)


def _is_number(v: Any) -> bool:
    return isinstance(v, int | float) and not isinstance(v, bool) and math.isfinite(v)


def _hint(value: Any, choices: Any) -> str | None:
    """Return "did you mean ...?" for the choice nearest a wrong value, when one is near."""
    near = difflib.get_close_matches(str(value), choices, n=1)
    return f"did you mean {near[0]}?" if near else None


def _unknown_keys(
    mapping: dict[Any, Any],
    allowed: tuple[str, ...],
    where: str,
    rule: str,
    bad: _Problems,
    *,
    line: int | None = None,
    line_of: Callable[[Any], int | None] | None = None,
) -> None:
    """Report every key of ``mapping`` not in ``allowed``, with the nearest allowed one.

    Each is placed on ``line``, or on ``line_of(key)`` where the keys have lines of their own.
    """
    for key in mapping:
        if key not in allowed:
            field_path = f"{where}.{key}" if where else str(key)
            at = line_of(key) if line_of is not None else line
            bad(at, field_path, None, rule, _hint(key, allowed))


def _header(raw: dict[Any, Any], lines: dict[str, int], bad: _Problems) -> tuple[str, str]:
    """Check the set's own fields; return its kind and its match (``all`` when it is wrong)."""
    if raw.get("format") != 1:
        bad(lines.get("format"), "format", raw.get("format"), "must be 1.")
    for key in ("name", "title", "source"):
        if not isinstance(raw.get(key), str) or not raw.get(key):
            bad(lines.get(key, 1), key, raw.get(key), "must be a non-empty text.")
    kind = raw.get("kind", "native")
    if kind not in ("native", "stent", "graft"):
        bad(lines.get("kind"), "kind", kind, "must be one of native, stent, graft.")
    set_match = raw.get("match", "all")
    if set_match not in ("all", "any"):
        bad(lines.get("match"), "match", set_match, "must be all or any.")
        set_match = "all"
    return kind, set_match


def _rows(
    raw: list[Any], rows: _RowKind, line_of: Callable[[int], int | None], bad: _Problems
) -> Iterator[tuple[str, int | None, dict[Any, Any]]]:
    """Yield ``(where, line, row)`` for each row of a list that is a mapping.

    A row that is not a mapping is reported, and so is each key of a row that is not one of the
    row kind's keys.
    """
    for i, row in enumerate(raw):
        where, line = f"{rows.name}[{i}]", line_of(i)
        if not isinstance(row, dict):
            bad(line, where, None, f"must be a mapping with {rows.shape}.")
            continue
        _unknown_keys(row, rows.keys, where, f"is not a {rows.kind} field.", bad, line=line)
        yield where, line, row


def _bands(
    raw: Any, nodes: Any, lines: dict[str, int], set_match: str, bad: _Problems
) -> list[BandRule]:
    """Read the list of bands, mildest first; check their order and the occlusion band."""
    import yaml

    if not isinstance(raw, list) or not raw or not isinstance(nodes, yaml.SequenceNode):
        bad(lines.get("bands", 1), "bands", None, "must be a non-empty list of bands.")
        return []
    bands: list[BandRule] = []
    seen: set[str] = set()
    last_vr = -math.inf
    starts = [item.start_mark.line + 1 for item in nodes.value]
    for where, line, row in _rows(raw, _BAND_ROWS, starts.__getitem__, bad):
        band = _band(row, where, line, seen, set_match, bad)
        if band is None:
            continue
        band = replace(band, rank=len(bands))
        if not band.occlusion and band.vr_min is not None:
            if band.vr_min < last_vr or (band.vr_min == last_vr and band.flow_below is None):
                bad(
                    line,
                    f"{where}.when.{'vr_over' if band.vr_strict else 'vr_min'}",
                    band.vr_min,
                    "must be higher than the Vr threshold of the milder bands before it.",
                )
            last_vr = band.vr_min
        bands.append(band)
    if sum(b.occlusion for b in bands) != 1:
        bad(lines.get("bands"), "bands", None, "must hold exactly one band with occlusion: true.")
    if bands and not bands[-1].occlusion and any(b.occlusion for b in bands):
        bad(lines.get("bands"), "bands", None, "must list the occlusion band last (the worst).")
    return bands


def _band(
    row: dict[Any, Any],
    where: str,
    line: int | None,
    seen: set[str],
    set_match: str,
    bad: _Problems,
) -> BandRule | None:
    """Read one band (its rank still to be set); None when it has no usable id."""
    bid, label = row.get("id"), row.get("label")
    if not isinstance(bid, str) or not bid or bid == NOT_ASSESSED:
        bad(line, f"{where}.id", bid, f"must be a text other than {NOT_ASSESSED}.")
        return None
    if bid in seen:
        bad(line, f"{where}.id", bid, "is used by an earlier band.")
    seen.add(bid)
    if not isinstance(label, str) or not label:
        bad(line, f"{where}.label", label, "must be a non-empty text.")
    when = row.get("when", {})
    occlusion = row.get("occlusion", False)
    if not isinstance(occlusion, bool):
        bad(line, f"{where}.occlusion", occlusion, "must be true or false.")
        occlusion = False
    if not isinstance(when, dict):
        bad(line, f"{where}.when", when, "must be a mapping of vr_min, psv_min, match.")
        when = {}
    rule = "is not a condition."
    _unknown_keys(when, _WHEN_KEYS, f"{where}.when", rule, bad, line=line)
    look = row.get("look")
    if look is not None and look not in LOOKS:
        bad(line, f"{where}.look", look, f"must be one of {', '.join(LOOKS)}.", _hint(look, LOOKS))
        look = None
    vr = _threshold(when, "vr", 50.0, f"{where}.when", line, bad)
    psv = _threshold(when, "psv", 800.0, f"{where}.when", line, bad)
    flow = _flow_below(when, f"{where}.when", line, bad)
    match = when.get("match", set_match)
    if match not in ("all", "any"):
        bad(line, f"{where}.when.match", match, "must be all or any.")
    return BandRule(
        id=bid,
        label=str(label),
        rank=0,
        vr_min=vr[0] if vr else None,
        psv_min=psv[0] if psv else None,
        match=match if match in ("all", "any") else "all",
        occlusion=occlusion,
        source=str(row.get("source", "")),
        look=look or "",
        vr_strict=bool(vr and vr[1]),
        psv_strict=bool(psv and psv[1]),
        flow_below=flow,
    )


def _known_band(
    value: Any, band_ids: set[str], line: int | None, where: str, bad: _Problems
) -> TypeGuard[str]:
    """Report a reference to a band the set does not have; return whether it names one."""
    if isinstance(value, str) and value in band_ids:
        return True
    hint = _hint(value, sorted(band_ids))
    bad(line, where, value, "must be one of the set's band ids.", hint)
    return False


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


def _threshold(
    when: dict[str, Any], name: str, high: float, where: str, line: int | None, bad: _Problems
) -> tuple[float, bool] | None:
    """Return (limit, strict) from ``NAME_min`` (>=) or ``NAME_over`` (>), reporting problems."""
    given = [(k, when[k]) for k in (f"{name}_min", f"{name}_over") if k in when]
    if len(given) > 1:
        bad(line, f"{where}.{name}_over", None, f"must not be given with {name}_min.")
        return None
    if not given:
        return None
    key, val = given[0]
    if not _is_number(val) or not 0 < val <= high:
        bad(line, f"{where}.{key}", val, f"must be a number above 0 and at most {high:g}.")
        return None
    return float(val), key.endswith("_over")


def _flow_below(when: dict[str, Any], where: str, line: int | None, bad: _Problems) -> float | None:
    val = when.get("flow_below")
    if val is None:
        return None
    if not _is_number(val) or not 0 < val <= 800:
        bad(line, f"{where}.flow_below", val, "must be a number above 0 and at most 800.")
        return None
    return float(val)


def _psv_only(
    raw: Any, line: int | None, band_ids: set[str], bad: _Problems
) -> tuple[PsvOnlyRule, ...]:
    """Return the set's PSV-only rule, mildest row first, reporting every problem."""
    if raw is None:
        return ()
    if not isinstance(raw, list):
        bad(line, "psv_only", None, "must be a list of rows with band and psv_min or psv_over.")
        return ()
    rows: list[PsvOnlyRule] = []
    for where, _, row in _rows(raw, _PSV_ONLY_ROWS, lambda _: line, bad):
        band = row.get("band")
        if not _known_band(band, band_ids, line, f"{where}.band", bad):
            continue
        psv = _threshold(row, "psv", 800.0, where, line, bad)
        if psv is None:
            if "psv_min" not in row and "psv_over" not in row:
                bad(line, where, None, "must give psv_min or psv_over.")
            continue
        if rows and psv[0] < rows[-1].psv_min:
            bad(line, f"{where}.psv_min", psv[0], "must not be below the rows before it.")
        rows.append(PsvOnlyRule(band, psv[0], psv[1], _flow_below(row, where, line, bad)))
    return tuple(rows)
