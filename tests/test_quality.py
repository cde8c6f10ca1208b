"""Measurement quality: Doppler physics and every warning code, triggered and absent."""

from __future__ import annotations

from dataclasses import replace

import pytest

from diagram.anatomy import Side
from diagram.assess import assess
from diagram.assess.quality import doppler_velocity, nyquist_velocity
from diagram.reading.study import (
    Exam,
    Flow,
    Lesion,
    Limb,
    LimbPressures,
    Patient,
    Pressures,
    SegmentFinding,
    Study,
    Waveform,
)


# Doppler physics (standard; worked figures in clinical-values.md, own arithmetic):
# v_max = c * PRF / (4 * f0 * cos theta), c = 1540 m/s.
@pytest.mark.parametrize(
    ("prf", "f0", "angle", "vmax"),
    [(10_000, 5.0, 0, 77.0), (10_000, 5.0, 60, 154.0), (10_000, 4.0, 60, 192.5)],
)
def test_nyquist_limits(prf: float, f0: float, angle: float, vmax: float) -> None:
    assert nyquist_velocity(prf, f0, angle) == pytest.approx(vmax, rel=1e-9)


# v = c * shift / (2 * f0 * cos theta): 5 MHz, 60 deg, 2 kHz -> 154000*2000/(2*5e6*0.5) = 61.6
@pytest.mark.parametrize(
    ("shift", "f0", "angle", "v"), [(2000, 5.0, 60, 61.6), (4000, 4.0, 0, 77.0)]
)
def test_doppler_equation(shift: float, f0: float, angle: float, v: float) -> None:
    assert doppler_velocity(shift, f0, angle) == pytest.approx(v, rel=1e-9)


def study(
    right: dict[str, SegmentFinding] | None = None,
    lesions: tuple[Lesion, ...] = (),
    pressures: Pressures | None = None,
) -> Study:
    base = {
        "CIA": SegmentFinding(id="CIA", psv=110, waveform=Waveform.TRIPHASIC),
        "EIA": SegmentFinding(id="EIA", psv=115, waveform=Waveform.TRIPHASIC),
        "CFA": SegmentFinding(id="CFA", psv=110, waveform=Waveform.TRIPHASIC, angle=60),
        "SFA-P": SegmentFinding(id="SFA-P", psv=90, waveform=Waveform.TRIPHASIC),
    }
    base.update(right or {})
    limb = Limb(side=Side.RIGHT, segments=base, lesions=lesions)
    return Study(
        source="q.yaml",
        patient=Patient(),
        exam=Exam(),
        pressures=pressures
        or Pressures(brachial_right=130, brachial_left=128, right=LimbPressures(pt=130, dp=125)),
        limbs={Side.RIGHT: limb},
    )


def codes(s: Study) -> list[str]:
    return [w.code for w in assess(s).warnings]


def test_clean_study_has_no_warnings() -> None:
    assert codes(study()) == []


def f(seg: str, **kw: object) -> dict[str, SegmentFinding]:
    return {seg: SegmentFinding(id=seg, **kw)}  # type: ignore[arg-type]


@pytest.mark.parametrize(
    ("s", "code"),
    [
        # angle: 60 is accepted, above 60 flagged (practice)
        (study(f("CFA", psv=110, angle=61)), "angle-over-60"),
        # PRF 10 kHz, 5 MHz, 60 deg: limit 154 cm/s
        (study(f("SFA-M", psv=155, prf_hz=10_000, f0_mhz=5, angle=60)), "aliasing"),
        (study(f("SFA-M", shift_hz=2000, f0_mhz=5, angle=60)), "psv-from-shift"),
        (study(f("SFA-M", occluded=True, angle=80)), "occlusion-angle"),
        (study(f("SFA-M", flow=Flow.ABSENT, prf_hz=10_000, f0_mhz=5, angle=0)), "occlusion-scale"),
        (study(f("SFA-D", psv=60, waveform=Waveform.MONOPHASIC)), "monophasic-unexplained"),
        (study(f("SFA-M", psv=400)), "psv-out-of-range"),
        # SFA-P Vr 150/110 = 1.36 (<50%) is the reference of SFA-M
        (study({**f("SFA-P", psv=150), **f("SFA-M", psv=160)}), "diseased-reference"),
        (
            study(
                f("POP-AK", psv=40, waveform=Waveform.TRIPHASIC),
                (Lesion(at="SFA-M", occluded=True, reconstitutes="POP-AK"),),
            ),
            "triphasic-below-occlusion",
        ),
        (study(lesions=(Lesion(at="SFA-M", psv=300, band="lt50", length_cm=1),)), "band-disagrees"),
        (study(f("SFA-M", flow=Flow.ABSENT)), "absent-flow-ungraded"),
        (
            study(
                lesions=(Lesion(at="SFA-M", occluded=True, length_cm=5, reconstitutes="POP-AK"),)
            ),
            "reconstitution-mismatch",
        ),
        (
            study(pressures=Pressures(brachial_right=140, brachial_left=124)),
            "arm-difference",
        ),
        (
            study(pressures=Pressures(brachial_right=140, brachial_left=130)),
            "arm-difference-minor",
        ),
        (
            study(pressures=Pressures(brachial_right=120, right=LimbPressures(pt=200))),
            "noncompressible",
        ),
        (
            study(pressures=Pressures(brachial_right=120, right=LimbPressures(pt=45))),
            "clti-pressure",
        ),
    ],
)
def test_each_warning_code_is_triggered(s: Study, code: str) -> None:
    assert code in codes(s)


def test_no_reference_code() -> None:
    s = Study(
        source="q.yaml",
        patient=Patient(),
        exam=Exam(),
        pressures=Pressures(),
        limbs={Side.LEFT: Limb(side=Side.LEFT, lesions=(Lesion(at="CIA", psv=300),))},
    )
    assert codes(s) == ["psv-only"]  # no reference: graded by the PSV-only rule, and said so
    no_psv = replace(s, limbs={Side.LEFT: Limb(side=Side.LEFT, lesions=(Lesion(at="CIA"),))})
    assert codes(no_psv) == []  # nothing to grade it by: not assessed, nothing to warn about


@pytest.mark.parametrize(
    ("finding", "present"),
    [
        (SegmentFinding(id="SFA-M", psv=154, prf_hz=10_000, f0_mhz=5, angle=60), False),
        (SegmentFinding(id="SFA-M", psv=155, prf_hz=10_000, f0_mhz=5, angle=60), True),
    ],
)
def test_aliasing_boundary(finding: SegmentFinding, present: bool) -> None:
    assert ("aliasing" in codes(study({"SFA-M": finding}))) is present


def test_shift_conversion_feeds_grading() -> None:
    # 154000 * 8000 / (2 * 5e6 * cos 60) = 246.4 cm/s, shown and graded in whole cm/s
    a = assess(study(f("SFA-M", shift_hz=8000, f0_mhz=5, angle=60)))
    seg = a.limbs[Side.RIGHT].segments["SFA-M"]
    assert seg.psv == 246 and seg.vr == 2.73 and seg.band == "50-74"  # 246 / 90


def test_monophasic_explained_by_upstream_lesion_is_not_flagged() -> None:
    s = study(
        f("SFA-D", psv=60, waveform=Waveform.MONOPHASIC),
        (Lesion(at="SFA-M", psv=400, length_cm=2),),
    )
    assert "monophasic-unexplained" not in codes(s)
