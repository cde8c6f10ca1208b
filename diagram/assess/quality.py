"""Measurement quality: the checks that catch velocities that lie, each with a stable code.

Codes (stable; the results and the sheet carry them):

- ``angle-over-60``      insonation angle above 60 degrees: velocity unreliable
- ``aliasing``           PSV above the highest unaliased velocity for the PRF, f0 and angle
- ``psv-from-shift``     PSV computed from a Doppler shift with the Doppler equation (whole cm/s)
- ``psv-from-shift-steep``  a shift at an angle above 70 degrees: no PSV, not graded
- ``psv-from-shift-implausible``  a shift that gives more than 800 cm/s: no PSV, not graded
- ``occlusion-angle``    absent flow or occlusion called at an angle of 80 degrees or more
- ``occlusion-scale``    absent flow or occlusion called with a high velocity scale
- ``monophasic-unexplained``  the waveform turns monophasic with no lesion documented upstream
- ``triphasic-below-occlusion``  triphasic flow just distal to an occlusion
- ``psv-out-of-range``   a segment PSV outside the plausible range for that artery
- ``diseased-reference`` Vr computed against a reference segment that is itself diseased
- (grading adds ``band-disagrees``, ``no-reference``, ``reference-blocked``, ``psv-only``,
  ``discordant-velocities``, ``absent-flow-ungraded``, ``reconstitution-mismatch``,
  ``graft-low-flow``; pressure checks add theirs)
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from dataclasses import replace
from typing import TypeVar

from diagram import anatomy
from diagram.anatomy import SEGMENTS, Level, Side
from diagram.assess.results import Finding, LimbResult
from diagram.assess.samplegrade import PSV_CAP_CM_S, SHIFT_ANGLE_MAX_DEG
from diagram.criteria import SIGNIFICANT_SEVERITY, CriteriaSets
from diagram.reading.study import Flow, Graft, Limb, Sample, Study, Waveform

S = TypeVar("S", bound=Sample)

# Speed of sound in soft tissue, cm/s (standard Doppler physics: 1540 m/s).
SOUND_CM_S = 154_000.0
# Velocity measurement is kept at or below 60 degrees (practice; accreditation standards).
ANGLE_MAX_DEG = 60.0
# Flow may be missed near 90 degrees: an occlusion called at >= 80 degrees is flagged (practice).
OCCLUSION_ANGLE_DEG = 80.0
# A velocity scale above this Nyquist limit may miss slow flow in an occluded-looking vessel
# (from memory: slow-flow settings are a scale of a few tens of cm/s).
OCCLUSION_SCALE_CM_S = 50.0
# Plausible segment PSV ranges (cm/s), wide margins around the normal means of Jager, Ricketts &
# Strandness 1985 (aorta 100, EIA 119, CFA 114, SFA 91-94, popliteal 69; tibials 40-70, from
# memory). Outside them the sample is flagged, never changed.
PSV_RANGE_CM_S: dict[Level, tuple[float, float]] = {
    Level.INFLOW: (30.0, 250.0),
    Level.FEMORAL: (20.0, 250.0),
    Level.POPLITEAL: (15.0, 200.0),
    Level.INFRAPOPLITEAL: (10.0, 180.0),
    Level.PEDAL: (5.0, 150.0),
}


def nyquist_velocity(prf_hz: float, f0_mhz: float, angle_deg: float = 0.0) -> float:
    """Return the highest unaliased velocity, cm/s: c * PRF / (4 * f0 * cos angle)."""
    return SOUND_CM_S * prf_hz / (4.0 * f0_mhz * 1e6 * math.cos(math.radians(angle_deg)))


def doppler_velocity(shift_hz: float, f0_mhz: float, angle_deg: float) -> float:
    """Return the velocity, cm/s, for a Doppler shift: c * shift / (2 * f0 * cos angle)."""
    return SOUND_CM_S * shift_hz / (2.0 * f0_mhz * 1e6 * math.cos(math.radians(angle_deg)))


def _from_shift(side: Side, what: str, seg: str, s: S, notes: list[Finding]) -> S:
    """Return the sample with its PSV computed from ``shift_hz``, in whole cm/s, when usable."""
    if s.shift_hz is None or s.psv is not None or s.f0_mhz is None or s.angle is None:
        return s  # the study file refuses a shift without its angle or frequency
    given = f"a {s.shift_hz:g} Hz shift at {s.f0_mhz:g} MHz and {s.angle:g} deg"
    if s.angle > SHIFT_ANGLE_MAX_DEG:
        notes.append(
            Finding(
                "psv-from-shift-steep",
                side,
                seg,
                f"{what}: {given}: above {SHIFT_ANGLE_MAX_DEG:g} deg the velocity from the "
                "Doppler equation is not used for grading; the sample is not assessed.",
            )
        )
        return s
    velocity = doppler_velocity(s.shift_hz, s.f0_mhz, s.angle)
    if not math.isfinite(velocity) or velocity > PSV_CAP_CM_S:
        notes.append(
            Finding(
                "psv-from-shift-implausible",
                side,
                seg,
                f"{what}: {given} gives more than {PSV_CAP_CM_S:g} cm/s, above any velocity "
                "measured in a human artery; not used (check the shift and the angle).",
            )
        )
        return s
    psv = float(math.floor(velocity + 0.5))  # whole cm/s, like a typed PSV
    notes.append(
        Finding(
            "psv-from-shift",
            side,
            seg,
            f"{what}: PSV {psv:g} cm/s computed from {given} (Doppler equation, c = 1540 m/s).",
        )
    )
    return replace(s, psv=psv)


def _graft_segment(graft: Graft, site: str) -> str:
    """Return the segment a graft site's warning is pinned to: the graft's origin or target."""
    return graft.from_ if site in ("proximal_anastomosis", "proximal") else graft.to


def _graft_shifts(side: Side, where: str, graft: Graft, notes: list[Finding]) -> Graft:
    samples = {
        site: _from_shift(side, f"{where}.samples.{site}", _graft_segment(graft, site), s, notes)
        for site, s in graft.samples.items()
    }
    return replace(graft, samples=samples)


def with_shift_velocities(study: Study) -> tuple[Study, list[Finding]]:
    """Return the study with each PSV given as a Doppler shift computed, and a note for each."""
    notes: list[Finding] = []
    limbs = {}
    for side, limb in study.limbs.items():
        where = f"limbs.{side.value}"
        segments = {
            seg: _from_shift(side, f"{where}.segments.{seg}", seg, f, notes)
            for seg, f in limb.segments.items()
        }
        lesions = tuple(
            _from_shift(side, f"{where}.lesions[{i}]", les.at, les, notes)
            for i, les in enumerate(limb.lesions)
        )
        grafts = tuple(
            _graft_shifts(side, f"{where}.grafts[{i}]", g, notes) for i, g in enumerate(limb.grafts)
        )
        limbs[side] = replace(limb, segments=segments, lesions=lesions, grafts=grafts)
    return replace(study, limbs=limbs), notes


def _samples(limb: Limb) -> Iterator[tuple[str, str, Sample]]:
    for seg, finding in limb.segments.items():
        yield f"limbs.{limb.side.value}.segments.{seg}", seg, finding
    for i, les in enumerate(limb.lesions):
        yield f"limbs.{limb.side.value}.lesions[{i}]", les.at, les
    for i, graft in enumerate(limb.grafts):
        for site, sample in graft.samples.items():
            where = f"limbs.{limb.side.value}.grafts[{i}].samples.{site}"
            yield where, _graft_segment(graft, site), sample


def _sample_checks(side: Side, what: str, seg: str, s: Sample) -> list[Finding]:
    out: list[Finding] = []
    angle = s.angle if s.angle is not None else 0.0
    if s.angle is not None and s.angle > ANGLE_MAX_DEG and (s.psv is not None or s.edv is not None):
        out.append(
            Finding(
                "angle-over-60",
                side,
                seg,
                f"{what}: angle {s.angle:g} deg is above 60: the velocity is unreliable.",
            )
        )
    if s.prf_hz is not None and s.f0_mhz is not None and angle < 90:
        # rounded to 0.1 cm/s so that a PSV equal to the stated limit is not flagged
        limit = round(nyquist_velocity(s.prf_hz, s.f0_mhz, angle), 1)
        if s.psv is not None and s.psv > limit:
            out.append(
                Finding(
                    "aliasing",
                    side,
                    seg,
                    f"{what}: PSV {s.psv:g} cm/s is above the aliasing limit {limit:.0f} cm/s "
                    f"(PRF {s.prf_hz:g} Hz, {s.f0_mhz:g} MHz, {angle:g} deg).",
                )
            )
        no_flow = s.occluded or s.flow is Flow.ABSENT or s.waveform is Waveform.ABSENT
        if no_flow and limit > OCCLUSION_SCALE_CM_S:
            out.append(
                Finding(
                    "occlusion-scale",
                    side,
                    seg,
                    f"{what}: no flow recorded with a velocity scale of {limit:.0f} cm/s; "
                    "slow flow may be missed: lower the scale before calling it occluded.",
                )
            )
    no_flow = s.occluded or s.flow is Flow.ABSENT or s.waveform is Waveform.ABSENT
    if no_flow and s.angle is not None and s.angle >= OCCLUSION_ANGLE_DEG:
        out.append(
            Finding(
                "occlusion-angle",
                side,
                seg,
                f"{what}: no flow recorded at {s.angle:g} deg; flow may be undetected near 90: "
                "steer the colour box or angle the probe.",
            )
        )
    return out


def _significant(result: LimbResult, sets: CriteriaSets, seg: str) -> bool:
    return sets.severity(result.segments[seg].band) >= SIGNIFICANT_SEVERITY


def quality_findings(
    study: Study, limbs: dict[Side, LimbResult], sets: CriteriaSets
) -> list[Finding]:
    """Return every measurement-quality warning of the study."""
    out: list[Finding] = []
    for side in (Side.RIGHT, Side.LEFT):
        limb, result = study.limb(side), limbs[side]
        for what, seg, sample in _samples(limb):
            out.extend(_sample_checks(side, what, seg, sample))
        for seg in anatomy.SEGMENT_IDS:
            r = result.segments[seg]
            finding = limb.segments.get(seg)
            if finding is not None and finding.psv is not None and not r.lesions:
                low, high = PSV_RANGE_CM_S[SEGMENTS[seg].level]
                if not low <= finding.psv <= high:
                    out.append(
                        Finding(
                            "psv-out-of-range",
                            side,
                            seg,
                            f"PSV {finding.psv:g} cm/s is outside the plausible range "
                            f"{low:g}-{high:g} cm/s for this artery; check the sample.",
                        )
                    )
            if r.reference is not None and r.reference.diseased:
                out.append(_diseased(side, seg, r.reference.segment))
            if finding is not None and finding.waveform is Waveform.MONOPHASIC:
                out.extend(_monophasic(side, seg, limb, result, sets))
        for les in result.lesions:
            if les.reference is not None and les.reference.diseased:
                out.append(_diseased(side, les.at, les.reference.segment))
            if les.occluded:
                covered = les.spans[-1]
                below = (
                    les.reconstitution.segment
                    if les.reconstitution is not None
                    and les.reconstitution.segment != covered.segment
                    else None
                )
                out.extend(_below_occlusion(side, limb, covered.segment, below))
    return out


def _diseased(side: Side, seg: str, ref: str | None) -> Finding:
    return Finding(
        "diseased-reference",
        side,
        seg,
        f"Vr computed against {ref}, which itself carries disease below 50%: the ratio may "
        "understate the stenosis.",
    )


def _monophasic(
    side: Side, seg: str, limb: Limb, result: LimbResult, sets: CriteriaSets
) -> list[Finding]:
    """Flag a waveform that turns monophasic here with no significant disease upstream."""
    for up in anatomy.ancestors(seg):
        up_finding = limb.segments.get(up)
        if up_finding is not None and up_finding.waveform is Waveform.MONOPHASIC:
            return []  # it turned further up; that segment carries the warning
        if up_finding is not None and up_finding.waveform is not None:
            break
    chain = (seg, *anatomy.ancestors(seg))
    if any(_significant(result, sets, s) for s in chain):
        return []
    return [
        Finding(
            "monophasic-unexplained",
            side,
            seg,
            "monophasic waveform with no lesion or occlusion documented upstream: suspect "
            "disease missed between samples, or inflow disease.",
        )
    ]


def _below_occlusion(side: Side, limb: Limb, last: str, below: str | None) -> list[Finding]:
    """Flag triphasic flow in the first sampled segment below an occlusion."""
    for child in (below,) if below else anatomy.CHILDREN[last]:
        finding = limb.segments.get(child)
        if finding is not None and finding.waveform is Waveform.TRIPHASIC:
            return [
                Finding(
                    "triphasic-below-occlusion",
                    side,
                    child,
                    f"triphasic flow just distal to an occlusion ending in {last}: check the "
                    "occlusion's extent and the sample's site.",
                )
            ]
    return []
