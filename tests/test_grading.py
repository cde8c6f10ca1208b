"""Grading: bands from velocity ratios, the upstream walk, lesion extents."""

from __future__ import annotations

import pytest

from diagram.anatomy import Side
from diagram.assess import assess
from diagram.assess.grading import lesion_spans, round_vr
from diagram.criteria import load_criteria
from diagram.reading.study import Exam, Lesion, Limb, Patient, Pressures, SegmentFinding, Study


def make_study(right: Limb | None = None, left: Limb | None = None) -> Study:
    limbs = {s: lb for s, lb in ((Side.RIGHT, right), (Side.LEFT, left)) if lb is not None}
    return Study(
        source="t.yaml", patient=Patient(), exam=Exam(), pressures=Pressures(), limbs=limbs
    )


def seg(id_: str, **kw: object) -> tuple[str, SegmentFinding]:
    return id_, SegmentFinding(id=id_, **kw)  # type: ignore[arg-type]


def one_lesion(psv: float, ref: float = 100.0, **kw: object) -> Study:
    limb = Limb(
        side=Side.LEFT,
        segments=dict([seg("CFA", psv=ref), seg("SFA-P", psv=ref)]),
        lesions=(Lesion(at="SFA-M", psv=psv, length_cm=2, **kw),),  # type: ignore[arg-type]
    )
    return make_study(left=limb)


# Native criteria: Jager KA et al., Ultrasound Med Biol 1985;11:515 (Vr 1.3 / 2.0) and Polak,
# Peripheral Vascular Sonography 2004 (Vr 4.0) - clinical-values.md, confirmed (secondary).
# Boundaries belong to the higher band.
@pytest.mark.parametrize(
    ("lesion_psv", "band"),
    [
        (100, "lt50"),  # Vr 1.00: a documented lesion is never "normal"
        (129, "lt50"),  # Vr 1.29
        (130, "lt50"),  # Vr 1.30
        (199, "lt50"),  # Vr 1.99 just below 2.0  (Jager 1985)
        (200, "50-74"),  # Vr 2.00 on the boundary (Jager 1985)
        (201, "50-74"),  # Vr 2.01
        (399, "50-74"),  # Vr 3.99 just below 4.0 (Polak 2004)
        (400, "75-99"),  # Vr 4.00 on the boundary (Polak 2004)
        (401, "75-99"),  # Vr 4.01
    ],
)
def test_lesion_band_boundaries(lesion_psv: float, band: str) -> None:
    a = assess(one_lesion(lesion_psv))
    les = a.limbs[Side.LEFT].lesions[0]
    assert les.band == band
    assert les.vr == pytest.approx(lesion_psv / 100)
    assert les.reference is not None and les.reference.segment == "SFA-P"
    assert a.limbs[Side.LEFT].segments["SFA-M"].band == band


# Segment samples without a lesion: normal below Vr 1.3, lt50 from 1.3 (Jager 1985).
@pytest.mark.parametrize(
    ("psv", "band"), [(129, "normal"), (130, "lt50"), (199, "lt50"), (200, "50-74")]
)
def test_segment_sample_band_boundaries(psv: float, band: str) -> None:
    limb = Limb(side=Side.RIGHT, segments=dict([seg("CFA", psv=100), seg("SFA-P", psv=psv)]))
    r = assess(make_study(right=limb)).limbs[Side.RIGHT].segments["SFA-P"]
    assert r.band == band


def test_ratio_is_rounded_before_grading() -> None:
    # 117/90 = 1.2999999999999998 in binary floating point; printed and graded as 1.30
    assert round_vr(117 / 90) == 1.3
    limb = Limb(side=Side.RIGHT, segments=dict([seg("CFA", psv=90), seg("SFA-P", psv=117)]))
    r = assess(make_study(right=limb)).limbs[Side.RIGHT].segments["SFA-P"]
    assert (r.vr, r.band) == (1.3, "lt50")


def test_upstream_walk_skips_missing_samples_and_stops_at_a_stenosis() -> None:
    # Jager 1985 method: the reference is the normal segment just above the lesion; a sample
    # across a stenosis >= 50% is no valid reference (common practice).
    limb = Limb(
        side=Side.LEFT,
        segments=dict([seg("CFA", psv=100), seg("SFA-P", psv=250)]),  # SFA-P Vr 2.5: stenotic
        lesions=(Lesion(at="SFA-D", psv=300, length_cm=2),),
    )
    a = assess(make_study(left=limb))
    les = a.limbs[Side.LEFT].lesions[0]
    assert a.limbs[Side.LEFT].segments["SFA-P"].band == "50-74"
    assert les.reference is None and les.vr is None
    # PSV-only rule: 300 >= 200 cm/s (Khan 2011)
    assert les.band == "50-74" and "PSV only" in les.basis
    assert [w.code for w in a.warnings] == ["psv-only"]
    skip = Limb(
        side=Side.LEFT,
        segments=dict([seg("CFA", psv=100)]),  # SFA-P, SFA-M not sampled: walked past
        lesions=(Lesion(at="SFA-D", psv=300, length_cm=2),),
    )
    les = assess(make_study(left=skip)).limbs[Side.LEFT].lesions[0]
    assert les.reference is not None and (les.reference.segment, les.vr) == ("CFA", 3.0)


def test_proximal_psv_given_wins_over_the_walk() -> None:
    a = assess(one_lesion(300, proximal_psv=60))
    les = a.limbs[Side.LEFT].lesions[0]
    assert les.vr == 5.0 and les.band == "75-99"
    assert les.reference is not None and les.reference.source == "proximal_psv"


def test_measured_vr_is_used_as_given() -> None:
    les = assess(one_lesion(300, vr=2.2)).limbs[Side.LEFT].lesions[0]
    assert (les.vr, les.vr_source, les.band) == (2.2, "measured", "50-74")


def test_no_reference_and_no_psv_only_rule_warns_and_leaves_vr_null() -> None:
    lab = load_criteria("native")
    from dataclasses import replace

    no_rule = replace(lab, psv_only=())
    limb = Limb(side=Side.LEFT, lesions=(Lesion(at="SFA-M", psv=300, length_cm=2),))
    a = assess(make_study(left=limb), criteria=no_rule)
    les = a.limbs[Side.LEFT].lesions[0]
    assert les.vr is None and les.band == "not-assessed"
    assert [w.code for w in a.warnings] == ["no-reference"]


def test_no_reference_with_band_given_uses_the_band_as_recorded() -> None:
    limb = Limb(side=Side.LEFT, lesions=(Lesion(at="SFA-M", psv=300, length_cm=2, band="75-99"),))
    a = assess(make_study(left=limb))
    les = a.limbs[Side.LEFT].lesions[0]
    assert (les.vr, les.band) == (None, "75-99")
    assert les.basis == "as recorded (no valid velocity ratio)"
    assert a.warnings == ()  # nothing above it was sampled: nothing to explain


def test_band_given_that_disagrees_is_flagged_and_velocities_win() -> None:
    a = assess(one_lesion(450, band="50-74"))
    assert a.limbs[Side.LEFT].lesions[0].band == "75-99"
    assert [w.code for w in a.warnings] == ["band-disagrees"]


def test_unknown_band_id_is_a_study_error() -> None:
    from diagram.errors import StudyError

    limb = Limb(side=Side.LEFT, lesions=(Lesion(at="SFA-M", band="severe", line=7),))
    with pytest.raises(StudyError) as err:
        assess(make_study(left=limb))
    assert "t.yaml:7: limbs.left.lesions[0].band: 'severe' is not a band" in str(err.value)


def test_empty_segment_is_not_assessed_never_normal() -> None:
    a = assess(make_study())
    assert {r.band for r in a.limbs[Side.RIGHT].segments.values()} == {"not-assessed"}


def test_occlusion_runs_on_and_marks_every_segment_it_covers() -> None:
    limb = Limb(
        side=Side.RIGHT,
        segments=dict([seg("CFA", psv=100)]),
        lesions=(
            Lesion(at="SFA-P", from_cm=6, occluded=True, length_cm=21, reconstitutes="POP-AK"),
        ),
    )
    a = assess(make_study(right=limb))
    segs = a.limbs[Side.RIGHT].segments
    assert [segs[s].band for s in ("SFA-P", "SFA-M", "SFA-D", "POP-AK")] == [
        "occluded",
        "occluded",
        "occluded",
        "not-assessed",
    ]
    les = a.limbs[Side.RIGHT].lesions[0]
    assert les.reconstitution is not None
    assert (les.reconstitution.segment, les.reconstitution.start_cm) == ("POP-AK", 0.0)
    assert a.warnings == ()


def test_worst_lesion_sets_the_segment_band() -> None:
    limb = Limb(
        side=Side.LEFT,
        segments=dict([seg("CFA", psv=100), seg("SFA-P", psv=100)]),
        lesions=(
            Lesion(at="SFA-M", psv=150, length_cm=1),
            Lesion(at="SFA-M", from_cm=5, psv=420, length_cm=1),
        ),
    )
    r = assess(make_study(left=limb)).limbs[Side.LEFT].segments["SFA-M"]
    assert r.band == "75-99" and r.lesions == (0, 1)


# Extents along the tree (nominal lengths from memory: SFA thirds 9 cm, POP-AK 9 cm).
@pytest.mark.parametrize(
    ("lesion", "expected"),
    [
        (Lesion(at="SFA-M", from_cm=3, length_cm=4), [("SFA-M", 3.0, 7.0)]),
        (Lesion(at="SFA-M", from_cm=7, length_cm=4), [("SFA-M", 7.0, 9.0), ("SFA-D", 0.0, 2.0)]),
        (Lesion(at="SFA-M", psv=200), [("SFA-M", 0.0, 1.0)]),  # no length: focal 1 cm
        (
            Lesion(at="POP-BK", occluded=True, reconstitutes="PER-P"),
            [("POP-BK", 0.0, 7.0), ("TPT", 0.0, 3.0)],
        ),  # follows the tree into the branch
        (Lesion(at="SFA-D", occluded=True), [("SFA-D", 0.0, 9.0)]),
    ],
)
def test_lesion_spans(lesion: Lesion, expected: list[tuple[str, float, float]]) -> None:
    spans, _ = lesion_spans(lesion)
    assert [(s.segment, s.start_cm, s.end_cm) for s in spans] == expected
    for s in spans:
        assert 0.0 <= s.start_frac <= s.end_frac <= 1.0


def test_aorta_given_under_one_limb_serves_both() -> None:
    right = Limb(side=Side.RIGHT, segments=dict([seg("AO", psv=100)]))
    left = Limb(side=Side.LEFT, segments=dict([seg("CIA", psv=250)]))
    a = assess(make_study(right=right, left=left))
    assert a.limbs[Side.LEFT].segments["CIA"].vr == 2.5
    assert a.limbs[Side.LEFT].segments["AO"].band == a.limbs[Side.RIGHT].segments["AO"].band


def test_shipped_native_set_matches_the_reference_thresholds() -> None:
    c = load_criteria("native")
    # Jager 1985 / Polak 2004 (clinical-values.md, confirmed secondary)
    assert [(b.id, b.vr_min) for b in c.bands if not b.occlusion] == [
        ("normal", None),
        ("lt50", 1.3),
        ("50-74", 2.0),
        ("75-99", 4.0),
    ]
    assert c.band_ids[-1] == "not-assessed"


@pytest.mark.parametrize(
    ("segments", "lesion", "base"),
    [
        # own sample: the lumen outside the lesion keeps the sample's band
        ({"SFA-D": 90}, Lesion(at="SFA-D", from_cm=7, occluded=True, length_cm=2), "normal"),
        # no sample and the lesion covers part of the segment: the rest is not assessed
        ({}, Lesion(at="SFA-D", from_cm=7, occluded=True, length_cm=2), "not-assessed"),
        # no sample and the lesion covers all of it: the lesion's band
        ({}, Lesion(at="SFA-D", occluded=True), "occluded"),
    ],
)
def test_base_band_outside_the_lesions(
    segments: dict[str, float], lesion: Lesion, base: str
) -> None:
    limb = Limb(
        side=Side.LEFT,
        segments=dict([seg("CFA", psv=100), *(seg(s, psv=v) for s, v in segments.items())]),
        lesions=(lesion,),
    )
    r = assess(make_study(left=limb)).limbs[Side.LEFT].segments["SFA-D"]
    assert r.band == "occluded" and r.base_band == base
