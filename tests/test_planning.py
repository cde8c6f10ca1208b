"""Planning summary: level totals, occlusions, runoff, GLASS grades and stage, TASC II."""

from __future__ import annotations

import pytest

from diagram.anatomy import SEGMENT_IDS, SEGMENTS, Side
from diagram.assess import assess, study_sets
from diagram.assess.planning import (
    STAGE_TABLE,
    PlanLevel,
    Planning,
    plan_limb,
    planning_note,
    stage_of,
)
from diagram.reading.study import (
    Exam,
    Graft,
    Lesion,
    Limb,
    Patient,
    Plaque,
    Pressures,
    SegmentFinding,
    Study,
)


def sten(at: str, length: float, frm: float = 0.0, band: str = "50-74", **kw: object) -> Lesion:
    """A stenosis graded by hand (no velocities), from ``frm`` cm in ``at``."""
    return Lesion(at=at, from_cm=frm, length_cm=length, band=band, **kw)  # type: ignore[arg-type]


def occ(at: str, length: float, frm: float = 0.0, **kw: object) -> Lesion:
    return Lesion(at=at, from_cm=frm, length_cm=length, occluded=True, **kw)  # type: ignore[arg-type]


def plan(
    *lesions: Lesion,
    target: str | None = None,
    missing: tuple[str, ...] = (),
    samples: dict[str, SegmentFinding] | None = None,
    grafts: tuple[Graft, ...] = (),
) -> Planning:
    """Plan the left leg: every segment sampled normal (PSV 100) unless missing or replaced."""
    segments = {s: SegmentFinding(id=s, psv=100.0) for s in SEGMENT_IDS if s not in missing}
    segments.update(samples or {})
    limb = Limb(side=Side.LEFT, segments=segments, lesions=lesions, grafts=grafts)
    study = Study(
        source="t.yaml",
        patient=Patient(),
        exam=Exam(),
        pressures=Pressures(),
        limbs={Side.LEFT: limb},
    )
    a = assess(study)
    return plan_limb(a.study, a.limbs[Side.LEFT], study_sets(a.study), target=target)


# Nominal lengths the fractions rest on (anatomy.py, from memory).
def test_nominal_lengths_used_by_the_fractions() -> None:
    assert sum(SEGMENTS[s].length_cm for s in ("SFA-P", "SFA-M", "SFA-D")) == 27.0
    assert [sum(SEGMENTS[f"{v}-{t}"].length_cm for t in "PMD") for v in ("ATA", "PTA", "PER")] == [
        33.0,
        30.0,
        22.5,
    ]
    assert SEGMENTS["TPT"].length_cm == 3.0


# GLASS limb stage, Global Vascular Guidelines 2019 figure 5.3 - from memory (recalled in
# clinical-values.md). Rows FP, columns IP; None is "not applicable" (FP0 with IP0).
_STAGES = {
    4: ("III", "III", "III", "III", "III"),
    3: ("II", "II", "II", "III", "III"),
    2: ("I", "II", "II", "II", "III"),
    1: ("I", "I", "II", "II", "III"),
    0: (None, "I", "I", "II", "III"),
}


@pytest.mark.parametrize(
    ("fp", "ip", "stage"),
    [(fp, ip, row[ip]) for fp, row in sorted(_STAGES.items()) for ip in range(5)],
)
def test_stage_table(fp: int, ip: int, stage: str | None) -> None:
    assert stage_of(fp, ip) == stage  # GVG 2019 figure 5.3, from memory
    assert STAGE_TABLE[fp][ip] == stage


# GLASS femoropopliteal grade, GVG 2019 figure 5.1 - from memory (recalled). The guideline
# gives 1/3 of the SFA as about 10 cm and 2/3 as about 20 cm.
@pytest.mark.parametrize(
    ("lesions", "fp"),
    [
        ((), 0),
        ((sten("SFA-M", 9.9),), 1),  # SFA disease < 10 cm
        ((sten("SFA-M", 10.0),), 2),  # 10-20 cm
        ((sten("SFA-M", 10.1),), 2),
        ((sten("SFA-P", 20.0, frm=3),), 2),
        ((sten("SFA-P", 20.1, frm=3),), 3),  # > 20 cm
        ((occ("SFA-M", 4.9, frm=1),), 1),  # one focal occlusion < 5 cm, not flush
        ((occ("SFA-M", 5.1, frm=1),), 2),  # occlusion < 10 cm
        ((occ("SFA-M", 4.0, frm=1), occ("SFA-D", 2.0, frm=3)), 2),  # two focal occlusions
        ((occ("SFA-M", 9.9),), 2),
        ((occ("SFA-M", 10.1),), 3),  # non-flush occlusion 10-20 cm
        ((occ("SFA-P", 4.0),), 3),  # flush occlusion < 20 cm
        ((occ("SFA-P", 20.0),), 3),
        ((occ("SFA-P", 20.1),), 4),  # SFA occlusion > 20 cm
        ((occ("SFA-P", 20.1, frm=3),), 4),
        ((sten("POP-AK", 1.9, frm=2),), 2),  # focal popliteal stenosis < 2 cm
        ((sten("POP-AK", 2.1, frm=2),), 3),  # popliteal stenosis 2-5 cm
        ((sten("POP-AK", 5.0, frm=2),), 3),
        ((sten("POP-AK", 5.1, frm=2),), 4),  # popliteal disease > 5 cm
        ((sten("POP-BK", 1.0, frm=6),), 4),  # reaches the trifurcation
        ((occ("POP-AK", 1.0, frm=4),), 4),  # any popliteal occlusion
    ],
)
def test_fp_grade(lesions: tuple[Lesion, ...], fp: int) -> None:
    p = plan(*lesions)
    assert p.fp_grade == fp, p.fp_drivers
    assert p.fp_drivers


def test_fp_drivers_name_the_lesion_and_length() -> None:
    calcified = plan(sten("SFA-M", 4.0, plaque=Plaque.CALCIFIED))
    assert calcified.fp_drivers == (
        "SFA disease over 4 cm: lesion 1 (50-74, SFA-M at 0 cm, 4 cm)",
        "FP1 -> 2, severe calcification: lesion 1 (50-74, SFA-M at 0 cm, 4 cm)",
    )
    p = plan(occ("SFA-P", 4.0))
    assert p.fp_drivers == (
        "flush SFA occlusion of 4 cm: lesion 1 (occluded, SFA-P at 0 cm, 4 cm)",
    )


# GLASS infrapopliteal grade, GVG 2019 figure 5.2 - from memory (recalled). Anterior tibial as
# the target: nominal 33 cm, so 1/3 is 11 cm and 2/3 is 22 cm.
@pytest.mark.parametrize(
    ("lesions", "ip"),
    [
        ((), 0),
        ((sten("ATA-M", 2.9, frm=1),), 1),  # focal stenosis < 3 cm
        ((sten("ATA-M", 3.0, frm=1),), 2),
        ((sten("ATA-M", 3.1, frm=1),), 2),  # stenosis up to 1/3 of the vessel
        ((sten("ATA-P", 11.0, frm=0),), 2),
        ((sten("ATA-P", 11.1, frm=0),), 3),  # disease up to 2/3
        ((sten("ATA-P", 22.0, frm=5),), 3),
        ((sten("ATA-P", 22.1, frm=5),), 4),  # disease > 2/3
        ((occ("ATA-M", 2.9, frm=1),), 2),  # one focal occlusion < 3 cm, not at the origin
        ((occ("ATA-M", 3.1, frm=1),), 3),  # occlusion up to 1/3
        ((occ("ATA-P", 2.0),), 3),  # at the origin: not IP2
        ((occ("ATA-M", 2.0, frm=1), occ("ATA-D", 2.0, frm=1)), 3),  # two occlusions
        ((occ("ATA-P", 11.0, frm=0.5),), 3),
        ((occ("ATA-P", 11.1, frm=0.5),), 4),  # occlusion > 1/3
        ((occ("TPT", 2.0),), 0),  # the TPT is not on the anterior tibial path
    ],
)
def test_ip_grade_anterior_tibial(lesions: tuple[Lesion, ...], ip: int) -> None:
    p = plan(*lesions, target="ATA")
    assert (p.target, p.ip_grade) == ("ATA", ip), p.ip_drivers


def test_tpt_occlusion_is_ip4_when_the_anterior_tibial_is_not_the_target() -> None:
    # GVG 2019 figure 5.2, from memory: any TPT occlusion when the AT is not the target.
    p = plan(occ("TPT", 2.0), target="PTA")
    assert p.ip_grade == 4
    assert p.ip_drivers[0].startswith("TPT occlusion, PTA the target")
    assert plan(occ("TPT", 2.0)).target == "ATA"  # automatic choice avoids it


# Severe calcification raises the segment's grade by one (GVG 2019, confirmed); the study
# file's "calcified" is taken as severe (an assumption stated in the results).
@pytest.mark.parametrize(
    ("lesion", "fp", "ip"),
    [
        (sten("SFA-M", 4.0, plaque=Plaque.CALCIFIED), 2, 0),  # FP1 -> FP2
        (sten("SFA-M", 4.0, plaque=Plaque.MIXED), 1, 0),
        (occ("SFA-P", 20.1, plaque=Plaque.CALCIFIED), 4, 0),  # capped at 4
        (sten("SFA-M", 4.0, band="lt50", plaque=Plaque.CALCIFIED), 0, 0),  # < 50%: not counted
        (sten("ATA-M", 2.0, plaque=Plaque.CALCIFIED), 0, 2),  # IP1 -> IP2
    ],
)
def test_calcification_modifier(lesion: Lesion, fp: int, ip: int) -> None:
    p = plan(lesion, target="ATA")
    assert (p.fp_grade, p.ip_grade) == (fp, ip)
    calcified = lesion.plaque is Plaque.CALCIFIED and lesion.band != "lt50"
    assert any("severe calcification" in a for a in p.assumptions) is calcified


def test_stage_from_the_grades() -> None:
    p = plan(sten("SFA-M", 10.1), sten("PTA-M", 2.0), target="PTA")  # FP2, IP1
    assert (p.fp_grade, p.ip_grade, p.stage) == (2, 1, "II")
    assert p.stage_basis.startswith("FP2 x IP1 -> II")
    none = plan()
    assert (none.fp_grade, none.ip_grade, none.stage) == (0, 0, None)
    assert "n/a" in none.stage_basis


# Runoff vessel scale and score: Rutherford RB et al., J Vasc Surg 1997;26:517 (confirmed):
# 0 normal, 1 for <50% (our band spans 1-49%: scored 1), 2 for 50-99%, 2.5 occluded <= half its
# length, 3 more than half; score = 1 + the sum over the three tibial arteries (each weighted
# once: from memory; the 1997 weighting table itself was not read). Corroboration: Baer-Bositis HE,
# ..., Davies MG, "Outcomes of tibial endovascular intervention in patients with poor pedal
# runoff", score the three pedal arteries on the same scale, "(dorsalis pedis + medial plantar +
# lateral plantar + 1)", range "(1-10)": three vessels of weight 1, the maximum exactly 10.
# Path lengths: ATA 33, PTA 3 + 30, PER 3 + 22.5 cm.
@pytest.mark.parametrize(
    ("lesions", "count", "score"),
    [
        ((), 3, 1.0),
        ((occ("ATA-P", 33.0),), 2, 4.0),  # one tibial occluded over its whole length
        ((occ("ATA-P", 16.5),), 2, 3.5),  # exactly half: 2.5
        ((occ("ATA-P", 16.6),), 2, 4.0),  # more than half: 3
        ((sten("PTA-M", 2.0),), 3, 3.0),  # 50-99%: 2
        ((sten("PER-M", 2.0, band="lt50"),), 3, 2.0),  # <50%: 1
        ((occ("ATA-P", 33.0), occ("PTA-P", 30.0)), 1, 1 + 3 + 3 + 0.0),
        ((occ("ATA-P", 33.0), occ("TPT", 3.0)), 0, 1 + 3 + 2.5 + 2.5),  # TPT cuts PTA and PER
        # every tibial occluded over its whole length: the published maximum, 10
        ((occ("ATA-P", 33.0), occ("PTA-P", 30.0), occ("PER-P", 22.5)), 0, 10.0),
    ],
)
def test_runoff_count_and_score(lesions: tuple[Lesion, ...], count: int, score: float) -> None:
    p = plan(*lesions)
    assert p.runoff_vessels == count
    assert p.runoff_score == score
    assert p.runoff_unassessed == ()


def test_unassessed_tibial_is_never_counted_patent() -> None:
    p = plan(missing=("PER-M",))
    assert (p.runoff_vessels, p.runoff_unassessed, p.runoff_score) == (2, ("PER",), None)
    assert p.runoff_basis == "not scored: PER not fully assessed"
    per = next(r for r in p.runoff if r.vessel == "PER")
    assert (per.state, per.scale, per.basis) == ("not-assessed", None, "not assessed: PER-M")
    # TPT unseen: neither PTA nor PER can be called patent to the ankle
    assert plan(missing=("TPT",)).runoff_unassessed == ("PTA", "PER")


# TASC II femoropopliteal, Norgren L et al., J Vasc Surg 2007;45:S5 (confirmed rules).
@pytest.mark.parametrize(
    ("lesions", "tasc"),
    [
        ((), None),
        ((sten("SFA-M", 10.0),), "A"),  # single stenosis <= 10 cm
        ((sten("SFA-M", 10.1),), "B"),  # single lesion <= 15 cm
        ((occ("SFA-M", 5.0, frm=1),), "A"),  # single occlusion <= 5 cm
        ((occ("SFA-M", 5.1, frm=1),), "B"),
        ((occ("SFA-M", 4.0, frm=1, plaque=Plaque.CALCIFIED),), "B"),  # heavily calcified
        ((sten("SFA-M", 5.0), sten("SFA-D", 5.0)), "B"),  # multiple, each <= 5 cm
        ((sten("SFA-P", 5.0), sten("SFA-M", 5.0), sten("SFA-D", 5.0)), "B"),  # 15 cm in all
        ((sten("SFA-P", 5.0), sten("SFA-M", 5.0), sten("SFA-D", 5.1)), "C"),  # > 15 cm in all
        ((sten("SFA-M", 15.0),), "B"),
        ((sten("SFA-M", 15.1),), "C"),  # a single lesion over 15 cm is in no A/B/D rule
        ((sten("POP-AK", 2.0, frm=2),), "B"),  # single popliteal stenosis
        ((occ("SFA-M", 21.0),), "D"),  # SFA occlusion > 20 cm into the popliteal
        ((occ("CFA", 2.0),), "D"),  # CFA occlusion
        ((occ("POP-BK", 8.0, frm=2),), "D"),  # popliteal and trifurcation (TPT) occluded
    ],
)
def test_tasc_femoropopliteal(lesions: tuple[Lesion, ...], tasc: str | None) -> None:
    p = plan(*lesions)
    assert p.tasc_fp == tasc, p.tasc_drivers
    assert p.tasc_drivers


def test_target_is_the_least_diseased_tibial() -> None:
    p = plan(sten("ATA-M", 4.0), sten("PTA-M", 2.0))  # ATA IP2, PTA IP1, PER IP0
    assert (p.target, p.ip_grade) == ("PER", 0)
    assert [(g.vessel, g.grade) for g in p.ip_by_vessel] == [("ATA", 2), ("PTA", 1), ("PER", 0)]


def test_target_ties_prefer_in_line_flow_to_the_foot() -> None:
    # All IP0: the anterior tibial wins while the dorsalis pedis is patent ...
    assert plan().target == "ATA"
    # ... the posterior tibial when the dorsalis pedis is occluded (the peroneal ends above the
    # ankle and comes last).
    p = plan(occ("DPA", 6.0))
    assert p.target == "PTA"
    assert "in-line flow to the foot" in p.target_basis


def test_target_given_overrides_the_choice() -> None:
    p = plan(sten("ATA-M", 4.0), target="ATA")
    assert (p.target, p.target_basis, p.ip_grade) == ("ATA", "given", 2)
    with pytest.raises(ValueError, match="must be one of ATA, PTA, PER"):
        plan(target="DPA")


def test_level_totals_for_a_multilevel_case() -> None:
    p = plan(
        sten("CIA", 2.0, frm=1),
        occ("SFA-M", 6.0, frm=1),
        sten("SFA-D", 3.0, frm=2, band="75-99"),
        sten("SFA-D", 3.0, frm=4),  # overlaps the one above by 1 cm: counted once
        sten("POP-AK", 2.0, band="lt50"),  # < 50%: not disease for planning
        occ("PTA-M", 4.0, frm=2, reconstitutes="PTA-M"),
    )
    levels = {lv.level: lv for lv in p.levels}
    assert [lv.level for lv in p.levels] == list(PlanLevel)
    got = {
        k: (v.worst_band, v.diseased_cm, v.occluded_cm, v.lesion_count) for k, v in levels.items()
    }
    assert got == {
        PlanLevel.INFLOW: ("50-74", 2.0, 0.0, 1),
        PlanLevel.FEMOROPOPLITEAL: ("occluded", 11.0, 6.0, 3),
        PlanLevel.INFRAPOPLITEAL: ("occluded", 4.0, 4.0, 1),
        PlanLevel.PEDAL: ("normal", 0.0, 0.0, 0),
    }
    assert [(o.segment, o.start_cm, o.length_cm, o.reconstitutes) for o in p.occlusions] == [
        ("SFA-M", 1.0, 6.0, "SFA-M"),
        ("PTA-M", 2.0, 4.0, "PTA-M"),
    ]
    assert (p.inflow_band, p.inflow_significant) == ("50-74", True)
    assert p.fp_grade == 2  # SFA disease 11 cm (10-20) and a non-flush occlusion of 6 cm
    assert p.runoff_vessels == 2


def test_segment_graded_from_its_own_sample_is_measured_by_assumption() -> None:
    p = plan(samples={"SFA-M": SegmentFinding(id="SFA-M", occluded=True)})
    fp = {lv.level: lv for lv in p.levels}[PlanLevel.FEMOROPOPLITEAL]
    assert (fp.diseased_cm, fp.occluded_cm) == (9.0, 9.0)
    assert p.fp_grade == 2  # non-flush occlusion of 9 cm
    assert any(a.startswith("SFA-M: occluded from its sample") for a in p.assumptions)


def test_unassessed_levels_are_reported_not_graded() -> None:
    p = plan(missing=SEGMENT_IDS)
    assert (p.fp_grade, p.ip_grade, p.stage, p.target) == (None, None, None, None)
    assert p.inflow_significant is None
    assert p.stage_basis == "not staged: FP grade not available"
    assert p.runoff_unassessed == ("ATA", "PTA", "PER") and p.runoff_vessels == 0


def test_graft_and_missing_length_are_stated() -> None:
    graft = Graft(conduit="vein", from_="CFA", to="POP-BK")
    p = plan(Lesion(at="SFA-M", band="50-74"), grafts=(graft,))
    assert "lesion 1 (SFA-M): length not recorded; counted as 1 cm" in p.assumptions
    assert "a bypass graft is recorded; the grades describe the native arteries" in p.assumptions


def test_planning_note_asks_for_confirmation_on_imaging() -> None:
    note = planning_note()
    assert "duplex" in note and "confirm" in note and "imaging" in note


def test_aortic_lesion_is_counted_under_the_leg_that_lists_it() -> None:
    # The unpaired aorta is graded once and shown in both legs; its lesion's length counts once.
    segments = {s: SegmentFinding(id=s, psv=100.0) for s in SEGMENT_IDS}
    right = Limb(side=Side.RIGHT, segments=segments, lesions=(occ("AO", 3.0),))
    left = Limb(side=Side.LEFT, segments={k: v for k, v in segments.items() if k != "AO"})
    limbs = {Side.RIGHT: right, Side.LEFT: left}
    s = Study(source="t.yaml", patient=Patient(), exam=Exam(), pressures=Pressures(), limbs=limbs)
    a = assess(s)
    sets = study_sets(a.study)
    r, lt = (plan_limb(a.study, a.limbs[side], sets) for side in (Side.RIGHT, Side.LEFT))
    assert (r.levels[0].worst_band, r.levels[0].occluded_cm) == ("occluded", 3.0)
    assert (lt.levels[0].worst_band, lt.levels[0].occluded_cm) == ("occluded", 0.0)
    assert "AO: occluded from a lesion listed under the other leg" in lt.assumptions
    assert r.inflow_significant is True and lt.inflow_significant is True
