"""Grade segments and lesions: velocity ratios against a valid upstream sample, then bands.

The reference for a velocity ratio is the normal segment just above the lesion (Jager 1985). The
walk up the tree stops at an occlusion or a stenosis >= 50%: a sample across one is no valid
reference. A sample in the segment between two lesions (post-stenotic) is the reference for the
lower one. With no valid ratio a band given by hand stands ("as recorded"); otherwise the set's
PSV-only rule grades a documented lesion, with the warning ``psv-only``.

The velocity ratio is rounded to two decimals before it is graded, so the band always agrees
with the ratio printed beside it (117/90 is shown as 1.30 and graded as 1.30).
"""

from __future__ import annotations

from dataclasses import replace

from diagram import anatomy
from diagram.anatomy import SEGMENTS, Side
from diagram.assess.extents import FOCAL_LENGTH_CM as FOCAL_LENGTH_CM
from diagram.assess.extents import lesion_chain as lesion_chain
from diagram.assess.extents import lesion_spans, stent_spans, union_cm
from diagram.assess.grafts import grade_graft
from diagram.assess.results import (
    Finding,
    LesionResult,
    LimbResult,
    Reference,
    SegmentResult,
    StentResult,
)
from diagram.assess.samplegrade import Graded, SampleGrader, Walk
from diagram.assess.samplegrade import finite_ratio as finite_ratio
from diagram.assess.samplegrade import round_vr as round_vr
from diagram.criteria import NOT_ASSESSED, SIGNIFICANT_SEVERITY, Criteria, CriteriaSets
from diagram.errors import Problem, StudyError
from diagram.reading.study import Lesion, Limb, Study

_EPS = 1e-9


class _LimbGrader:
    """Grades one limb top-down so that every upstream band is known before it is used."""

    def __init__(self, study: Study, limb: Limb, sets: CriteriaSets) -> None:
        self.study = study
        self.limb = limb
        self.side = limb.side
        self.sets = sets
        self.stent_spans = [stent_spans(st) for st in limb.stents]
        self.bands: dict[str, str] = {}  # segment band, lesions included
        self.own_bands: dict[str, str] = {}  # the band of the segment's own sample
        self.findings: list[Finding] = []
        self.problems: list[Problem] = []
        self.touching: dict[str, list[int]] = {s: [] for s in anatomy.SEGMENT_IDS}
        self.lesion_geometry = [lesion_spans(les) for les in limb.lesions]
        for i, (spans, _) in enumerate(self.lesion_geometry):
            for span in spans:
                self.touching[span.segment].append(i)
        self.lesion_results: dict[int, LesionResult] = {}
        self.grader = SampleGrader(study.source, self.side, self.findings, self.problems)

    def _significant(self, band: str) -> bool:
        return self.sets.severity(band) >= SIGNIFICANT_SEVERITY

    def _lesion_ends_before_end(self, seg: str) -> bool:
        """Return True when every lesion >= 50% in ``seg`` ends before the segment does."""
        length = SEGMENTS[seg].length_cm
        for i in self.touching[seg]:
            res = self.lesion_results.get(i)
            if res is None or not self._significant(res.band):
                continue
            if any(sp.segment == seg and sp.end_cm >= length - _EPS for sp in res.spans):
                return False
        return True

    def _blocking_lesion(self, seg: str) -> str:
        for i in self.touching[seg]:
            res = self.lesion_results.get(i)
            if res is not None and self._significant(res.band):
                what = "an occlusion" if res.occluded else f"a lesion graded {res.band}"
                return f"{what} (lesion {i + 1}) in {seg}"
        return f"{seg}, graded {self.bands.get(seg, NOT_ASSESSED)} from its own sample"

    def _usable_psv(self, segment: str) -> float | None:
        """Return the PSV of a segment's own sample when it can serve as a reference."""
        finding = self.limb.segments.get(segment)
        if finding is None or finding.psv is None or finding.psv <= 0 or finding.occluded:
            return None  # a study built in code may hold a PSV of 0
        return finding.psv if self.own_bands.get(segment) != NOT_ASSESSED else None

    def walk(self, segment: str, index: int | None = None, start_cm: float = 0.0) -> Walk:
        """Return the valid upstream reference of a sample in ``segment``, or why there is none.

        ``index`` and ``start_cm`` name a lesion: a lesion >= 50% above it in its own segment
        already blocks the walk.
        """
        if index is not None:
            for i in self.touching[segment]:
                res = self.lesion_results.get(i)
                if i == index or res is None or not self._significant(res.band):
                    continue
                first = res.spans[0]
                above = first.segment != segment or first.start_cm < start_cm - _EPS
                above = above or (abs(first.start_cm - start_cm) <= _EPS and i < index)
                if above:
                    what = "an occlusion" if res.occluded else f"a lesion graded {res.band}"
                    return Walk(None, f"{what} (lesion {i + 1}) lies just above it in {segment}")
        for up in anatomy.ancestors(segment):
            psv = self._usable_psv(up)
            band = self.bands.get(up, NOT_ASSESSED)
            if not self._significant(band):
                if psv is not None:
                    diseased = self.sets.severity(band) > 0
                    return Walk(Reference(psv, "segment", up, diseased), None)
                continue
            own = self.own_bands.get(up, NOT_ASSESSED)
            if psv is not None and not self._significant(own) and self._lesion_ends_before_end(up):
                return Walk(Reference(psv, "segment", up, False, post_stenotic=True), None)
            return Walk(None, f"{self._blocking_lesion(up)} lies between it and the samples above")
        return Walk(None, None)

    def inflow(self, segment: str) -> Walk:
        """Return the reference for a graft's first site: its inflow artery's own sample."""
        finding = self.limb.segments.get(segment)
        band = self.bands.get(segment, NOT_ASSESSED)
        if self._significant(band):
            return Walk(None, f"{self._blocking_lesion(segment)}, the graft's inflow")
        if finding is not None and finding.psv and finding.psv > 0 and not finding.occluded:
            diseased = self.sets.severity(band) > 0
            return Walk(Reference(finding.psv, "segment", segment, diseased), None)
        return self.walk(segment)

    def criteria_at(self, les: Lesion) -> tuple[Criteria, str]:
        """Return the set for a lesion and why: the stent set when it starts inside a stent."""
        at, given = les.from_cm or 0.0, les.from_cm is not None
        start = f"{les.at} {at:g} cm" if given else f"{les.at} (no from_cm: its start taken)"
        near = None
        chain = lesion_spans(les)[0]
        for k, spans in enumerate(self.stent_spans):
            if any(sp.segment == les.at and sp.start_cm <= at <= sp.end_cm for sp in spans):
                return self.sets.stent, f"{self.sets.stent.name} set: starts inside stent {k + 1}"
            same_segment = any(sp.segment == les.at for sp in spans)
            overlaps = any(
                sp.segment == c.segment and sp.start_cm < c.end_cm and c.start_cm < sp.end_cm
                for sp in spans
                for c in chain
            )
            if near is None and (same_segment or overlaps):
                near = (k, spans[0])
        if near is not None:
            k, first = near
            why = (
                f"{self.sets.native.name} set: starts at {start}, outside stent {k + 1} "
                f"(from {first.segment} {first.start_cm:g} cm)"
            )
            return self.sets.native, why
        return self.sets.native, ""

    def criteria_of_segment(self, segment: str) -> Criteria:
        """Return the stent set for a segment at least half covered by a stent."""
        length = SEGMENTS[segment].length_cm
        for spans in self.stent_spans:
            covered = sum(sp.end_cm - sp.start_cm for sp in spans if sp.segment == segment)
            if covered >= length / 2:
                return self.sets.stent
        return self.sets.native

    def run(self) -> LimbResult:
        segments: dict[str, SegmentResult] = {}
        order = sorted(
            range(len(self.limb.lesions)),
            key=lambda i: (self.limb.lesions[i].from_cm or 0.0, i),
        )
        for seg in anatomy.SEGMENT_IDS:
            # lesions that start here are graded first, top down, with the references above them
            for i in order:
                if self.limb.lesions[i].at == seg:
                    self.lesion_results[i] = self.grade_lesion(i, self.limb.lesions[i])
            segments[seg] = self.grade_segment(seg)
        lesions = tuple(self.lesion_results[i] for i in range(len(self.limb.lesions)))
        stents = tuple(
            StentResult(i, self.side, st.from_, st.to, self.stent_spans[i])
            for i, st in enumerate(self.limb.stents)
        )
        grafts = tuple(
            grade_graft(self.grader, self.sets, self.inflow, i, g)
            for i, g in enumerate(self.limb.grafts)
        )
        return LimbResult(self.side, segments, lesions, stents, grafts)

    def grade_lesion(self, index: int, les: Lesion) -> LesionResult:
        what = f"limbs.{self.side.value}.lesions[{index}]"
        crit, why_set = self.criteria_at(les)
        graded = self.grader.grade(
            les,
            les.at,
            lesion=True,
            what=what,
            crit=crit,
            walk=lambda: self.walk(les.at, index, les.from_cm or 0.0),
        )
        basis = f"{graded.basis}; {why_set}" if why_set else graded.basis
        spans, point = self.lesion_geometry[index]
        if point is not None and les.reconstitutes and point.segment != les.reconstitutes:
            self.findings.append(
                Finding(
                    "reconstitution-mismatch",
                    self.side,
                    les.at,
                    f"{what}: the occlusion's length ends in {point.segment} but it is said to "
                    f"reconstitute in {les.reconstitutes}; the map marks the end of the length "
                    "given.",
                )
            )
        return LesionResult(
            index=index,
            side=self.side,
            at=les.at,
            band=graded.band,
            psv=les.psv,
            edv=les.edv,
            vr=graded.vr,
            vr_source=graded.vr_source,
            reference=graded.reference,
            length_cm=les.length_cm,
            from_cm=les.from_cm or 0.0,
            occluded=les.occluded,
            reconstitutes=les.reconstitutes,
            reconstitution=point,
            spans=spans,
            basis=basis,
            criteria=crit.name,
        )

    def grade_segment(self, seg: str) -> SegmentResult:
        finding = self.limb.segments.get(seg)
        touching = tuple(self.touching[seg])
        what = f"limbs.{self.side.value}.segments.{seg}"
        graded = Graded(NOT_ASSESSED, "nothing recorded", None, "none", None)
        assessed = False
        if finding is not None:
            crit = self.criteria_of_segment(seg)
            graded = self.grader.grade(
                finding, seg, lesion=False, what=what, crit=crit, walk=lambda: self.walk(seg)
            )
            assessed = graded.band != NOT_ASSESSED or bool(touching)
        band, basis = graded.band, graded.basis
        self.own_bands[seg] = band
        covered = union_cm(
            (sp.start_cm, sp.end_cm)
            for i in touching
            for sp in self.lesion_geometry[i][0]
            if sp.segment == seg
        )
        for i in touching:
            les = self.lesion_results.get(i)
            if les is None:  # a lesion that starts upstream is always graded before
                continue
            if self.sets.severity(les.band) > self.sets.severity(band):
                band, basis = les.band, f"lesion {i + 1} ({les.basis})"
                assessed = True
        self.bands[seg] = band
        return SegmentResult(
            side=self.side,
            segment=seg,
            band=band,
            psv=finding.psv if finding else None,
            edv=finding.edv if finding else None,
            vr=graded.vr,
            reference=graded.reference,
            waveform=finding.waveform.value if finding and finding.waveform else None,
            lesions=touching,
            basis=basis,
            assessed=assessed,
            base_band=band
            if finding is None and covered >= SEGMENTS[seg].length_cm - _EPS
            else graded.band,
        )


def grade_limbs(study: Study, sets: CriteriaSets) -> tuple[dict[Side, LimbResult], list[Finding]]:
    """Grade both limbs; raise StudyError for a band id the criteria set does not know."""
    limbs: dict[Side, LimbResult] = {}
    findings: list[Finding] = []
    problems: list[Problem] = []
    # The distal aorta is unpaired: a sample given under one limb is the reference for both.
    aorta = next(
        (study.limb(s).segments["AO"] for s in Side if "AO" in study.limb(s).segments), None
    )
    for side in (Side.RIGHT, Side.LEFT):
        limb = study.limb(side)
        if aorta is not None and "AO" not in limb.segments:
            limb = replace(limb, segments={**limb.segments, "AO": aorta})
        grader = _LimbGrader(study, limb, sets)
        limbs[side] = grader.run()
        findings.extend(grader.findings)
        problems.extend(grader.problems)
    if problems:
        raise StudyError(problems)
    # ... and it is drawn once, in the worse of the two grades.
    r_ao, l_ao = limbs[Side.RIGHT].segments["AO"], limbs[Side.LEFT].segments["AO"]
    worst = max((r_ao, l_ao), key=lambda r: (sets.severity(r.band), r.side is Side.RIGHT))
    for side in Side:
        segs = dict(limbs[side].segments)
        segs["AO"] = replace(worst, side=side)
        limbs[side] = replace(limbs[side], segments=segs)
    return limbs, findings
