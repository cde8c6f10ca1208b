"""Criteria sets as values: the bands of a set, a set, and the three sets one study uses.

A set lists bands mildest first. A band applies when its ``when`` conditions hold (``vr_min``
and/or ``psv_min``, combined with ``match: all`` (default) or ``any``); the worst band that
applies wins, so a value on a boundary belongs to the higher band. A band with
``occlusion: true`` is the band for an occluded vessel. ``not-assessed`` is built in.
"""

from __future__ import annotations

from dataclasses import dataclass

NOT_ASSESSED = "not-assessed"
LOOKS = ("normal", "lt50", "50-74", "75-99", "occluded")


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

    def applies(self, vr: float | None, psv: float | None) -> bool | None:
        """Return whether this band's conditions hold; None when a missing value decides it."""
        tests: list[bool | None] = []
        if self.vr_min is not None:
            tests.append(None if vr is None else vr >= self.vr_min)
        if self.psv_min is not None:
            tests.append(None if psv is None else psv >= self.psv_min)
        if not tests:
            return True
        if self.match == "all":
            return False if False in tests else (None if None in tests else True)
        return True if True in tests else (None if None in tests else False)

    def describe(self) -> str:
        """Return the band's rule in words, e.g. ``Vr >= 2.0``."""
        parts = []
        if self.vr_min is not None:
            parts.append(f"Vr >= {self.vr_min:g}")
        if self.psv_min is not None:
            parts.append(f"PSV >= {self.psv_min:g} cm/s")
        if self.occlusion:
            return "occlusion recorded"
        if not parts:
            return "below the next band's threshold"
        return (" and " if self.match == "all" else " or ").join(parts)


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
        if nxt.vr_min is not None:
            limits.append(f"Vr < {nxt.vr_min:g}")
        if nxt.psv_min is not None:
            limits.append(f"PSV < {nxt.psv_min:g} cm/s")
        joiner = " or " if nxt.match == "all" else " and "
        return joiner.join(limits)

    @property
    def occlusion_band(self) -> BandRule:
        """Return the band for an occluded vessel."""
        return next(b for b in self.bands if b.occlusion)

    def grade(self, vr: float | None, psv: float | None, *, lesion: bool) -> BandRule | None:
        """Return the worst band that applies, or None when a missing measurement could change it.

        Bands are tried worst first: the first that holds wins; one that cannot be decided
        because its measurement is missing (say Vr with no upstream sample) leaves the sample
        ungraded rather than graded too mildly.
        """
        found = None
        for b in reversed(self.bands):
            if b.occlusion:
                continue
            holds = b.applies(vr, psv)
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
    if crit.lesion_floor:
        head.append(f"a documented lesion is graded at least {crit.lesion_floor}")
    return "\n".join([*head, *body])
