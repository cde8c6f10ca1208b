"""Change since the prior exam: bands, PSV, lesions, devices, ABI; refusing a wrong prior."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import pytest

from diagram.anatomy import Side
from diagram.assess import assess
from diagram.assess.compare import (
    Change,
    Comparison,
    changed_segments,
    check_prior,
    classify,
    compare,
    psv_change_pct,
)
from diagram.reading.study import (
    Exam,
    Lesion,
    Limb,
    LimbPressures,
    Patient,
    Pressures,
    SegmentFinding,
    Stent,
    Study,
)

PRIOR_DATE = dt.date(2026, 5, 2)
CURRENT_DATE = dt.date(2026, 11, 20)


def study(
    segments: dict[str, SegmentFinding] | None = None,
    lesions: tuple[Lesion, ...] = (),
    stents: tuple[Stent, ...] = (),
    pt: float | None = None,
    date: dt.date | None = CURRENT_DATE,
    patient: Patient | None = None,
    source: str = "current.yaml",
) -> Study:
    """A left leg with CFA and SFA-P sampled normal, plus the given findings."""
    segs = {
        "CFA": SegmentFinding(id="CFA", psv=100.0),
        "SFA-P": SegmentFinding(id="SFA-P", psv=100.0),
    }
    segs.update(segments or {})
    limb = Limb(side=Side.LEFT, segments=segs, lesions=lesions, stents=stents)
    return Study(
        source=source,
        patient=patient or Patient(name="Demo, Ada", id="D-0001"),
        exam=Exam(date=date),
        pressures=Pressures(brachial_right=100.0, left=LimbPressures(pt=pt)),
        limbs={Side.LEFT: limb},
    )


def prior_of(**kw: object) -> Study:
    kw.setdefault("date", PRIOR_DATE)
    kw.setdefault("source", "prior.yaml")
    return study(**kw)  # type: ignore[arg-type]


def run(current: Study, prior: Study) -> Comparison:
    assert check_prior(current, prior) == []
    return compare(assess(current), assess(prior))


def band(b: str | None = None, **kw: object) -> dict[str, SegmentFinding]:
    """SFA-M recorded with a band given by hand (or other fields)."""
    return {"SFA-M": SegmentFinding(id="SFA-M", band=b, **kw)}  # type: ignore[arg-type]


@pytest.mark.parametrize(
    ("before", "after", "change"),
    [
        (band("lt50"), band("50-74"), Change.WORSE),
        (band("75-99"), band("50-74"), Change.BETTER),
        (band("50-74"), band("50-74"), Change.UNCHANGED),
        (band("75-99"), band(occluded=True), Change.NEW_OCCLUSION),
        (band("normal"), band(occluded=True), Change.NEW_OCCLUSION),
        (band(occluded=True), band("50-74"), Change.RESOLVED_OCCLUSION),
        ({}, band("lt50"), Change.NEWLY_ASSESSED),
        (band("lt50"), band(not_assessed=True), Change.NO_LONGER_ASSESSED),
    ],
)
def test_segment_change(
    before: dict[str, SegmentFinding], after: dict[str, SegmentFinding], change: Change
) -> None:
    c = run(study(segments=after), prior_of(segments=before))
    sfa_m = [s for s in c.segments if s.segment == "SFA-M"]
    assert [(s.side, s.change) for s in sfa_m] == [(Side.LEFT, change)]
    marked = (Side.LEFT, "SFA-M") in changed_segments(c)
    assert marked is (
        change not in (Change.UNCHANGED, Change.NEWLY_ASSESSED, Change.NO_LONGER_ASSESSED)
    )


def test_unchanged_segments_and_unseen_ones() -> None:
    c = run(study(), prior_of())
    assert [(s.segment, s.change) for s in c.segments] == [
        ("CFA", Change.UNCHANGED),
        ("SFA-P", Change.UNCHANGED),
    ]  # segments seen in neither exam are left out
    assert changed_segments(c) == ()


@pytest.mark.parametrize(
    ("before", "after", "expected"),
    [(-1, -1, None), (0, 4, Change.NEW_OCCLUSION), (4, 4, Change.UNCHANGED), (3, 1, Change.BETTER)],
)
def test_classify(before: int, after: int, expected: Change | None) -> None:
    assert classify(before, after) == expected


def test_segment_psv_change_percent() -> None:
    # own arithmetic: 100 -> 150 cm/s is +50.0%; 100 -> 87 is -13.0%
    c = run(
        study(segments={"SFA-P": SegmentFinding(id="SFA-P", psv=150.0)}),
        prior_of(segments={"CFA": SegmentFinding(id="CFA", psv=115.0)}),
    )
    got = {s.segment: (s.psv_before, s.psv_after, s.psv_change_pct) for s in c.segments}
    assert got["SFA-P"] == (100.0, 150.0, 50.0)
    assert got["CFA"] == (115.0, 100.0, -13.0)


# Whole percent, halves away from zero (common practice: PSVs are read to the whole cm/s).
@pytest.mark.parametrize(
    ("before", "after", "pct"),
    [
        (1000, 1004.9, 0.0),
        (1000, 1005, 1.0),
        (1000, 1005.1, 1.0),
        (1000, 995, -1.0),
        (230, 410, 78.0),  # +78.26%, not "+78.3%"
    ],
)
def test_psv_change_is_whole_percent(before: float, after: float, pct: float) -> None:
    assert psv_change_pct(before, after) == pct


def test_lesion_psv_change_matched_by_nearest_start() -> None:
    # Two lesions start in SFA-M in each exam; each pairs with the one nearest its from_cm.
    before = (
        Lesion(at="SFA-M", from_cm=1.0, length_cm=1, psv=300.0),
        Lesion(at="SFA-M", from_cm=6.0, length_cm=1, psv=250.0),
    )
    after = (
        Lesion(at="SFA-M", from_cm=6.5, length_cm=1, psv=200.0),
        Lesion(at="SFA-M", from_cm=1.5, length_cm=1, psv=450.0),
        Lesion(at="SFA-D", from_cm=2.0, length_cm=1, psv=300.0),  # new, no partner
    )
    c = run(study(lesions=after), prior_of(lesions=before))
    got = [(x.segment, x.from_cm_before, x.from_cm_after, x.psv_change_pct) for x in c.lesions]
    # own arithmetic: 300 -> 450 is +50.0%; 250 -> 200 is -20.0%
    assert got == [("SFA-M", 1.0, 1.5, 50.0), ("SFA-M", 6.0, 6.5, -20.0)]
    assert [(x.band_before, x.band_after) for x in c.lesions] == [
        ("50-74", "75-99"),  # Vr 3.0 -> 4.5 against SFA-P 100 cm/s (Polak 2004: 4.0)
        ("50-74", "50-74"),  # Vr 2.5 -> 2.0 (Jager 1985: 2.0)
    ]


def test_new_stent_is_reported() -> None:
    c = run(study(stents=(Stent(from_="SFA-M", to="SFA-D"),)), prior_of())
    assert [(d.side, d.kind, d.from_, d.to, d.change) for d in c.devices] == [
        (Side.LEFT, "stent", "SFA-M", "SFA-D", "new")
    ]
    same = run(
        study(stents=(Stent(from_="SFA-M", to="SFA-D"),)),
        prior_of(stents=(Stent(from_="SFA-M", to="SFA-D"),)),
    )
    assert same.devices == ()


# A fall of the ABI by more than 0.15 is significant: SVS 2018 graft surveillance table
# (Zierler 2018 after Bandyk 1988) and Westerband 1997 - clinical-values.md, confirmed.
# Brachial 100 mmHg, so the ABI is PT/100.
@pytest.mark.parametrize(
    ("pt_before", "pt_after", "change", "significant"),
    [
        (100.0, 84.0, -0.16, True),  # fall of 0.16: flagged
        (
            100.0,
            85.0,
            -0.15,
            False,
        ),  # fall of exactly 0.15: not (1.00 - 0.85 is not exact in binary)
        (90.0, 74.0, -0.16, True),
        (84.0, 100.0, 0.16, False),  # a rise is never a significant fall
    ],
)
def test_abi_change(pt_before: float, pt_after: float, change: float, significant: bool) -> None:
    c = run(study(pt=pt_after), prior_of(pt=pt_before))
    left = next(x for x in c.abi if x.side is Side.LEFT)
    assert (left.change, left.significant) == (change, significant)
    verdict = "significant" if significant else "not significant" if change < 0 else "no fall"
    assert verdict in left.basis and "(SVS 2018; Westerband 1997)" in left.basis
    right = next(x for x in c.abi if x.side is Side.RIGHT)
    assert (right.change, right.significant, right.basis) == (None, None, "no ABI in either exam")


def test_abi_noncompressible_is_not_judged() -> None:
    c = run(study(pt=120.0), prior_of(pt=145.0))  # 1.45 > 1.40: noncompressible (2016 AHA/ACC)
    left = next(x for x in c.abi if x.side is Side.LEFT)
    assert (left.change, left.significant) == (-0.25, None)


def test_interval_days() -> None:
    # own arithmetic: 2 May to 20 November 2026 is 29 + 30 + 31 + 31 + 30 + 31 + 20 = 202 days
    assert run(study(), prior_of()).interval_days == 202
    assert run(study(), prior_of(date=CURRENT_DATE)).interval_days == 0  # same day accepted
    undated = run(study(date=None), prior_of())
    assert undated.interval_days is None
    assert undated.notes == ("an exam date is missing: the interval is unknown",)


@pytest.mark.parametrize(
    ("current", "prior", "field"),
    [
        (
            Patient(name="Demo, Ada", id="D-0001"),
            Patient(name="Demo, Ada", id="D-0002"),
            "patient.id",
        ),
        (Patient(name="Demo, Ada"), Patient(name="Sample, Bo"), "patient.name"),
        (
            Patient(id="D-0001", birth_date=dt.date(1948, 3, 14)),
            Patient(id="D-0001", birth_date=dt.date(1948, 3, 15)),
            "patient.birth_date",
        ),
    ],
)
def test_prior_of_another_patient_is_refused(current: Patient, prior: Patient, field: str) -> None:
    problems = check_prior(study(patient=current), prior_of(patient=prior))
    assert [p.field for p in problems] == [field]
    text = str(problems[0])
    assert text.startswith(f"prior.yaml: {field}: differs from the current exam's {field}")
    for ident in ("Demo", "Sample", "D-000", "1948"):  # identifiers never echoed
        assert ident not in text


@pytest.mark.parametrize(
    ("current", "prior"),
    [
        (Patient(name="Demo, Ada", id="D-0001"), Patient(name="DEMO,  ada", id="d-0001")),
        (
            Patient(name="Demo, Ada", id="D-0001"),
            Patient(name="Other, Name", id="D-0001"),
        ),  # id wins
        (Patient(), Patient(name="Demo, Ada")),  # nothing to compare
    ],
)
def test_prior_of_the_same_patient_is_accepted(current: Patient, prior: Patient) -> None:
    assert check_prior(study(patient=current), prior_of(patient=prior)) == []


def test_prior_dated_after_the_current_exam_is_refused() -> None:
    later = prior_of(date=CURRENT_DATE + dt.timedelta(days=1))
    problems = check_prior(study(), later)
    assert [str(p) for p in problems] == [
        "prior.yaml: exam.date: is later than the current exam's exam.date: a prior exam must "
        "not be dated after the current one. (are the current and prior files the wrong way "
        "round?)"
    ]
    assert check_prior(study(), prior_of(date=CURRENT_DATE)) == []


@pytest.mark.parametrize(
    ("current", "prior", "field"),
    [
        (Exam(date=CURRENT_DATE, accession="ACC-7"), Exam(date=PRIOR_DATE, accession="acc-7"),
         "exam.accession"),
        (Exam(date=CURRENT_DATE, study_uid="1.2.3"), Exam(date=PRIOR_DATE, study_uid="1.2.3"),
         "exam.study_uid"),
    ],
)  # fmt: skip
def test_a_prior_that_is_the_current_exam_is_refused(
    current: Exam, prior: Exam, field: str
) -> None:
    from dataclasses import replace

    problems = check_prior(replace(study(), exam=current), replace(prior_of(), exam=prior))
    assert [p.field for p in problems] == [field]
    text = str(problems[0])
    assert f"is the same as the current exam's {field}: a prior is an earlier exam" in text
    assert "ACC-7" not in text and "acc-7" not in text and "1.2.3" not in text  # never echoed


def test_a_copy_with_both_the_accession_and_the_uid_gets_one_line() -> None:
    from dataclasses import replace

    exam = Exam(date=CURRENT_DATE, accession="ACC-7", study_uid="1.2.3")
    problems = check_prior(replace(study(), exam=exam), replace(prior_of(), exam=exam))
    assert [p.field for p in problems] == ["exam.accession"]


@pytest.mark.parametrize(
    ("current", "prior"),
    [
        (Exam(accession="ACC-7"), Exam(accession="ACC-6")),
        (Exam(accession="ACC-7"), Exam()),  # one side has none: nothing to compare
        (Exam(study_uid="1.2.3"), Exam(study_uid="1.2.30")),
    ],
)
def test_a_prior_with_its_own_accession_or_uid_is_accepted(current: Exam, prior: Exam) -> None:
    from dataclasses import replace

    now = replace(study(), exam=replace(current, date=CURRENT_DATE))
    then = replace(prior_of(), exam=replace(prior, date=PRIOR_DATE))
    assert check_prior(now, then) == []


def test_the_study_named_as_its_own_prior_is_refused_in_one_line(tmp_path: Path) -> None:
    import shutil
    import subprocess
    import sys

    example = Path(__file__).resolve().parent.parent / "examples" / "normal.yaml"
    study_file = tmp_path / "exam.yaml"
    shutil.copy(example, study_file)
    out = tmp_path / "map.pdf"
    run = subprocess.run(
        [sys.executable, "-m", "diagram", "draw", str(study_file), "--prior",
         str(tmp_path / "." / "exam.yaml"), "-o", str(out)],
        capture_output=True, text=True, timeout=120, cwd=tmp_path,
    )  # fmt: skip
    assert run.returncode == 2 and not out.exists()
    lines = run.stderr.strip().splitlines()
    assert "--prior" in lines[0] and "names the study's own file" in lines[0], run.stderr
    assert "give the file of the earlier exam" in lines[0]
    assert "Traceback" not in run.stderr
