"""Pressure indices: ABI, TBI, WIfI ischaemia grade, arm difference, CLTI thresholds."""

from __future__ import annotations

from pathlib import Path

import pytest

from diagram.anatomy import Side
from diagram.assess.indices import abi_category, limb_indices, pressure_findings, round2
from diagram.errors import StudyError
from diagram.reading.study import LimbPressures, Presentation, Pressures


def pressures(
    right: tuple[float | None, float | None] = (142.0, 140.0),
    left: tuple[float | None, float | None, float | None] = (None, None, None),
) -> Pressures:
    pt, dp, toe = left
    return Pressures(
        brachial_right=right[0], brachial_left=right[1], left=LimbPressures(pt=pt, dp=dp, toe=toe)
    )


def test_worked_example_abi_086_abnormal() -> None:
    # clinical-values.md worked example (own arithmetic; method 2016 AHA/ACC PAD guideline):
    # brachial R 140 / L 132, PT 120, DP 110 -> 120/140 = 0.857 -> 0.86, abnormal
    p = Pressures(brachial_right=140, brachial_left=132, left=LimbPressures(pt=120, dp=110))
    ix = limb_indices(p, Side.LEFT)
    assert (ix.abi, ix.abi_category, ix.abi_severity) == (0.86, "abnormal", "mild-moderate")
    assert ix.abi_basis == "PT 120 / brachial 140 mmHg"


# 2016 AHA/ACC PAD guideline (Gerhard-Herman 2017): <= 0.90 abnormal, 0.91-0.99 borderline,
# 1.00-1.40 normal, > 1.40 noncompressible.
@pytest.mark.parametrize(
    ("abi", "category"),
    [
        (0.89, "abnormal"),
        (0.90, "abnormal"),
        (0.91, "borderline"),
        (0.99, "borderline"),
        (1.00, "normal"),
        (1.40, "normal"),
        (1.41, "noncompressible"),
    ],
)
def test_abi_category_boundaries(abi: float, category: str) -> None:
    assert abi_category(abi) == category


@pytest.mark.parametrize(
    ("ankle", "abi", "severity"),
    [(40, 0.40, "severe"), (41, 0.41, "mild-moderate")],  # Sukul D et al., JACC CI 2017
)
def test_abi_severity_boundary(ankle: float, abi: float, severity: str) -> None:
    ix = limb_indices(pressures((100, 100), (ankle, None, None)), Side.LEFT)
    assert (ix.abi, ix.abi_severity) == (abi, severity)


def test_abi_rounds_half_up_to_two_decimals() -> None:
    assert round2(0.855) == 0.86 and round2(0.8549) == 0.85  # common practice: two decimals


# TBI = toe / higher brachial; <= 0.70 abnormal: 2016 AHA/ACC PAD guideline figure 2, "Normal
# (>0.70)" / "Abnormal (≤0.70)" (pocket edition, Guideline Central), confirmed.
@pytest.mark.parametrize(("toe", "category"), [(69, "abnormal"), (70, "abnormal"), (71, "normal")])
def test_tbi_boundary(toe: float, category: str) -> None:
    ix = limb_indices(pressures((100, 90), (None, None, toe)), Side.LEFT)
    assert ix.tbi == toe / 100 and ix.tbi_category == category


# WIfI ischaemia grade (Mills JL et al., J Vasc Surg 2014;59:220): grades 1-3 confirmed in the
# review table of Medicina 2024;60:1179 (table 2: "0.60-0.79", "70-100 mmHg", "40-59 mmHg" for
# grade 1), grade 0 from memory. Each measure alone, brachial 100 so that ABI = ankle / 100.
@pytest.mark.parametrize(
    ("left", "grade"),
    [
        ((101, None, None), 0),  # ABI 1.01, ankle > 100
        ((100, None, None), 1),  # ankle 100 is grade 1 (70-100), ABI 1.00 grade 0: worst wins
        ((80, None, None), 1),  # ABI 0.80 grade 0, ankle 80 grade 1
        ((79, None, None), 1),  # ABI 0.79
        ((70, None, None), 1),  # ankle 70 (70-100)
        ((69, None, None), 2),  # ankle 69 (50-70), ABI 0.69 grade 1
        ((60, None, None), 2),
        ((59, None, None), 2),  # ABI 0.59
        ((50, None, None), 2),  # ankle 50, ABI 0.50
        ((49, None, None), 3),  # ankle < 50
        ((None, None, 60), 0),  # toe >= 60
        ((None, None, 59), 1),
        ((None, None, 40), 1),
        ((None, None, 39), 2),
        ((None, None, 30), 2),
        ((None, None, 29), 3),
    ],
)
def test_wifi_ischaemia_grade(left: tuple[float | None, ...], grade: int) -> None:
    pt, dp, toe = left
    ix = limb_indices(pressures((100, 100), (pt, dp, toe)), Side.LEFT)
    assert ix.ischaemia_grade == grade


def test_noncompressible_uses_toe_only_and_points_to_tbi() -> None:
    p = pressures((120, 120), (200, 190, 50))  # ABI 1.67
    ix = limb_indices(p, Side.LEFT)
    assert ix.abi_category == "noncompressible"
    assert ix.ischaemia_grade == 1 and "not used" in ix.ischaemia_basis  # toe 50 -> grade 1
    codes = [f.code for f in pressure_findings(p, {Side.LEFT: ix})]
    assert codes == ["noncompressible"]


@pytest.mark.parametrize(
    ("arms", "codes"),
    [  # Clark CE et al., Lancet 2012;379:905: >= 10 noted, >= 15 flagged
        ((140, 131), []),
        ((140, 130), ["arm-difference-minor"]),
        ((140, 126), ["arm-difference-minor"]),
        ((140, 125), ["arm-difference"]),
    ],
)
def test_inter_arm_difference(arms: tuple[float, float], codes: list[str]) -> None:
    assert [f.code for f in pressure_findings(pressures(arms), {})] == codes


@pytest.mark.parametrize(
    ("left", "flagged"),
    [  # ESC/ESVS 2017, GVG 2019: ankle < 50, ABI < 0.40, toe < 30
        ((50, None, 30), False),
        ((49, None, None), True),
        ((None, None, 29), True),
    ],
)
def test_clti_thresholds(left: tuple[float | None, ...], flagged: bool) -> None:
    p = pressures((125, 125), left)  # type: ignore[arg-type]
    ix = limb_indices(p, Side.LEFT)
    codes = [f.code for f in pressure_findings(p, {Side.LEFT: ix})]
    assert ("clti-pressure" in codes) is flagged


@pytest.mark.parametrize(
    ("p", "abi_basis", "tbi_basis"),
    [
        (Pressures(), "no ankle pressure", "no toe pressure"),
        (
            Pressures(left=LimbPressures(pt=90, toe=50)),
            "no usable brachial pressure",
            "no usable brachial pressure",
        ),
        (
            Pressures(brachial_left=120, left=LimbPressures(dp=90)),
            "DP 90 / brachial 120 mmHg (one arm measured)",
            "no toe pressure",
        ),
    ],
)
def test_missing_pressures_say_what_could_not_be_computed(
    p: Pressures, abi_basis: str, tbi_basis: str
) -> None:
    ix = limb_indices(p, Side.LEFT)
    assert (ix.abi_basis, ix.tbi_basis) == (abi_basis, tbi_basis)


# CLTI haemodynamic range, ESC 2017 PAD guideline (review table, confirmed): ABI < 0.40, ankle
# < 50 mmHg, toe < 30 mmHg, TcPO2 < 30 mmHg - all written "<", so an ABI of 0.40 is outside.
@pytest.mark.parametrize(
    ("ankle", "tcpo2", "in_range"),
    [
        (100, None, False),  # ABI 1.00
        (39, None, True),  # ABI 0.39 (and ankle < 50)
        (60, None, False),  # ABI 0.60, ankle 60
        (49, None, True),  # ankle 49 < 50 mmHg
        (50, None, False),  # ankle 50: outside (ABI 0.50)
        (100, 29, True),  # TcPO2 29 < 30
        (100, 30, False),
        (100, 31, False),
    ],
)
def test_clti_range_and_tcpo2(ankle: float, tcpo2: float | None, in_range: bool) -> None:
    p = Pressures(100, 100, left=LimbPressures(pt=ankle, tcpo2=tcpo2))
    ix = limb_indices(p, Side.LEFT)
    codes = [f.code for f in pressure_findings(p, {Side.LEFT: ix})]
    assert ("clti-pressure" in codes) is in_range
    assert ix.ischaemia_applies is in_range  # no presentation given: the pressures decide


def test_abi_040_exactly_is_outside_the_clti_range() -> None:
    # ESC 2017: ABI "< 0.40"; with a brachial of 100 the ABI is the ankle pressure / 100 exactly
    for pt, inside in ((39, True), (40, False), (41, False)):
        p = Pressures(100, 100, left=LimbPressures(pt=pt, dp=None))
        ix = limb_indices(p, Side.LEFT)
        low = [f for f in pressure_findings(p, {Side.LEFT: ix}) if f.code == "clti-pressure"]
        assert any("ABI" in f.message for f in low) is inside


# WIfI TcPO2 grade, same column as the toe pressure (Mills 2014; grades 1-3 confirmed in a review
# table of the classification, Medicina 2024;60:1179 table 2; grade 0 from memory): >= 60
# grade 0, 40-59 1, 30-39 2, < 30 3.
@pytest.mark.parametrize(("tcpo2", "grade"), [(29, 3), (30, 2), (39, 2), (40, 1), (59, 1), (60, 0)])
def test_wifi_grade_from_tcpo2(tcpo2: float, grade: int) -> None:
    ix = limb_indices(Pressures(100, 100, left=LimbPressures(tcpo2=tcpo2)), Side.LEFT)
    assert ix.ischaemia_grade == grade and ix.tcpo2_mmhg == tcpo2


# WIfI is a tool for limbs with CLTI (Mills 2014; GVG 2019 endorses it for CLTI staging): the grade
# applies where the leg is marked rest pain or tissue loss or its pressures are in the CLTI range.
@pytest.mark.parametrize(
    ("presentation", "applies"),
    [
        (None, False),
        (Presentation.CLAUDICATION, False),
        (Presentation.REST_PAIN, True),
        (Presentation.TISSUE_LOSS, True),
    ],
)
def test_ischaemia_grade_applies_to_clti_limbs(
    presentation: Presentation | None, applies: bool
) -> None:
    p = Pressures(140, 138, left=LimbPressures(pt=90, dp=80, toe=50))  # ABI 0.64, claudicant range
    ix = limb_indices(p, Side.LEFT, presentation)
    assert ix.ischaemia_grade == 1 and ix.ischaemia_applies is applies
    assert ("CLTI" in ix.ischaemia_context) is True


def test_study_file_takes_tcpo2_and_the_legs_presentation(tmp_path: Path) -> None:
    from diagram.assess import assess
    from diagram.reading.load import load_study

    path = tmp_path / "s.yaml"
    path.write_text(
        "format: 1\npressures:\n  brachial: {right: 140}\n  right: {pt: 120, tcpo2: 28}\n"
        "limbs:\n  right:\n    presentation: tissue-loss\n"
    )
    study = load_study(path)
    assert study.pressures.right.tcpo2 == 28
    assert study.limb(Side.RIGHT).presentation is Presentation.TISSUE_LOSS
    ix = assess(study).indices[Side.RIGHT]
    assert ix.ischaemia_grade == 3 and ix.ischaemia_applies  # TcPO2 28 < 30 (WIfI grade 3)
    path.write_text("format: 1\nlimbs:\n  right:\n    presentation: rest pain\n")
    with pytest.raises(StudyError, match="presentation: 'rest pain' must be one of"):
        load_study(path)
