"""Grade one sample with one criteria set: the ratio, the band, and a basis that states the figures.

Shared by native segments, lesions and graft sites. The basis always quotes the figure it rests
on and the rule it met, so it never contradicts the number printed beside it.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

from diagram.anatomy import Side
from diagram.assess.indices import round_half_up
from diagram.assess.results import Finding, Reference
from diagram.criteria import NOT_ASSESSED, BandRule, Criteria
from diagram.errors import Problem
from diagram.reading.study import Flow, Sample, Waveform

# A PSV computed from a Doppler shift at a steeper angle is not used for grading: the cosine
# error is too large (practice: keep the angle <= 60 degrees; above 70 even a 2-3 degree error
# moves the velocity by more than 10%, own arithmetic with the Doppler equation).
SHIFT_ANGLE_MAX_DEG = 70.0
# The plausibility cap of a computed PSV: the study file refuses a typed PSV above it.
PSV_CAP_CM_S = 800.0


def round_vr(value: float) -> float:
    """Round a velocity ratio to two decimals, halves up (any finite float, however large)."""
    return round_half_up(value)


def finite_ratio(psv: float, reference: float) -> float | None:
    """Return the rounded ratio, or None when the reference is too small to divide by."""
    ratio = psv / reference
    return round_vr(ratio) if math.isfinite(ratio) else None


@dataclass(frozen=True)
class Walk:
    """The upstream reference found for a sample, or (reference None) why none is valid."""

    reference: Reference | None
    blocked: str | None  # why the walk stopped; None when there was simply nothing above


@dataclass(frozen=True)
class Graded:
    """One sample graded."""

    band: str
    basis: str
    vr: float | None
    vr_source: str  # "computed", "measured" (vr given), "none"
    reference: Reference | None


def shift_unusable(sample: Sample) -> str | None:
    """Return why a Doppler shift gave no usable PSV, or None (no shift, or a PSV computed)."""
    if sample.shift_hz is None or sample.psv is not None:
        return None
    if sample.angle is None or sample.f0_mhz is None:
        return "Doppler shift without its angle or transmit frequency: no PSV"
    if sample.angle > SHIFT_ANGLE_MAX_DEG:
        return (
            f"PSV from a Doppler shift at {sample.angle:g} deg (above {SHIFT_ANGLE_MAX_DEG:g}): "
            "not used for grading"
        )
    return f"PSV from a Doppler shift above the plausible {PSV_CAP_CM_S:g} cm/s: not used"


def _has_data(s: Sample) -> bool:
    return (
        any(
            v is not None
            for v in (s.psv, s.edv, s.vr, s.waveform, s.flow, s.plaque, s.band, s.proximal_psv)
        )
        or s.occluded
    )


def _figures(crit: Criteria, psv: float | None, vr: float | None) -> str:
    """Return the figures a set's rule reads: ``PSV 342 cm/s, Vr 3.56`` or ``Vr 2.45``."""
    uses_psv = any(b.psv_min is not None for b in crit.bands)
    parts = []
    if uses_psv and psv is not None:
        parts.append(f"PSV {psv:g} cm/s")
    if vr is not None:
        parts.append(f"Vr {vr:.2f}")
    return ", ".join(parts)


class SampleGrader:
    """Grades samples of one limb, collecting warnings and problems as it goes."""

    def __init__(
        self, source: str, side: Side, findings: list[Finding], problems: list[Problem]
    ) -> None:
        self.source = source
        self.side = side
        self.findings = findings
        self.problems = problems

    def note(self, code: str, segment: str | None, message: str) -> None:
        self.findings.append(Finding(code, self.side, segment, message))

    def ratio(
        self, sample: Sample, walk: Callable[[], Walk]
    ) -> tuple[float | None, str, Reference | None, Walk | None]:
        """Return (Vr, how it was obtained, reference used, the walk when one was made)."""
        if sample.vr is not None:
            return round_vr(sample.vr), "measured", None, None
        if sample.psv is None:
            return None, "none", None, None
        if sample.proximal_psv is not None and sample.proximal_psv > 0:
            ref = Reference(sample.proximal_psv, "proximal_psv", None)
            vr = finite_ratio(sample.psv, ref.psv)
            return (vr, "computed", ref, None) if vr is not None else (None, "none", None, None)
        found = walk()
        if found.reference is None:
            return None, "none", None, found
        vr = finite_ratio(sample.psv, found.reference.psv)
        if vr is None:  # a reference too small to divide by is no reference
            return None, "none", None, Walk(None, None)
        return vr, "computed", found.reference, found

    def given_band(self, sample: Sample, crit: Criteria, what: str) -> str | None:
        given = sample.band
        if given is not None and given not in crit.band_ids:
            self.problems.append(
                Problem(
                    self.source,
                    sample.line,
                    f"{what}.band",
                    repr(given),
                    f"is not a band of the criteria set {crit.name} ({', '.join(crit.band_ids)}).",
                )
            )
            return None
        return given

    def basis_of(self, crit: Criteria, rule: BandRule, psv: float | None, vr: float | None) -> str:
        """Return the basis of a band from the ratio, quoting the figures and the rule met."""
        figures = _figures(crit, psv, vr)
        graded = crit.grade(vr, psv, lesion=False)
        if graded is not None and graded.rank < rule.rank and crit.lesion_floor == rule.id:
            below = crit.describe(graded)
            return (
                f"{figures}: {below}, raised to {rule.label} as a documented lesion ({crit.name})"
            )
        return f"{figures}: {crit.describe(rule)} ({crit.name})"

    def grade(
        self,
        sample: Sample,
        segment: str,
        *,
        lesion: bool,
        what: str,
        crit: Criteria,
        walk: Callable[[], Walk],
        flow: float | None = None,
        site: bool = False,
    ) -> Graded:
        """Grade one sample (``site``: a graft site, graded by PSV alone when Vr is missing)."""
        if sample.not_assessed:
            return Graded(NOT_ASSESSED, "marked not assessed", None, "none", None)
        if sample.occluded:
            return Graded(crit.occlusion_band.id, "occlusion recorded", None, "none", None)
        unusable = shift_unusable(sample)
        if unusable is not None:
            return Graded(NOT_ASSESSED, unusable, None, "none", None)
        vr, vr_source, ref, walked = self.ratio(sample, walk)
        given = self.given_band(sample, crit, what)
        rule = crit.grade(vr, sample.psv, lesion=lesion, flow=flow) if vr is not None else None
        if rule is not None and vr is not None:
            self.discordance(crit, sample, vr, flow, segment, what)
            if given is not None and given != rule.id:
                self.note(
                    "band-disagrees",
                    segment,
                    f"{what}: band given as {given} but the velocities give {rule.id}; "
                    f"the map shows {rule.id}.",
                )
            return Graded(rule.id, self.basis_of(crit, rule, sample.psv, vr), vr, vr_source, ref)
        why = walked.blocked if walked is not None else None
        ratio = (vr, vr_source, ref)
        if given is not None:
            if why:
                self.note(
                    "reference-blocked",
                    segment,
                    f"{what}: no valid velocity ratio: {why}; the band {given} stands as recorded.",
                )
            return Graded(given, "as recorded (no valid velocity ratio)", *ratio)
        if sample.psv is not None and (lesion or site) and crit.psv_only:
            return self.psv_only(sample, segment, crit, what, why, lesion=lesion, flow=flow)
        return self.without_ratio(sample, segment, crit, what, why, ratio, lesion=lesion)

    def without_ratio(
        self,
        sample: Sample,
        segment: str,
        crit: Criteria,
        what: str,
        why: str | None,
        ratio: tuple[float | None, str, Reference | None],
        *,
        lesion: bool,
    ) -> Graded:
        """Grade a sample with no band from its velocities, none given and no PSV-only rule.

        ``ratio`` is the (Vr, how obtained, reference) the sample has, shown beside the band; a
        lesion is left not assessed, a segment with nothing against it is normal.
        """
        if lesion:
            if sample.psv is not None:
                reason = f": {why}" if why else ""
                self.note(
                    "no-reference",
                    segment,
                    f"{what}: no valid upstream PSV to compute Vr{reason}; give proximal_psv "
                    "or a band.",
                )
            return Graded(NOT_ASSESSED, "no velocity ratio and no band given", *ratio)
        if not _has_data(sample):
            return Graded(NOT_ASSESSED, "nothing recorded", None, "none", None)
        if sample.waveform is Waveform.ABSENT or sample.flow is Flow.ABSENT:
            self.note(
                "absent-flow-ungraded",
                segment,
                f"{what}: flow recorded as absent but not marked occluded; left ungraded.",
            )
            return Graded(NOT_ASSESSED, "absent flow, occlusion not recorded", *ratio)
        vr = ratio[0]
        basis = "no lesion recorded" if vr is None else f"Vr {vr:.2f}, no lesion recorded"
        return Graded(crit.bands[0].id, basis, *ratio)

    def psv_only(
        self,
        sample: Sample,
        segment: str,
        crit: Criteria,
        what: str,
        why: str | None,
        *,
        lesion: bool,
        flow: float | None,
    ) -> Graded:
        """Grade by the set's PSV-only rule, never below the lowest disease band."""
        assert sample.psv is not None
        rule = crit.grade_psv_only(sample.psv, lesion=lesion, flow=flow)
        assert rule is not None  # the set has a PSV-only rule
        row = crit.psv_only_row(rule.id)
        if row is not None:
            met = row.describe()
        else:
            first = crit.psv_only[0]
            met = f"PSV {'<=' if first.psv_strict else '<'} {first.psv_min:g} cm/s"
            if lesion and crit.lesion_floor == rule.id and rule.rank > 0:
                met += f", at least {rule.label} as a documented lesion"
        basis = f"PSV {sample.psv:g} cm/s: {met}, PSV only, no valid Vr ({crit.name})"
        if lesion or rule.rank > 0:
            reason = why or "no sample upstream"
            self.note(
                "psv-only",
                segment,
                f"{what}: no valid velocity ratio ({reason}); graded {rule.id} by the "
                f"{crit.name} set's PSV-only rule ({met}).",
            )
        return Graded(rule.id, basis, None, "none", None)

    def discordance(
        self,
        crit: Criteria,
        sample: Sample,
        vr: float,
        flow: float | None,
        segment: str,
        what: str,
    ) -> None:
        """Warn when PSV and Vr alone would put the sample in different bands."""
        pair = crit.discordant(vr, sample.psv, flow)
        if pair is None:
            return
        by_psv, by_vr = pair
        rule = "either" if crit.match == "any" else "both"
        self.note(
            "discordant-velocities",
            segment,
            f"{what}: PSV {sample.psv:g} cm/s alone gives {by_psv.label}, Vr {vr:.2f} alone "
            f"gives {by_vr.label}; the {crit.name} set grades by {rule} of them. Review the "
            "images.",
        )
