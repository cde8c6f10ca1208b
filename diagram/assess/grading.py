"""Grade segments and lesions: lesion extents, velocity ratios against the upstream sample, bands.

The velocity ratio is rounded to two decimals before it is graded, so the band always agrees
with the ratio printed beside it (117/90 is shown as 1.30 and graded as 1.30).
"""

from __future__ import annotations

from dataclasses import replace
from decimal import ROUND_HALF_UP, Decimal

from diagram import anatomy
from diagram.anatomy import SEGMENTS, Side
from diagram.assess.results import Finding, LesionResult, LimbResult, Reference, SegmentResult, Span
from diagram.criteria import NOT_ASSESSED, Criteria, significant_rank
from diagram.errors import Problem, StudyError
from diagram.study import Flow, Lesion, Limb, Sample, Study, Waveform

FOCAL_LENGTH_CM = (
    1.0  # drawn extent of a stenosis whose length is not given (common practice: focal)
)
_EPS = 1e-9


def round_vr(value: float) -> float:
    """Round a velocity ratio to two decimals, halves up."""
    return float(Decimal(repr(value)).quantize(Decimal("0.01"), rounding=ROUND_HALF_UP))


def lesion_chain(lesion: Lesion) -> tuple[str, ...]:
    """Return the segments an extent starting in ``lesion.at`` runs through, in order.

    An occlusion that reconstitutes in a branch (say the peroneal below a popliteal occlusion)
    follows the tree towards that branch; otherwise the extent runs on in line.
    """
    target = lesion.reconstitutes
    if target and target not in anatomy.run_on(lesion.at):
        path = [target]
        for up in anatomy.ancestors(target):
            if up == lesion.at:
                break
            path.append(up)
        return (lesion.at, *reversed(path[1:]), *anatomy.run_on(target))
    return anatomy.run_on(lesion.at)


def lesion_spans(lesion: Lesion) -> tuple[tuple[Span, ...], Span | None]:
    """Return the stretches a lesion covers and, for an occlusion, its reconstitution point."""
    chain = lesion_chain(lesion)
    start = lesion.from_cm or 0.0
    if lesion.length_cm is not None:
        remaining = lesion.length_cm
    elif lesion.occluded and lesion.reconstitutes:
        upto = chain.index(lesion.reconstitutes)
        remaining = sum(SEGMENTS[s].length_cm for s in chain[:upto]) - start
    elif lesion.occluded:
        remaining = SEGMENTS[lesion.at].length_cm - start
    else:
        remaining = min(FOCAL_LENGTH_CM, SEGMENTS[lesion.at].length_cm - start)
    spans: list[Span] = []
    pos = start
    for seg in chain:
        seg_len = SEGMENTS[seg].length_cm
        take = min(remaining, seg_len - pos)
        spans.append(_span(seg, pos, pos + take))
        remaining -= take
        pos = 0.0
        if remaining <= _EPS:
            break
    point: Span | None = None
    if lesion.occluded and (lesion.reconstitutes or lesion.length_cm is not None):
        last = spans[-1]
        end_seg, end_cm = last.segment, last.end_cm
        if abs(end_cm - SEGMENTS[end_seg].length_cm) < _EPS and end_seg != chain[-1]:
            # an occlusion ending on a segment boundary reconstitutes at the next one's start
            end_seg, end_cm = chain[chain.index(end_seg) + 1], 0.0
        if lesion.reconstitutes and end_seg != lesion.reconstitutes and lesion.length_cm is None:
            end_seg, end_cm = lesion.reconstitutes, 0.0
        point = _span(end_seg, end_cm, end_cm)
    return tuple(spans), point


def _span(segment: str, start_cm: float, end_cm: float) -> Span:
    length = SEGMENTS[segment].length_cm
    return Span(
        segment,
        round(start_cm, 3),
        round(end_cm, 3),
        round(start_cm / length, 6),
        round(end_cm / length, 6),
    )


def _has_data(s: Sample) -> bool:
    return (
        any(
            v is not None
            for v in (s.psv, s.edv, s.vr, s.waveform, s.flow, s.plaque, s.band, s.proximal_psv)
        )
        or s.occluded
    )


class _LimbGrader:
    """Grades one limb top-down so that every upstream band is known before it is used."""

    def __init__(self, study: Study, limb: Limb, criteria: Criteria) -> None:
        self.study = study
        self.limb = limb
        self.side = limb.side
        self.criteria = criteria
        self.bands: dict[str, str] = {}
        self.findings: list[Finding] = []
        self.problems: list[Problem] = []
        self.touching: dict[str, list[int]] = {s: [] for s in anatomy.SEGMENT_IDS}
        self.lesion_geometry = [lesion_spans(les) for les in limb.lesions]
        for i, (spans, _) in enumerate(self.lesion_geometry):
            for span in spans:
                self.touching[span.segment].append(i)
        self.lesion_results: dict[int, LesionResult] = {}

    def reference(self, segment: str) -> Reference | None:
        """Return the nearest upstream sample that is not stenotic and not occluded."""
        for up in anatomy.ancestors(segment):
            finding = self.limb.segments.get(up)
            band = self.bands.get(up, NOT_ASSESSED)
            if finding is None or finding.psv is None or finding.occluded:
                continue
            if band != NOT_ASSESSED and self.criteria.rank(band) >= self._significant_rank():
                continue
            diseased = band != NOT_ASSESSED and self.criteria.rank(band) > 0
            return Reference(finding.psv, "segment", up, diseased)
        return None

    def _significant_rank(self) -> int:
        return significant_rank(self.criteria)

    def ratio(self, sample: Sample, segment: str) -> tuple[float | None, str, Reference | None]:
        """Return (Vr, how it was obtained, reference used)."""
        if sample.vr is not None:
            return round_vr(sample.vr), "measured", None
        if sample.psv is None:
            return None, "none", None
        ref: Reference | None
        if sample.proximal_psv is not None:
            ref = Reference(sample.proximal_psv, "proximal_psv", None)
        else:
            ref = self.reference(segment)
        if ref is None:
            return None, "none", None
        return round_vr(sample.psv / ref.psv), "computed", ref

    def grade_sample(
        self, sample: Sample, segment: str, *, lesion: bool, what: str
    ) -> tuple[str, str, float | None, str, Reference | None]:
        """Return (band, basis, Vr, Vr source, reference) for one sample."""
        if sample.not_assessed:
            return NOT_ASSESSED, "marked not assessed", None, "none", None
        if sample.occluded:
            return self.criteria.occlusion_band.id, "occlusion recorded", None, "none", None
        vr, vr_source, ref = self.ratio(sample, segment)
        rule = self.criteria.grade(vr, sample.psv, lesion=lesion)
        given = sample.band
        if given is not None and given not in self.criteria.band_ids:
            self.problems.append(
                Problem(
                    self.study.source,
                    sample.line,
                    f"{what}.band",
                    repr(given),
                    f"is not a band of the criteria set {self.criteria.name} "
                    f"({', '.join(self.criteria.band_ids)}).",
                )
            )
            given = None
        if rule is not None:
            basis = f"{rule.describe()} ({self.criteria.name})"
            if given is not None and given != rule.id:
                self.findings.append(
                    Finding(
                        "band-disagrees",
                        self.side,
                        segment,
                        f"{what}: band given as {given} but the velocities give {rule.id}; "
                        f"the map shows {rule.id}.",
                    )
                )
            return rule.id, basis, vr, vr_source, ref
        if given is not None:
            return given, "band given by hand", vr, vr_source, ref
        if lesion:
            if sample.psv is not None:
                self.findings.append(
                    Finding(
                        "no-reference",
                        self.side,
                        segment,
                        f"{what}: no upstream PSV to compute Vr; give proximal_psv or a band.",
                    )
                )
            return NOT_ASSESSED, "no velocity ratio and no band given", vr, vr_source, ref
        if not _has_data(sample):
            return NOT_ASSESSED, "nothing recorded", None, "none", None
        if sample.waveform is Waveform.ABSENT or sample.flow is Flow.ABSENT:
            self.findings.append(
                Finding(
                    "absent-flow-ungraded",
                    self.side,
                    segment,
                    f"{what}: flow recorded as absent but not marked occluded; left ungraded.",
                )
            )
            return NOT_ASSESSED, "absent flow, occlusion not recorded", vr, vr_source, ref
        normal = self.criteria.bands[0]
        return normal.id, "no lesion recorded", vr, vr_source, ref

    def run(self) -> LimbResult:
        segments: dict[str, SegmentResult] = {}
        for seg in anatomy.SEGMENT_IDS:
            # lesions that start here are graded first, with this segment's upstream references
            for i, les in enumerate(self.limb.lesions):
                if les.at == seg:
                    self.lesion_results[i] = self.grade_lesion(i, les)
            segments[seg] = self.grade_segment(seg)
        lesions = tuple(self.lesion_results[i] for i in range(len(self.limb.lesions)))
        return LimbResult(self.side, segments, lesions)

    def grade_lesion(self, index: int, les: Lesion) -> LesionResult:
        what = f"limbs.{self.side.value}.lesions[{index}]"
        band, basis, vr, vr_source, ref = self.grade_sample(les, les.at, lesion=True, what=what)
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
            band=band,
            psv=les.psv,
            edv=les.edv,
            vr=vr,
            vr_source=vr_source,
            reference=ref,
            length_cm=les.length_cm,
            from_cm=les.from_cm or 0.0,
            occluded=les.occluded,
            reconstitutes=les.reconstitutes,
            reconstitution=point,
            spans=spans,
            basis=basis,
        )

    def grade_segment(self, seg: str) -> SegmentResult:
        finding = self.limb.segments.get(seg)
        touching = tuple(self.touching[seg])
        what = f"limbs.{self.side.value}.segments.{seg}"
        if finding is not None:
            band, basis, vr, _, ref = self.grade_sample(finding, seg, lesion=False, what=what)
            assessed = band != NOT_ASSESSED or bool(touching)
        else:
            band, basis, vr, ref, assessed = NOT_ASSESSED, "nothing recorded", None, None, False
        for i in touching:
            les = self.lesion_results.get(i)
            if les is None:  # a lesion that starts upstream is always graded before
                continue
            if self.criteria.rank(les.band) > self.criteria.rank(band):
                band, basis = les.band, f"lesion {i + 1} ({les.basis})"
                assessed = True
        self.bands[seg] = band
        return SegmentResult(
            side=self.side,
            segment=seg,
            band=band,
            psv=finding.psv if finding else None,
            edv=finding.edv if finding else None,
            vr=vr,
            reference=ref,
            waveform=finding.waveform.value if finding and finding.waveform else None,
            lesions=touching,
            basis=basis,
            assessed=assessed,
        )


def grade_limbs(study: Study, criteria: Criteria) -> tuple[dict[Side, LimbResult], list[Finding]]:
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
        grader = _LimbGrader(study, limb, criteria)
        limbs[side] = grader.run()
        findings.extend(grader.findings)
        problems.extend(grader.problems)
    if problems:
        raise StudyError(problems)
    # ... and it is drawn once, in the worse of the two grades.
    r_ao, l_ao = limbs[Side.RIGHT].segments["AO"], limbs[Side.LEFT].segments["AO"]
    worst = max((r_ao, l_ao), key=lambda r: (criteria.rank(r.band), r.side is Side.RIGHT))
    for side in Side:
        segs = dict(limbs[side].segments)
        segs["AO"] = replace(worst, side=side)
        limbs[side] = replace(limbs[side], segments=segs)
    return limbs, findings
