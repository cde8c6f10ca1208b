"""Planning at its edges: summed occlusions, flushness, in-stent disease, TASC D, unseen levels."""

from __future__ import annotations

import pytest

from diagram.anatomy import SEGMENT_IDS, Side
from diagram.assess import assess
from diagram.assess.planning import TASC_D_READING, PlanLevel, Planning
from diagram.reading.study import (
    Exam,
    Lesion,
    Limb,
    Patient,
    Pressures,
    SegmentFinding,
    Stent,
    Study,
)


def occ(at: str, length: float, frm: float | None = 0.0, **kw: object) -> Lesion:
    return Lesion(at=at, from_cm=frm, length_cm=length, occluded=True, **kw)  # type: ignore[arg-type]


def plan(
    *lesions: Lesion,
    missing: tuple[str, ...] = (),
    stents: tuple[Stent, ...] = (),
) -> Planning:
    """Plan the left leg: every segment sampled normal (PSV 100) unless missing."""
    segments = {s: SegmentFinding(id=s, psv=100.0) for s in SEGMENT_IDS if s not in missing}
    for les in lesions:  # no sample where an occlusion lies
        if les.occluded:
            segments.pop(les.at, None)
    limb = Limb(side=Side.LEFT, segments=segments, lesions=lesions, stents=stents)
    study = Study(
        source="t.yaml",
        patient=Patient(),
        exam=Exam(),
        pressures=Pressures(),
        limbs={Side.LEFT: limb},
    )
    return assess(study).planning[Side.LEFT]


# GVG 2019 figure 5.1 (from memory): non-flush occlusions "totalling" < 10 cm FP2, 10-20 cm FP3,
# > 20 cm FP4 - the lengths of separate SFA occlusions are summed.
@pytest.mark.parametrize(
    ("lesions", "fp"),
    [
        ((occ("SFA-P", 4.95, frm=0.5), occ("SFA-D", 4.95)), 2),  # 9.9 cm in all
        ((occ("SFA-P", 5.0, frm=0.5), occ("SFA-D", 5.0)), 3),  # 10 cm: FP3
        ((occ("SFA-P", 8.0, frm=0.5), occ("SFA-D", 8.0)), 3),  # two 8 cm: FP3, not FP2
        ((occ("SFA-P", 8.0, frm=0.5), occ("SFA-M", 12.0, frm=6)), 3),  # 20 cm
        ((occ("SFA-P", 8.1, frm=0.5), occ("SFA-M", 12.0, frm=6)), 4),  # 20.1 cm: FP4
    ],
)
def test_sfa_occlusions_are_summed(lesions: tuple[Lesion, ...], fp: int) -> None:
    p = plan(*lesions)
    assert p.fp_grade == fp
    assert any("2 SFA occlusions totalling" in d for d in p.fp_drivers)


# Flushness: an occlusion with no from_cm is taken to start at the SFA origin, and says so.
@pytest.mark.parametrize(
    ("frm", "fp", "assumed"),
    [(None, 3, True), (0.0, 3, False), (0.5, 1, False)],
)
def test_flush_assumption_is_listed_beside_the_grade(
    frm: float | None, fp: int, assumed: bool
) -> None:
    p = plan(occ("SFA-P", 4.0, frm=frm))
    assert p.fp_grade == fp  # GVG 2019: flush occlusion FP3; one focal < 5 cm FP1 (from memory)
    assert any("flush assumed" in d for d in p.fp_drivers) is assumed


# In-stent restenosis is not native disease for TASC II / GLASS, and the summary says so.
def test_in_stent_restenosis_is_not_staged_as_native_disease() -> None:
    stent = Stent(from_="SFA-M", to="SFA-D", from_cm=0, length_cm=12)
    les = Lesion(at="SFA-M", from_cm=3, length_cm=2, psv=342, proximal_psv=96)  # Vr 3.56
    p = plan(les, stents=(stent,))
    assert (p.tasc_fp, p.fp_grade) == (None, 0)
    assert any("in-stent restenosis" in a and "not counted" in a for a in p.assumptions)
    assert "a stent is recorded; the grades describe the native arteries" in p.assumptions
    fem = next(lv for lv in p.levels if lv.level is PlanLevel.FEMOROPOPLITEAL)
    assert fem.worst_band == "isr-severe" and fem.lesion_count == 1  # still shown at its level


# TASC II D (Norgren 2007, confirmed): "CTO of CFA or SFA > 20 cm, involving the popliteal" - read
# strictly, and the reading is stated beside the class.
@pytest.mark.parametrize(
    ("length", "recon", "tasc"),
    [
        (27.0, "POP-AK", "C"),  # the whole SFA, stopping at the popliteal: C
        (28.0, None, "D"),  # 1 cm into the popliteal: D
    ],
)
def test_tasc_d_reading_is_stated(length: float, recon: str | None, tasc: str) -> None:
    p = plan(occ("SFA-P", length, reconstitutes=recon))
    assert p.tasc_fp == tasc
    assert any(d.startswith(TASC_D_READING) for d in p.tasc_drivers)


def test_tasc_d_reading_is_not_mentioned_for_a_short_occlusion() -> None:
    p = plan(occ("SFA-M", 19.0, frm=1))
    assert not any(TASC_D_READING in d for d in p.tasc_drivers)


# No "normal" over levels that were not examined; grades built on unseen segments are provisional.
@pytest.mark.parametrize(
    ("missing", "state"),
    [
        ((), "assessed"),
        (("AO", "CIA"), "partly assessed"),
        (("AO", "CIA", "IIA", "EIA", "CFA"), "not assessed"),
    ],
)
def test_level_says_whether_it_was_examined(missing: tuple[str, ...], state: str) -> None:
    inflow = next(lv for lv in plan(missing=missing).levels if lv.level is PlanLevel.INFLOW)
    assert inflow.assessment == state and inflow.segment_count == 5


def test_grades_on_unseen_segments_are_provisional() -> None:
    tibial_thirds = tuple(f"{v}-{t}" for v in ("ATA", "PTA", "PER") for t in "MD")
    p = plan(missing=(*tibial_thirds, "DPA", "PLA"))
    assert (p.ip_grade, p.ip_provisional, p.stage_provisional) == (0, True, False)  # FP0 x IP0
    assert p.runoff_vessels == 0 and len(p.runoff_unassessed) == 3
    q = plan(missing=("SFA-M",))
    assert q.fp_provisional and q.tasc_provisional  # "no lesion" rests on an unseen third
    full = plan()
    assert not (full.fp_provisional or full.ip_provisional or full.stage_provisional)
