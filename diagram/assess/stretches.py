"""Stretches of disease >= 50% on one leg, measured as the planning summary reads them.

Each graded lesion at or above the significant band, and each segment graded >= 50% from its own
sample with no lesion behind it, becomes an :class:`Extent` with its spans along the tree; the
assumptions made to measure it (a length not recorded, a start not given, a sample with no
lesion) are returned beside the extents so the summary can list them.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass

from diagram.anatomy import SEGMENT_IDS, SEGMENTS, UNPAIRED
from diagram.assess.grading import FOCAL_LENGTH_CM
from diagram.assess.results import LimbResult, Span
from diagram.criteria import LOOK_SEVERITY, SIGNIFICANT_SEVERITY, CriteriaSets
from diagram.reading.study import Plaque, Study

OCCLUDED = LOOK_SEVERITY["occluded"]
_EPS = 1e-6
CALCIFICATION_ASSUMPTION = "plaque 'calcified' on a lesion >= 50% is taken as severe calcification"


def cm_text(value: float) -> str:
    return f"{round(value, 1):g} cm"


@dataclass(frozen=True)
class Extent:
    """A stretch of disease >= 50%: a graded lesion or a segment graded from its own sample."""

    label: str
    severity: int
    spans: tuple[Span, ...]
    calcified: bool
    reconstitutes: str | None
    start_given: bool = True  # False: the file gives no from_cm, the start is taken
    in_stent: bool = False  # restenosis in a stent: not native disease for GLASS and TASC

    @property
    def occluded(self) -> bool:
        return self.severity >= OCCLUDED

    @property
    def length_cm(self) -> float:
        return round(sum(s.end_cm - s.start_cm for s in self.spans), 3)

    def cm_in(self, segs: Sequence[str]) -> float:
        return round(sum(s.end_cm - s.start_cm for s in self.spans if s.segment in segs), 3)

    def touches(self, segs: Sequence[str]) -> bool:
        return any(s.segment in segs for s in self.spans)

    def at_origin(self, seg: str) -> bool:
        return any(s.segment == seg and s.start_cm <= _EPS for s in self.spans)

    def reaches_end(self, seg: str) -> bool:
        length = SEGMENTS[seg].length_cm
        return any(s.segment == seg and s.end_cm >= length - _EPS for s in self.spans)


def union_cm(extents: Iterable[Extent], segs: Sequence[str]) -> float:
    """Return the length covered by the extents in these segments, overlaps counted once."""
    total, pool = 0.0, list(extents)
    for seg in segs:
        cover = sorted((s.start_cm, s.end_cm) for e in pool for s in e.spans if s.segment == seg)
        end = -1.0
        for lo, hi in cover:
            if hi > end:
                total += hi - max(lo, end)
                end = hi
    return round(total, 3)


def stented(limb: LimbResult, seg: str) -> bool:
    """Return True for a segment at least half covered by a stent (graded with the stent set)."""
    covered = sum(
        sp.end_cm - sp.start_cm for st in limb.stents for sp in st.spans if sp.segment == seg
    )
    return covered >= SEGMENTS[seg].length_cm / 2


def collect_extents(
    study: Study, limb: LimbResult, sets: CriteriaSets
) -> tuple[list[Extent], list[str]]:
    """Collect every stretch >= 50% with the assumptions made to measure it."""
    out: list[Extent] = []
    notes: list[str] = []
    given = study.limb(limb.side).lesions
    for les in limb.lesions:
        sev = sets.severity(les.band)
        n = les.index + 1
        if sev < 0:
            notes.append(f"lesion {n} ({les.at}) has no grade and is not counted")
            continue
        if sev < SIGNIFICANT_SEVERITY:
            continue
        src = given[les.index] if les.index < len(given) else None
        length = round(sum(s.end_cm - s.start_cm for s in les.spans), 3)
        if les.length_cm is None:
            notes.append(
                f"lesion {n} ({les.at}): length not recorded; counted as {cm_text(length)}"
            )
        recon = les.reconstitution.segment if les.reconstitution else les.reconstitutes
        label = f"lesion {n} ({les.band}, {les.at} at {les.from_cm:g} cm, {cm_text(length)})"
        calcified = src is not None and src.plaque is Plaque.CALCIFIED
        start_given = src is None or src.from_cm is not None
        in_stent = bool(les.criteria) and les.criteria == sets.stent.name
        out.append(Extent(label, sev, les.spans, calcified, recon, start_given, in_stent))
    for seg in SEGMENT_IDS:
        res = limb.segments.get(seg)
        if res is None or (sev := sets.severity(res.band)) < SIGNIFICANT_SEVERITY:
            continue
        if seg in UNPAIRED and res.lesions:  # the aorta's lesions are counted under one leg
            if not any(e.touches((seg,)) for e in out):
                notes.append(f"{seg}: {res.band} from a lesion listed under the other leg")
            continue
        if max((sets.severity(limb.lesions[i].band) for i in res.lesions), default=-1) >= sev:
            continue
        seg_len = SEGMENTS[seg].length_cm
        length = seg_len if sev >= OCCLUDED else min(FOCAL_LENGTH_CM, seg_len)
        what = "occluded over" if sev >= OCCLUDED else "a stenosis of"
        notes.append(
            f"{seg}: {res.band} from its sample, no lesion; counted {what} {cm_text(length)}"
        )
        sample = study.limb(limb.side).segments.get(seg)
        calcified = sample is not None and sample.plaque is Plaque.CALCIFIED
        span = (Span(seg, 0.0, length, 0.0, round(length / seg_len, 6)),)
        label = f"{seg} sample ({res.band}, {cm_text(length)})"
        out.append(Extent(label, sev, span, calcified, None, False, stented(limb, seg)))
    if any(e.calcified for e in out):
        notes.append(CALCIFICATION_ASSUMPTION)
    for e in out:
        if e.in_stent:
            notes.append(
                f"in-stent restenosis, {e.label}: not counted as native disease in the GLASS "
                "grades and the TASC class"
            )
    return out, notes
