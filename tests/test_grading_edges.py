"""Grading at the edges a vascular lab checks: the reference walk, PSV-only, shifts, stents, grafts."""

from __future__ import annotations

import pytest

from diagram.anatomy import Side
from diagram.assess import assess
from diagram.assess.results import Assessment
from diagram.reading.study import (
    Exam,
    Graft,
    Lesion,
    Limb,
    Patient,
    Pressures,
    Sample,
    SegmentFinding,
    Stent,
    Study,
)


def make(limb: Limb) -> Study:
    return Study(
        source="t.yaml",
        patient=Patient(),
        exam=Exam(),
        pressures=Pressures(),
        limbs={limb.side: limb},
    )


def segs(**psv: float) -> dict[str, SegmentFinding]:
    return {
        k.replace("_", "-"): SegmentFinding(id=k.replace("_", "-"), psv=v) for k, v in psv.items()
    }


def codes(a: Assessment) -> list[str]:
    return [w.code for w in a.warnings]


# --- the reference walk stops at an occlusion or a stenosis >= 50% (Jager 1985 method) --------


def test_ratio_is_not_taken_across_an_occlusion_and_the_hand_band_stands() -> None:
    limb = Limb(
        side=Side.LEFT,
        segments=segs(CFA=110, SFA_P=100),
        lesions=(
            Lesion(at="SFA-M", occluded=True, length_cm=12, reconstitutes="SFA-D"),
            Lesion(at="POP-AK", psv=95, band="75-99", length_cm=2),
        ),
    )
    a = assess(make(limb))
    les = a.limbs[Side.LEFT].lesions[1]
    assert (les.band, les.vr, les.reference) == ("75-99", None, None)
    assert les.basis == "as recorded (no valid velocity ratio)"
    blocked = [w for w in a.warnings if w.code == "reference-blocked"]
    assert len(blocked) == 1 and "an occlusion (lesion 1) in SFA-D" in blocked[0].message


def test_across_an_occlusion_with_no_band_the_psv_only_rule_grades_and_says_why() -> None:
    limb = Limb(
        side=Side.LEFT,
        segments=segs(CFA=110, SFA_P=100),
        lesions=(
            Lesion(at="SFA-M", occluded=True, length_cm=12, reconstitutes="SFA-D"),
            Lesion(at="POP-AK", psv=250, length_cm=2),
        ),
    )
    a = assess(make(limb))
    les = a.limbs[Side.LEFT].lesions[1]
    assert (les.band, les.vr) == ("50-74", None)  # PSV 250 >= 200 (Khan 2011)
    (w,) = [w for w in a.warnings if w.code == "psv-only"]
    assert "occlusion (lesion 1) in SFA-D" in w.message


# The blocking lesion just below / on / just above 50%: Vr 1.99 (<50%) still lets the walk
# through, Vr 2.00 and 2.01 (>= 50%, Jager 1985) stop it.
@pytest.mark.parametrize(("upper_psv", "walks"), [(199, True), (200, False), (201, False)])
def test_a_lesion_of_50_percent_or_more_stops_the_walk(upper_psv: float, walks: bool) -> None:
    limb = Limb(
        side=Side.LEFT,
        segments=segs(CFA=100, SFA_P=100),
        lesions=(
            Lesion(at="SFA-M", from_cm=1, psv=upper_psv, length_cm=2),
            Lesion(at="SFA-D", psv=150, length_cm=2),
        ),
    )
    les = assess(make(limb)).limbs[Side.LEFT].lesions[1]
    assert (les.reference is not None) is walks
    assert les.vr == (1.5 if walks else None)


# Tandem lesions: the post-stenotic sample between them is the reference for the lower one,
# whichever segment the upper lesion is in (common practice; the same numbers give one ratio).
@pytest.mark.parametrize(
    ("upper", "vr", "post_stenotic"),
    [
        (Lesion(at="SFA-P", from_cm=2, psv=300, length_cm=2), 2.4, False),  # SFA-M untouched
        (Lesion(at="SFA-M", from_cm=1, psv=300, length_cm=2), 2.4, True),  # same segment
    ],
)
def test_tandem_lesions_use_the_sample_between_them(
    upper: Lesion, vr: float, post_stenotic: bool
) -> None:
    limb = Limb(
        side=Side.LEFT,
        segments=segs(CFA=100, SFA_P=100, SFA_M=50),
        lesions=(upper, Lesion(at="SFA-D", from_cm=2, psv=120, length_cm=2)),
    )
    les = assess(make(limb)).limbs[Side.LEFT].lesions[1]
    assert les.reference is not None and les.reference.segment == "SFA-M"
    assert (les.vr, les.reference.post_stenotic) == (vr, post_stenotic)


def test_a_sample_in_a_segment_its_lesion_runs_to_the_end_of_is_not_post_stenotic() -> None:
    limb = Limb(
        side=Side.LEFT,
        segments=segs(CFA=100, SFA_P=100, SFA_M=50),
        lesions=(
            Lesion(at="SFA-M", from_cm=5, psv=300, length_cm=4),  # ends at the segment's end
            Lesion(at="SFA-D", from_cm=2, psv=120, length_cm=2),
        ),
    )
    les = assess(make(limb)).limbs[Side.LEFT].lesions[1]
    assert les.reference is None and les.band == "lt50"  # PSV 120: PSV-only floor


def test_a_stenosis_above_in_the_same_segment_blocks_the_walk() -> None:
    limb = Limb(
        side=Side.LEFT,
        segments=segs(CFA=100, SFA_P=100),
        lesions=(
            Lesion(at="SFA-D", from_cm=5, psv=150, length_cm=1),  # listed first, lies lower
            Lesion(at="SFA-D", from_cm=1, psv=300, length_cm=1),
        ),
    )
    a = assess(make(limb))
    lower, upper = a.limbs[Side.LEFT].lesions
    assert (upper.vr, upper.band) == (3.0, "50-74")
    assert lower.reference is None and "lies just above it in SFA-D" in a.warnings[0].message


# --- PSV-only rule (Khan 2011 >= 200 for >= 70%, confirmed; Cossman 1989 > 400, from memory) ---


@pytest.mark.parametrize(
    ("psv", "band"),
    [(199, "lt50"), (200, "50-74"), (201, "50-74"), (400, "50-74"), (401, "75-99")],
)
def test_a_lesion_with_nothing_upstream_keeps_its_velocity(psv: float, band: str) -> None:
    limb = Limb(
        side=Side.LEFT,
        segments=segs(SFA_M=90),
        lesions=(Lesion(at="SFA-M", from_cm=3, psv=psv, length_cm=2),),
    )
    a = assess(make(limb))
    assert a.limbs[Side.LEFT].lesions[0].band == band
    assert a.limbs[Side.LEFT].segments["SFA-M"].band == band  # the segment sees it
    assert codes(a) == ["psv-only"]
    fp = a.planning[Side.LEFT].fp_grade
    assert (fp or 0) > 0 if band != "lt50" else fp == 0  # planning sees it


# --- Doppler shifts: whole cm/s, flagged above 60 deg, not graded above 70, capped -------------


# 154000 * shift / (2 * 5e6 * cos angle); 1000 Hz at 5 MHz: 45.0 at 70 deg (own arithmetic)
@pytest.mark.parametrize(
    ("angle", "psv", "graded", "flags"),
    [
        (60, 31.0, True, []),  # 30.8 -> 31
        (61, 32.0, True, ["angle-over-60"]),  # practice: keep the angle <= 60
        (69, 43.0, True, ["angle-over-60"]),  # 42.97
        (70, 45.0, True, ["angle-over-60"]),
        (71, None, False, ["psv-from-shift-steep"]),  # above 70: not used for grading
        (89, None, False, ["psv-from-shift-steep"]),  # the 2865.2 cm/s of the old reading
    ],
)
def test_shift_at_steep_angles(
    angle: float, psv: float | None, graded: bool, flags: list[str]
) -> None:
    sample = SegmentFinding(id="POP-AK", shift_hz=1000, f0_mhz=5, angle=angle)
    limb = Limb(side=Side.LEFT, segments={**segs(CFA=100, SFA_P=90), "POP-AK": sample})
    a = assess(make(limb))
    r = a.limbs[Side.LEFT].segments["POP-AK"]
    assert r.psv == psv
    assert (r.band != "not-assessed") is graded
    assert [c for c in codes(a) if c != "psv-from-shift"] == flags


# The cap: a typed PSV above 800 cm/s is refused by the study file; a computed one is not used.
@pytest.mark.parametrize(("shift", "psv"), [(51_900, 799.0), (51_948, 800.0), (51_949, None)])
def test_computed_psv_is_capped_like_a_typed_one(shift: float, psv: float | None) -> None:
    lesion = Lesion(at="SFA-M", shift_hz=shift, f0_mhz=5, angle=0, length_cm=1)
    limb = Limb(side=Side.LEFT, segments=segs(CFA=100, SFA_P=100), lesions=(lesion,))
    a = assess(make(limb))
    les = a.limbs[Side.LEFT].lesions[0]
    assert les.psv == psv
    if psv is None:
        assert les.band == "not-assessed" and "psv-from-shift-implausible" in codes(a)


# --- stent and graft sets: one rule, discordance flagged ---------------------------------------


def stented(lesion: Lesion) -> Limb:
    return Limb(
        side=Side.RIGHT,
        segments=segs(CFA=110, SFA_P=100),
        stents=(Stent(from_="SFA-M", to="SFA-D", from_cm=4, length_cm=12),),
        lesions=(lesion,),
    )


# Bui 2012 ("or"): PSV 170 with Vr 5.67 is severe, and the pair is flagged for a look.
def test_discordant_in_stent_pair_is_graded_by_the_set_rule_and_flagged() -> None:
    a = assess(make(stented(Lesion(at="SFA-M", from_cm=6, psv=170, vr=5.67, length_cm=1))))
    les = a.limbs[Side.RIGHT].lesions[0]
    assert les.band == "isr-severe"
    assert les.basis.startswith("PSV 170 cm/s, Vr 5.67: PSV > 300 cm/s or Vr > 3 (stent)")
    assert "discordant-velocities" in codes(a)


# Stent edges: the set follows where the lesion starts; the basis says which and why.
@pytest.mark.parametrize(
    ("from_cm", "crit", "why"),
    [
        (3.9, "native", "starts at SFA-M 3.9 cm, outside stent 1"),
        (4.0, "stent", "starts inside stent 1"),
        (4.1, "stent", "starts inside stent 1"),
        (None, "native", "SFA-M (no from_cm: its start taken), outside stent 1"),
    ],
)
def test_stent_edge_lesions_say_which_set_and_why(
    from_cm: float | None, crit: str, why: str
) -> None:
    les = assess(make(stented(Lesion(at="SFA-M", from_cm=from_cm, psv=250, length_cm=2))))
    result = les.limbs[Side.RIGHT].lesions[0]
    assert f"{crit} set" in result.basis and why in result.basis
    assert result.band == ("50-74" if crit == "native" else "isr-moderate")


# --- basis text never contradicts the figure ------------------------------------------------


@pytest.mark.parametrize(
    ("psv", "basis"),
    [
        (120, "Vr 1.20: Vr < 1.3, raised to <50% as a documented lesion (native)"),
        (130, "Vr 1.30: Vr >= 1.3 (native)"),  # Jager 1985
        (245, "Vr 2.45: Vr >= 2 (native)"),
    ],
)
def test_basis_quotes_the_figure_it_rests_on(psv: float, basis: str) -> None:
    limb = Limb(
        side=Side.LEFT,
        segments=segs(CFA=100, SFA_P=100),
        lesions=(Lesion(at="SFA-M", psv=psv, length_cm=2),),
    )
    assert assess(make(limb)).limbs[Side.LEFT].lesions[0].basis == basis


# --- bypass grafts --------------------------------------------------------------------------


def grafted(**samples: Sample) -> Limb:
    return Limb(
        side=Side.LEFT,
        segments=segs(CFA=104),
        grafts=(Graft(conduit="vein", from_="CFA", to="POP-BK", samples=samples),),
    )


# SVS 2018 graft surveillance, after Bandyk 1988: PSV > 300 and Vr > 3.5 with graft flow
# velocity < 45 cm/s is the highest risk; flow on 45 is not low.
@pytest.mark.parametrize(
    ("body", "band"), [(44, "graft-highest"), (45, "graft-high"), (46, "graft-high")]
)
def test_highest_risk_needs_the_lesion_and_low_graft_flow(body: float, band: str) -> None:
    limb = grafted(
        proximal=Sample(psv=70),
        mid=Sample(psv=body),
        distal=Sample(psv=body),
        distal_anastomosis=Sample(psv=420, vr=6),
    )
    a = assess(make(limb))
    g = a.limbs[Side.LEFT].grafts[0]
    assert (g.band, g.flow_velocity) == (band, body)
    assert ("graft-low-flow" in codes(a)) is (body < 45)


def test_a_low_flow_graft_says_so_in_its_basis() -> None:
    limb = grafted(proximal=Sample(psv=40), mid=Sample(psv=35), distal=Sample(psv=30))
    a = assess(make(limb))
    g = a.limbs[Side.LEFT].grafts[0]
    assert g.band == "graft-low" and "graft flow velocity 30 cm/s, below 45" in g.basis
    assert "graft-low-flow" in codes(a)


def test_graft_samples_get_the_native_quality_checks_and_their_shift_is_used() -> None:
    limb = grafted(
        proximal=Sample(psv=80, angle=65),
        mid=Sample(shift_hz=2000, f0_mhz=5, angle=60),  # 61.6 -> 62 cm/s
        distal=Sample(psv=160, prf_hz=10_000, f0_mhz=5, angle=60),  # above 154 cm/s: aliasing
        distal_anastomosis=Sample(occluded=True, angle=85),
    )
    a = assess(make(limb))
    g = a.limbs[Side.LEFT].grafts[0]
    assert [s.psv for s in g.sites][:3] == [80, 62, 160]
    assert g.flow_velocity == 62
    assert {"angle-over-60", "psv-from-shift", "aliasing", "occlusion-angle"} <= set(codes(a))


def test_graft_walk_stops_at_a_significant_site() -> None:
    limb = grafted(
        proximal_anastomosis=Sample(psv=104),
        proximal=Sample(psv=320),  # Vr 3.08 vs the CFA: moderate by PSV 320 > 300 -> high
        mid=Sample(psv=60),  # just below a high-risk site: no valid ratio, PSV-only
        distal=Sample(psv=120),  # the mid sample is the post-stenotic reference: Vr 2.0
    )
    g = assess(make(limb)).limbs[Side.LEFT].grafts[0]
    bands = {s.site: (s.band, s.vr) for s in g.sites}
    assert bands["proximal"] == ("graft-high", 3.08)
    assert bands["mid"] == ("graft-low", None)
    assert bands["distal"] == ("graft-moderate", 2.0)
