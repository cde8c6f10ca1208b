"""Criteria sets as values: the bands of a set, a set, and the three sets one study uses.

The rules these values follow are in the package's docstring (:mod:`diagram.criteria`).
"""

from __future__ import annotations

from dataclasses import dataclass

NOT_ASSESSED = "not-assessed"
LOOKS = ("normal", "lt50", "50-74", "75-99", "occluded")


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
    uses = {k for b in crit.bands for k, v in (("PSV", b.psv_min), ("Vr", b.vr_min)) if v}
    if len(uses) == 2:
        rule = "both PSV and Vr reach a band" if crit.match == "all" else "the worse of PSV, Vr"
        head.append(f"rule: {rule} (a pair in different bands is flagged discordant)")
    elif uses:
        head.append(f"rule: {uses.pop()} alone")
    if crit.lesion_floor:
        head.append(f"a documented lesion is graded at least {crit.lesion_floor}")
    tail = []
    if crit.psv_only:
        listed = "; ".join(f"{r.band} {r.describe()}" for r in crit.psv_only)
        tail.append(f"PSV only (no valid Vr): {listed}")
        if crit.psv_only_source:
            tail.append(f"  source: {crit.psv_only_source}")
    return "\n".join([*head, *body, *tail])
