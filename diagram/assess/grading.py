"""Grade segments and lesions: lesion extents, velocity ratios against the upstream sample, bands.

The velocity ratio is rounded to two decimals before it is graded, so the band always agrees
with the ratio printed beside it (117/90 is shown as 1.30 and graded as 1.30).
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import replace

from diagram import anatomy
from diagram.anatomy import SEGMENTS, Side
from diagram.assess.indices import round_half_up
from diagram.assess.results import (
    Finding,
    GraftResult,
    GraftSite,
    LesionResult,
    LimbResult,
    Reference,
    SegmentResult,
    Span,
    StentResult,
)
from diagram.criteria import NOT_ASSESSED, SIGNIFICANT_SEVERITY, Criteria, CriteriaSets
from diagram.errors import Problem, StudyError
from diagram.reading.study import (
    GRAFT_BODY_SITES,
    GRAFT_SITES,
    Flow,
    Graft,
    Lesion,
    Limb,
    Sample,
    Stent,
    Study,
    Waveform,
)

# Drawn extent of a stenosis whose length is not given (common practice: a focal lesion).
FOCAL_LENGTH_CM = 1.0
# Graft flow velocity below 45 cm/s (SVS 2018 surveillance table, Bandyk 1988).
GRAFT_LOW_FLOW_CM_S = 45.0
_EPS = 1e-9


def round_vr(value: float) -> float:
    """Round a velocity ratio to two decimals, halves up (any finite float, however large)."""
    return round_half_up(value)


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


def stent_spans(stent: Stent) -> tuple[Span, ...]:
    """Return the stretches a stent covers, from its start in ``from_`` to ``to`` (inclusive)."""
    chain = [stent.to, *anatomy.ancestors(stent.to)]
    path = list(reversed(chain[: chain.index(stent.from_) + 1])) if stent.from_ in chain else []
    path = path or [stent.from_]
    start = stent.from_cm or 0.0
    if stent.length_cm is not None:
        remaining = stent.length_cm
        path = list(anatomy.run_on(stent.from_)) if len(path) == 1 else path
    else:
        remaining = sum(SEGMENTS[s].length_cm for s in path) - start
    spans: list[Span] = []
    pos = start
    for seg in path:
        take = min(remaining, SEGMENTS[seg].length_cm - pos)
        spans.append(_span(seg, pos, pos + take))
        remaining -= take
        pos = 0.0
        if remaining <= _EPS:
            break
    return tuple(spans)


def _span(segment: str, start_cm: float, end_cm: float) -> Span:
    length = SEGMENTS[segment].length_cm
    return Span(
        segment,
        round(start_cm, 3),
        round(end_cm, 3),
        round(start_cm / length, 6),
        round(end_cm / length, 6),
    )


def _finite_ratio(psv: float, reference: float) -> float | None:
    """Return the rounded ratio, or None when the reference is too small to divide by."""
    ratio = psv / reference
    return round_vr(ratio) if math.isfinite(ratio) else None


def _union_cm(stretches: Iterable[tuple[float, float]]) -> float:
    """Return the length covered by possibly overlapping stretches."""
    total, end = 0.0, float("-inf")
    for a, b in sorted(stretches):
        if b > end:
            total += b - max(a, end)
            end = b
    return total


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

    def __init__(self, study: Study, limb: Limb, sets: CriteriaSets) -> None:
        self.study = study
        self.limb = limb
        self.side = limb.side
        self.sets = sets
        self.criteria = sets.native
        self.stent_spans = [stent_spans(st) for st in limb.stents]
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
            if finding is None or finding.psv is None or finding.psv <= 0 or finding.occluded:
                continue  # no usable reference (a study built in code may hold a PSV of 0)
            if self.sets.severity(band) >= SIGNIFICANT_SEVERITY:
                continue
            diseased = self.sets.severity(band) > 0
            return Reference(finding.psv, "segment", up, diseased)
        return None

    def criteria_at(self, segment: str, from_cm: float | None) -> Criteria:
        """Return the stent set for a lesion that starts inside a stent, else the native set."""
        at = from_cm or 0.0
        for spans in self.stent_spans:
            if any(sp.segment == segment and sp.start_cm <= at <= sp.end_cm for sp in spans):
                return self.sets.stent
        return self.sets.native

    def criteria_of_segment(self, segment: str) -> Criteria:
        """Return the stent set for a segment at least half covered by a stent."""
        length = SEGMENTS[segment].length_cm
        for spans in self.stent_spans:
            covered = sum(sp.end_cm - sp.start_cm for sp in spans if sp.segment == segment)
            if covered >= length / 2:
                return self.sets.stent
        return self.sets.native

    def ratio(self, sample: Sample, segment: str) -> tuple[float | None, str, Reference | None]:
        """Return (Vr, how it was obtained, reference used)."""
        if sample.vr is not None:
            return round_vr(sample.vr), "measured", None
        if sample.psv is None:
            return None, "none", None
        ref: Reference | None
        if sample.proximal_psv is not None and sample.proximal_psv > 0:
            ref = Reference(sample.proximal_psv, "proximal_psv", None)
        else:
            ref = self.reference(segment)
        if ref is None or not math.isfinite(sample.psv / ref.psv):
            return None, "none", None  # a reference too small to divide by is no reference
        return round_vr(sample.psv / ref.psv), "computed", ref

    def grade_sample(
        self, sample: Sample, segment: str, *, lesion: bool, what: str, crit: Criteria
    ) -> tuple[str, str, float | None, str, Reference | None]:
        """Return (band, basis, Vr, Vr source, reference) for one sample."""
        if sample.not_assessed:
            return NOT_ASSESSED, "marked not assessed", None, "none", None
        if sample.occluded:
            return crit.occlusion_band.id, "occlusion recorded", None, "none", None
        vr, vr_source, ref = self.ratio(sample, segment)
        rule = crit.grade(vr, sample.psv, lesion=lesion)
        given = sample.band
        if given is not None and given not in crit.band_ids:
            self.problems.append(
                Problem(
                    self.study.source,
                    sample.line,
                    f"{what}.band",
                    repr(given),
                    f"is not a band of the criteria set {crit.name} ({', '.join(crit.band_ids)}).",
                )
            )
            given = None
        if rule is not None:
            basis = f"{crit.describe(rule)} ({crit.name})"
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
        normal = crit.bands[0]
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
        stents = tuple(
            StentResult(i, self.side, st.from_, st.to, self.stent_spans[i])
            for i, st in enumerate(self.limb.stents)
        )
        grafts = tuple(self.grade_graft(i, g) for i, g in enumerate(self.limb.grafts))
        return LimbResult(self.side, segments, lesions, stents, grafts)

    def grade_lesion(self, index: int, les: Lesion) -> LesionResult:
        what = f"limbs.{self.side.value}.lesions[{index}]"
        crit = self.criteria_at(les.at, les.from_cm)
        band, basis, vr, vr_source, ref = self.grade_sample(
            les, les.at, lesion=True, what=what, crit=crit
        )
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

    def grade_graft(self, index: int, graft: Graft) -> GraftResult:
        """Grade each site along a graft against the nearest non-stenotic sample above it."""
        crit = self.sets.graft
        what = f"limbs.{self.side.value}.grafts[{index}]"
        inflow = self.limb.segments.get(graft.from_)
        upstream: Reference | None = None
        if inflow is not None and inflow.psv and inflow.psv > 0 and not inflow.occluded:
            upstream = Reference(inflow.psv, "segment", graft.from_)
        else:
            upstream = self.reference(graft.from_)
        sites: list[GraftSite] = []
        for site in GRAFT_SITES:
            sample = graft.samples.get(site)
            if sample is None:
                continue
            vr: float | None
            ref: Reference | None
            if sample.vr is not None:
                vr, ref = round_vr(sample.vr), None
            elif (
                sample.psv is not None
                and sample.proximal_psv is not None
                and sample.proximal_psv > 0
            ):
                ref = Reference(sample.proximal_psv, "proximal_psv", None)
                vr = _finite_ratio(sample.psv, ref.psv)
            elif sample.psv is not None and upstream is not None:
                ref, vr = upstream, _finite_ratio(sample.psv, upstream.psv)
            else:
                vr, ref = None, None
            if vr is None and sample.vr is None:
                ref = None
            if sample.occluded:
                band, basis = crit.occlusion_band.id, "occlusion recorded"
            else:
                rule = crit.grade(vr, sample.psv, lesion=False)
                if rule is not None:
                    band, basis = rule.id, f"{crit.describe(rule)} ({crit.name})"
                elif sample.band is not None and sample.band in crit.band_ids:
                    band, basis = sample.band, "band given by hand"
                else:
                    band, basis = NOT_ASSESSED, "no velocity ratio and no band given"
            sites.append(GraftSite(site, band, sample.psv, vr, ref, basis))
            if sample.psv and sample.psv > 0 and self.sets.severity(band) < SIGNIFICANT_SEVERITY:
                upstream = Reference(sample.psv, "graft", f"graft {site.replace('_', ' ')}")
        body = [
            graft.samples[s].psv
            for s in GRAFT_BODY_SITES
            if s in graft.samples and graft.samples[s].psv is not None
        ]
        flow = min(v for v in body if v is not None) if body else None
        worst = max(sites, key=lambda g: self.sets.severity(g.band), default=None)
        band = worst.band if worst else NOT_ASSESSED
        basis = f"{worst.site.replace('_', ' ')}: {worst.basis}" if worst else "no graft samples"
        if flow is not None and flow < GRAFT_LOW_FLOW_CM_S:
            self.findings.append(
                Finding(
                    "graft-low-flow",
                    self.side,
                    graft.to,
                    f"{what}: graft flow velocity {flow:g} cm/s is below 45 cm/s; with a "
                    "high-risk lesion the graft is at the highest risk (SVS 2018).",
                )
            )
        return GraftResult(
            index, self.side, graft.conduit, graft.from_, graft.to, band, tuple(sites), flow, basis
        )

    def grade_segment(self, seg: str) -> SegmentResult:
        finding = self.limb.segments.get(seg)
        touching = tuple(self.touching[seg])
        what = f"limbs.{self.side.value}.segments.{seg}"
        if finding is not None:
            crit = self.criteria_of_segment(seg)
            band, basis, vr, _, ref = self.grade_sample(
                finding, seg, lesion=False, what=what, crit=crit
            )
            assessed = band != NOT_ASSESSED or bool(touching)
        else:
            band, basis, vr, ref, assessed = NOT_ASSESSED, "nothing recorded", None, None, False
        own_band = band
        covered = _union_cm(
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
            vr=vr,
            reference=ref,
            waveform=finding.waveform.value if finding and finding.waveform else None,
            lesions=touching,
            basis=basis,
            assessed=assessed,
            base_band=band
            if finding is None and covered >= SEGMENTS[seg].length_cm - _EPS
            else own_band,
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
