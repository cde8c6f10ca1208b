"""Validate a criteria file's text into a :class:`Criteria`, every problem reported at once.

The YAML is screened before anything is built: anchors and aliases (how a YAML bomb expands),
explicit tags, nesting deeper than 20 levels, keys that are not plain words or given twice.
"""

from __future__ import annotations

import difflib
import math
from typing import Any

from diagram.criteria.model import LOOKS, NOT_ASSESSED, BandRule, Criteria, PsvOnlyRule
from diagram.errors import CriteriaError, Problem

_MAX_DEPTH = 20
_BAND_KEYS = ("id", "label", "look", "when", "occlusion", "source")
_WHEN_KEYS = ("vr_min", "vr_over", "psv_min", "psv_over", "flow_below", "match")
_PSV_ONLY_KEYS = ("band", "psv_min", "psv_over", "flow_below")
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


def _default_looks(bands: list[BandRule]) -> list[BandRule]:
    """Give each band without a look the house look of its place in the severity order."""
    from dataclasses import replace

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


def _refuse_complex_keys(root: Any, refuse: Any) -> None:
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


def parse_criteria(text: str, file: str, origin: str) -> Criteria:
    """Validate a criteria file's text and return the set; every problem is reported at once."""
    import yaml

    problems: list[Problem] = []

    def bad(line: int | None, field: str, value: Any, rule: str, hint: str | None = None) -> None:
        shown = None if value is None else repr(value)
        problems.append(Problem(file, line, field, shown, rule, hint))

    def refuse(at: Any, rule: str) -> CriteriaError:
        return CriteriaError([Problem(file, at.line + 1 if at else None, "", None, rule)])

    loader = getattr(yaml, "CSafeLoader", yaml.SafeLoader)  # libyaml when present, as for studies
    try:
        # Screen the event stream before anything is built: anchors and aliases (how a YAML
        # bomb expands), explicit tags (object construction) and deep nesting are refused.
        depth = 0
        for event in yaml.parse(text, Loader=loader):
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
    lines = {k.value: k.start_mark.line + 1 for k, _ in node.value}

    for key in raw:
        if key not in _TOP_KEYS:
            near = difflib.get_close_matches(str(key), _TOP_KEYS, n=1)
            bad(
                lines.get(key),
                str(key),
                None,
                "is not a criteria field.",
                f"did you mean {near[0]}?" if near else None,
            )
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
    band_nodes = next((v for k, v in node.value if k.value == "bands"), None)
    bands: list[BandRule] = []
    raw_bands = raw.get("bands")
    if (
        not isinstance(raw_bands, list)
        or not raw_bands
        or not isinstance(band_nodes, yaml.SequenceNode)
    ):
        bad(lines.get("bands", 1), "bands", None, "must be a non-empty list of bands.")
        raw_bands = []
    seen: set[str] = set()
    last_vr = -math.inf
    for i, rb in enumerate(raw_bands):
        bline = band_nodes.value[i].start_mark.line + 1 if band_nodes is not None else None
        where = f"bands[{i}]"
        if not isinstance(rb, dict):
            bad(bline, where, None, "must be a mapping with id, label and when.")
            continue
        for key in rb:
            if key not in _BAND_KEYS:
                near = difflib.get_close_matches(str(key), _BAND_KEYS, n=1)
                bad(
                    bline,
                    f"{where}.{key}",
                    None,
                    "is not a band field.",
                    f"did you mean {near[0]}?" if near else None,
                )
        bid, label = rb.get("id"), rb.get("label")
        if not isinstance(bid, str) or not bid or bid == NOT_ASSESSED:
            bad(bline, f"{where}.id", bid, f"must be a text other than {NOT_ASSESSED}.")
            continue
        if bid in seen:
            bad(bline, f"{where}.id", bid, "is used by an earlier band.")
        seen.add(bid)
        if not isinstance(label, str) or not label:
            bad(bline, f"{where}.label", label, "must be a non-empty text.")
        when = rb.get("when", {})
        occlusion = rb.get("occlusion", False)
        if not isinstance(occlusion, bool):
            bad(bline, f"{where}.occlusion", occlusion, "must be true or false.")
            occlusion = False
        if not isinstance(when, dict):
            bad(bline, f"{where}.when", when, "must be a mapping of vr_min, psv_min, match.")
            when = {}
        for key in when:
            if key not in _WHEN_KEYS:
                near = difflib.get_close_matches(str(key), _WHEN_KEYS, n=1)
                bad(
                    bline,
                    f"{where}.when.{key}",
                    None,
                    "is not a condition.",
                    f"did you mean {near[0]}?" if near else None,
                )
        look = rb.get("look")
        if look is not None and look not in LOOKS:
            near = difflib.get_close_matches(str(look), LOOKS, n=1)
            bad(
                bline,
                f"{where}.look",
                look,
                f"must be one of {', '.join(LOOKS)}.",
                f"did you mean {near[0]}?" if near else None,
            )
            look = None
        vr = _threshold(when, "vr", 50.0, f"{where}.when", bline, bad)
        psv = _threshold(when, "psv", 800.0, f"{where}.when", bline, bad)
        flow = _flow_below(when, f"{where}.when", bline, bad)
        match = when.get("match", set_match)
        if match not in ("all", "any"):
            bad(bline, f"{where}.when.match", match, "must be all or any.")
        vr_min = vr[0] if vr else None
        if not occlusion and vr_min is not None:
            if vr_min < last_vr or (vr_min == last_vr and flow is None):
                bad(
                    bline,
                    f"{where}.when.{'vr_over' if vr and vr[1] else 'vr_min'}",
                    vr_min,
                    "must be higher than the Vr threshold of the milder bands before it.",
                )
            last_vr = vr_min
        bands.append(
            BandRule(
                id=bid,
                label=str(label),
                rank=len(bands),
                vr_min=vr_min,
                psv_min=psv[0] if psv else None,
                match=match if match in ("all", "any") else "all",
                occlusion=occlusion,
                source=str(rb.get("source", "")),
                look=look or "",
                vr_strict=bool(vr and vr[1]),
                psv_strict=bool(psv and psv[1]),
                flow_below=flow,
            )
        )
    if raw_bands and sum(b.occlusion for b in bands) != 1:
        bad(lines.get("bands"), "bands", None, "must hold exactly one band with occlusion: true.")
    if bands and bands[-1:] and not bands[-1].occlusion and any(b.occlusion for b in bands):
        bad(lines.get("bands"), "bands", None, "must list the occlusion band last (the worst).")
    floor = raw.get("lesion_floor")
    if floor is not None and (not isinstance(floor, str) or floor not in seen):
        near = difflib.get_close_matches(str(floor), sorted(seen), n=1)
        bad(
            lines.get("lesion_floor"),
            "lesion_floor",
            floor,
            "must be one of the set's band ids.",
            f"did you mean {near[0]}?" if near else None,
        )
    psv_only = _psv_only(raw.get("psv_only"), lines.get("psv_only"), seen, bad)
    psv_only_source = raw.get("psv_only_source", "")
    if not isinstance(psv_only_source, str):
        bad(lines.get("psv_only_source"), "psv_only_source", None, "must be a text.")
        psv_only_source = ""
    if problems:
        raise CriteriaError(sorted(problems, key=lambda p: (p.line or 0, p.field)))
    bands = _default_looks(bands)
    return Criteria(
        name=raw["name"],
        title=raw["title"],
        kind=kind,
        source=" ".join(str(raw["source"]).split()),
        lesion_floor=floor,
        bands=tuple(bands),
        origin=origin,
        match=set_match,
        psv_only=psv_only,
        psv_only_source=" ".join(psv_only_source.split()),
    )


def _threshold(
    when: dict[str, Any], name: str, high: float, where: str, line: int | None, bad: Any
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


def _flow_below(when: dict[str, Any], where: str, line: int | None, bad: Any) -> float | None:
    val = when.get("flow_below")
    if val is None:
        return None
    if not _is_number(val) or not 0 < val <= 800:
        bad(line, f"{where}.flow_below", val, "must be a number above 0 and at most 800.")
        return None
    return float(val)


def _psv_only(raw: Any, line: int | None, band_ids: set[str], bad: Any) -> tuple[PsvOnlyRule, ...]:
    """Return the set's PSV-only rule, mildest row first, reporting every problem."""
    if raw is None:
        return ()
    if not isinstance(raw, list):
        bad(line, "psv_only", None, "must be a list of rows with band and psv_min or psv_over.")
        return ()
    rows: list[PsvOnlyRule] = []
    for i, row in enumerate(raw):
        where = f"psv_only[{i}]"
        if not isinstance(row, dict):
            bad(line, where, None, "must be a mapping with band and psv_min or psv_over.")
            continue
        for key in row:
            if key not in _PSV_ONLY_KEYS:
                near = difflib.get_close_matches(str(key), _PSV_ONLY_KEYS, n=1)
                hint = f"did you mean {near[0]}?" if near else None
                bad(line, f"{where}.{key}", None, "is not a PSV-only field.", hint)
        band = row.get("band")
        if not isinstance(band, str) or band not in band_ids:
            near = difflib.get_close_matches(str(band), sorted(band_ids), n=1)
            hint = f"did you mean {near[0]}?" if near else None
            bad(line, f"{where}.band", band, "must be one of the set's band ids.", hint)
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
