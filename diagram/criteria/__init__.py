"""Criteria sets: band thresholds as data files, each number with its published source.

A criteria file lists bands mildest first. A band applies when its ``when`` conditions hold:
``vr_min`` / ``psv_min`` (the value on the boundary belongs to this, the higher band: ">=") or
``vr_over`` / ``psv_over`` (the boundary value stays in the milder band: ">"), joined by the set's
one ``match`` rule: ``all`` (both PSV and Vr must reach the band) or ``any`` (either does). A
graft set may add ``flow_below`` (graft flow velocity below it, cm/s), which must hold as well.
The worst band that applies wins. A band with ``occlusion: true`` is the band for an occluded
vessel; ``not-assessed`` is built in.

``psv_only`` lists the set's rule for a sample with a PSV but no valid velocity ratio (no
reference upstream, or one across an occlusion or a stenosis >= 50%): each entry names a band and
its PSV threshold; the result is never below ``lesion_floor`` for a documented lesion.
"""

from __future__ import annotations

import difflib
import math
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources
from pathlib import Path
from typing import Any

from diagram.errors import CriteriaError, Problem

NOT_ASSESSED = "not-assessed"
_MAX_BYTES = 256 * 1024
_MAX_DEPTH = 20
_BAND_KEYS = ("id", "label", "look", "when", "occlusion", "source")
LOOKS = ("normal", "lt50", "50-74", "75-99", "occluded")
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


def _meets(value: float, limit: float, strict: bool) -> bool:
    return value > limit if strict else value >= limit


def _condition(name: str, limit: float, strict: bool) -> str:
    unit = " cm/s" if name == "PSV" else ""
    return f"{name} {'>' if strict else '>='} {limit:g}{unit}"


@dataclass(frozen=True)
class BandRule:
    """One band of a criteria set."""

    id: str
    label: str
    rank: int  # 0 for the mildest; higher is worse
    vr_min: float | None = None
    psv_min: float | None = None  # cm/s
    match: str = "all"
    occlusion: bool = False
    source: str = ""
    look: str = ""  # the house look (hatch and tint) it is drawn with: one of LOOKS
    vr_strict: bool = False  # True: Vr must be above vr_min (vr_over); False: at least
    psv_strict: bool = False  # True: PSV must be above psv_min (psv_over)
    flow_below: float | None = None  # graft flow velocity must be below this, cm/s

    def holds_vr(self, vr: float | None) -> bool | None:
        """Return whether the Vr condition holds (None: no Vr, or the band has none)."""
        if self.vr_min is None or vr is None:
            return None
        return _meets(vr, self.vr_min, self.vr_strict)

    def holds_psv(self, psv: float | None) -> bool | None:
        """Return whether the PSV condition holds (None: no PSV, or the band has none)."""
        if self.psv_min is None or psv is None:
            return None
        return _meets(psv, self.psv_min, self.psv_strict)

    def applies(
        self, vr: float | None, psv: float | None, flow: float | None = None
    ) -> bool | None:
        """Return whether this band's conditions hold; None when a missing value decides it."""
        tests: list[bool | None] = []
        if self.vr_min is not None:
            tests.append(self.holds_vr(vr))
        if self.psv_min is not None:
            tests.append(self.holds_psv(psv))
        if self.flow_below is not None and (flow is None or flow >= self.flow_below):
            return False  # a further condition: no graft flow velocity, no flow band
        if not tests:
            return True
        if self.match == "all":
            return False if False in tests else (None if None in tests else True)
        return True if True in tests else (None if None in tests else False)

    def conditions(self) -> list[str]:
        """Return the band's velocity conditions in words (``Vr >= 2``, ``PSV > 300 cm/s``)."""
        parts = []
        if self.psv_min is not None:
            parts.append(_condition("PSV", self.psv_min, self.psv_strict))
        if self.vr_min is not None:
            parts.append(_condition("Vr", self.vr_min, self.vr_strict))
        return parts

    def describe(self) -> str:
        """Return the band's rule in words, e.g. ``Vr >= 2.0``."""
        if self.occlusion:
            return "occlusion recorded"
        parts = self.conditions()
        if not parts:
            return "below the next band's threshold"
        text = (" and " if self.match == "all" else " or ").join(parts)
        if self.flow_below is not None:
            text = f"({text}) with graft flow velocity < {self.flow_below:g} cm/s"
        return text


@dataclass(frozen=True)
class PsvOnlyRule:
    """One row of a set's PSV-only rule: the band a PSV reaches when there is no valid Vr."""

    band: str
    psv_min: float
    psv_strict: bool = False
    flow_below: float | None = None

    def holds(self, psv: float, flow: float | None) -> bool:
        """Return whether the PSV (and graft flow velocity, where named) reach the band."""
        if self.flow_below is not None and (flow is None or flow >= self.flow_below):
            return False
        return _meets(psv, self.psv_min, self.psv_strict)

    def describe(self) -> str:
        """Return the row in words: ``PSV >= 200 cm/s``."""
        text = _condition("PSV", self.psv_min, self.psv_strict)
        if self.flow_below is not None:
            text += f" with graft flow velocity < {self.flow_below:g} cm/s"
        return text


@dataclass(frozen=True)
class Criteria:
    """A validated criteria set."""

    name: str
    title: str
    kind: str
    source: str
    lesion_floor: str | None
    bands: tuple[BandRule, ...]  # mildest first; occlusion band included
    origin: str  # "shipped" or the path of a lab's file
    match: str = "all"  # the set's one rule for PSV and Vr: "all" (both) or "any" (either)
    psv_only: tuple[PsvOnlyRule, ...] = ()  # mildest first
    psv_only_source: str = ""

    @property
    def band_ids(self) -> tuple[str, ...]:
        """Return every band id of the set, with not-assessed last."""
        return (*(b.id for b in self.bands), NOT_ASSESSED)

    def band(self, band_id: str) -> BandRule:
        """Return the band with this id."""
        for b in self.bands:
            if b.id == band_id:
                return b
        raise KeyError(band_id)

    def rank(self, band_id: str) -> int:
        """Return a band's severity rank; not-assessed ranks below every band."""
        return -1 if band_id == NOT_ASSESSED else self.band(band_id).rank

    def describe(self, band: BandRule) -> str:
        """Return a band's rule in words; the mildest band reads as "below" the next one."""
        graded = [b for b in self.bands if not b.occlusion]
        if band.occlusion or band.vr_min is not None or band.psv_min is not None:
            return band.describe()
        nxt = graded[graded.index(band) + 1] if band in graded[:-1] else None
        if nxt is None:
            return band.describe()
        limits = []
        if nxt.psv_min is not None:
            limits.append(f"PSV {'<=' if nxt.psv_strict else '<'} {nxt.psv_min:g} cm/s")
        if nxt.vr_min is not None:
            limits.append(f"Vr {'<=' if nxt.vr_strict else '<'} {nxt.vr_min:g}")
        joiner = " or " if nxt.match == "all" else " and "
        return joiner.join(limits)

    def boundary_note(self) -> str:
        """Return, for the legend, which band a value exactly on each boundary goes to."""
        parts = []
        for b in self.bands:
            if b.occlusion or not b.conditions():
                continue
            parts.append(f"{b.label} {b.describe()}")
        if not parts:
            return ""
        return f"{self.name}: " + "; ".join(parts)

    def grade_psv_only(
        self, psv: float, *, lesion: bool, flow: float | None = None
    ) -> BandRule | None:
        """Return the band of the set's PSV-only rule, never below the lesion floor."""
        found: BandRule | None = None
        for row in reversed(self.psv_only):
            if row.holds(psv, flow):
                found = self.band(row.band)
                break
        if not self.psv_only:
            return None
        if found is None:
            found = self.bands[0]
        if lesion and self.lesion_floor is not None:
            floor = self.band(self.lesion_floor)
            if found.rank < floor.rank:
                return floor
        return found

    def psv_only_row(self, band_id: str) -> PsvOnlyRule | None:
        """Return the PSV-only row that gives this band, if any."""
        return next((r for r in self.psv_only if r.band == band_id), None)

    def discordant(
        self, vr: float | None, psv: float | None, flow: float | None = None
    ) -> tuple[BandRule, BandRule] | None:
        """Return (band by PSV alone, band by Vr alone) when the two disagree, else None.

        Only sets whose bands state both a PSV and a Vr condition can disagree; the set's
        ``match`` rule decides the grade, this only says that the pair was discordant.
        """
        if vr is None or psv is None:
            return None
        graded = [b for b in self.bands if not b.occlusion]
        if not any(b.psv_min is not None for b in graded) or not any(
            b.vr_min is not None for b in graded
        ):
            return None

        def worst(test: str) -> BandRule:
            for b in reversed(graded):
                held = b.holds_psv(psv) if test == "psv" else b.holds_vr(vr)
                if held and (b.flow_below is None or (flow is not None and flow < b.flow_below)):
                    return b
                if held is None and b.conditions() == []:
                    return b
            return graded[0]

        by_psv, by_vr = worst("psv"), worst("vr")
        return None if by_psv.id == by_vr.id else (by_psv, by_vr)

    @property
    def occlusion_band(self) -> BandRule:
        """Return the band for an occluded vessel."""
        return next(b for b in self.bands if b.occlusion)

    def grade(
        self, vr: float | None, psv: float | None, *, lesion: bool, flow: float | None = None
    ) -> BandRule | None:
        """Return the worst band that applies, or None when a missing measurement could change it.

        Bands are tried worst first: the first that holds wins; one that cannot be decided
        because its measurement is missing (say Vr with no upstream sample) leaves the sample
        ungraded rather than graded too mildly.
        """
        found = None
        for b in reversed(self.bands):
            if b.occlusion:
                continue
            holds = b.applies(vr, psv, flow)
            if holds is None:
                return None
            if holds:
                found = b
                break
        if found is None:
            return None
        if lesion and self.lesion_floor is not None:
            floor = self.band(self.lesion_floor)
            if found.rank < floor.rank:
                return floor
        return found


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


# Severity of each house look; a band is haemodynamically significant from the 50-74 look on.
LOOK_SEVERITY: dict[str, int] = {look: i for i, look in enumerate(LOOKS)}
SIGNIFICANT_SEVERITY = LOOK_SEVERITY["50-74"]


@dataclass(frozen=True)
class CriteriaSets:
    """The sets one study is graded with: native arteries, stented segments, bypass grafts."""

    native: Criteria
    stent: Criteria
    graft: Criteria

    def all(self) -> tuple[Criteria, ...]:
        """Return the sets, native first."""
        return (self.native, self.stent, self.graft)

    def look(self, band_id: str) -> str | None:
        """Return the house look of a band id of any of the sets (None for not-assessed)."""
        for crit in self.all():
            for b in crit.bands:
                if b.id == band_id:
                    return b.look
        return None

    def severity(self, band_id: str) -> int:
        """Return a band's severity on the common scale: -1 not assessed, 0 normal … 4 occluded."""
        look = self.look(band_id)
        return -1 if look is None else LOOK_SEVERITY[look]


def criteria_table(crit: Criteria) -> str:
    """Return a criteria set as a plain-text table, mildest band first, with each source."""
    rows = [("band", "label", "rule", "source")]
    rows += [(b.id, b.label, crit.describe(b), b.source) for b in crit.bands]
    widths = [max(len(r[i]) for r in rows) for i in range(3)]
    body = [
        "  ".join(c.ljust(w) for c, w in zip(r[:3], widths, strict=True)) + "  " + r[3]
        for r in rows
    ]
    origin = "shipped with limbchart" if crit.origin == "shipped" else f"lab file {crit.origin}"
    head = [f"{crit.name}: {crit.title} ({crit.kind}; {origin})", f"source: {crit.source}"]
    if crit.lesion_floor:
        head.append(f"a documented lesion is graded at least {crit.lesion_floor}")
    return "\n".join([*head, *body])


def shipped_names() -> tuple[str, ...]:
    """Return the names of the criteria sets shipped with the package."""
    folder = resources.files("diagram.criteria")
    return tuple(sorted(p.name[:-5] for p in folder.iterdir() if p.name.endswith(".yaml")))


def load_criteria(name_or_path: str, *, relative_to: Path | None = None) -> Criteria:
    """Return a shipped criteria set by name, or a lab's own set from a file path."""
    if name_or_path in shipped_names():
        text = (resources.files("diagram.criteria") / f"{name_or_path}.yaml").read_text("utf-8")
        return _cached_parse(text, f"criteria/{name_or_path}.yaml", "shipped")
    path = Path(name_or_path)
    if relative_to is not None and not path.is_absolute():
        path = relative_to / path
    if not path.suffix and not path.exists():
        hint = difflib.get_close_matches(name_or_path, shipped_names(), n=1)
        raise CriteriaError(
            [
                Problem(
                    str(name_or_path),
                    None,
                    "exam.criteria",
                    repr(name_or_path),
                    f"is neither a shipped criteria set ({', '.join(shipped_names())}) nor a file.",
                    f"did you mean {hint[0]}?" if hint else None,
                )
            ]
        )
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise CriteriaError(
            [Problem(str(path), None, "", None, f"cannot be read: {exc.strerror}.")]
        ) from None
    if len(data) > _MAX_BYTES:
        raise CriteriaError(
            [Problem(str(path), None, "", None, f"is larger than {_MAX_BYTES} bytes.")]
        )
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        raise CriteriaError([Problem(str(path), None, "", None, "is not UTF-8 text.")]) from None
    return _cached_parse(text, str(path), str(path))


@lru_cache(maxsize=32)
def _cached_parse(text: str, file: str, origin: str) -> Criteria:
    return parse_criteria(text, file, origin)


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

    try:
        # Screen the event stream before anything is built: anchors and aliases (how a YAML
        # bomb expands), explicit tags (object construction) and deep nesting are refused.
        depth = 0
        for event in yaml.parse(text, Loader=yaml.SafeLoader):
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
        node = yaml.compose(text, Loader=yaml.SafeLoader)
        if node is not None:
            _refuse_complex_keys(node, refuse)
        raw = yaml.safe_load(text)
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
