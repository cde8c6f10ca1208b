"""Criteria files: the shipped set loads; a lab's file with mistakes gets one line per problem."""

from __future__ import annotations

from pathlib import Path

import pytest

from diagram.criteria import load_criteria, parse_criteria, shipped_names
from diagram.errors import CriteriaError

GOOD = """\
format: 1
name: lab-example
title: Example lab set
kind: native
source: lab validation 2026 (fictional)
lesion_floor: mild
bands:
  - {id: none, label: None, when: {}}
  - {id: mild, label: Mild, when: {vr_min: 1.5}}
  - {id: severe, label: Severe, when: {vr_min: 2.5, psv_min: 250, match: any}}
  - {id: occluded, label: Occluded, occlusion: true}
"""


def test_shipped_sets_are_listed_and_load() -> None:
    assert "native" in shipped_names()
    for name in shipped_names():
        assert load_criteria(name).origin == "shipped"


def test_lab_file_is_read_and_graded_with_any_match(tmp_path: Path) -> None:
    path = tmp_path / "lab.yaml"
    path.write_text(GOOD)
    c = load_criteria(str(path))
    assert c.name == "lab-example" and c.origin == str(path)
    grade = c.grade
    assert grade(1.0, 100, lesion=False).id == "none"  # type: ignore[union-attr]
    assert grade(1.0, 100, lesion=True).id == "mild"  # type: ignore[union-attr]
    assert grade(1.2, 260, lesion=False).id == "severe"  # type: ignore[union-attr]
    assert grade(2.5, 100, lesion=False).id == "severe"  # type: ignore[union-attr]


@pytest.mark.parametrize(
    ("change", "expected"),
    [
        (
            ("vr_min: 1.5", "vr_min: 'x'"),
            "lab.yaml:9: bands[1].when.vr_min: 'x' must be a number above 0 and at most 50.",
        ),
        (
            ("vr_min: 1.5", "vr_min: 3.0"),
            "lab.yaml:10: bands[2].when.vr_min: 2.5 must be higher than the vr_min of the milder "
            "bands before it.",
        ),
        (
            ("lesion_floor: mild", "lesion_floor: mlid"),
            "lab.yaml:6: lesion_floor: 'mlid' must be one of the set's band ids. (did you mean mild?)",
        ),
        (
            ("when: {vr_min: 1.5}", "wen: {vr_min: 1.5}"),
            "lab.yaml:9: bands[1].wen: is not a band field. (did you mean when?)",
        ),
        (("format: 1", "format: 2"), "lab.yaml:1: format: 2 must be 1."),
        (
            ("occlusion: true", "occlusion: false"),
            "lab.yaml:7: bands: must hold exactly one band with occlusion: true.",
        ),
        (("id: mild,", "id: none,"), "lab.yaml:9: bands[1].id: 'none' is used by an earlier band."),
        (
            ("match: any", "match: either"),
            "lab.yaml:10: bands[2].when.match: 'either' must be all or any.",
        ),
    ],
)
def test_lab_file_mistakes(tmp_path: Path, change: tuple[str, str], expected: str) -> None:
    path = tmp_path / "lab.yaml"
    path.write_text(GOOD.replace(*change, 1))
    with pytest.raises(CriteriaError) as err:
        load_criteria(str(path))
    lines = [str(p).replace(str(tmp_path) + "/", "") for p in err.value.problems]
    assert expected in lines


def test_several_mistakes_reported_at_once() -> None:
    text = GOOD.replace("format: 1", "format: 3").replace("title: Example lab set", "title: ''")
    with pytest.raises(CriteriaError) as err:
        parse_criteria(text, "lab.yaml", "lab.yaml")
    assert [p.field for p in err.value.problems] == ["format", "title"]


def test_yaml_alias_is_refused_before_expansion() -> None:
    bomb = "a: &a [x, x]\nb: &b [*a, *a]\nc: [*b, *b]\n"
    with pytest.raises(CriteriaError) as err:
        parse_criteria(bomb, "bomb.yaml", "bomb.yaml")
    assert "anchors or aliases" in str(err.value)


def test_unknown_shipped_name_gets_a_hint() -> None:
    with pytest.raises(CriteriaError) as err:
        load_criteria("natve")
    assert "(did you mean native?)" in str(err.value)


def test_criteria_commands(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    from diagram.cli.main import main

    with pytest.raises(SystemExit) as done:
        main(["criteria", "list"])
    out = capsys.readouterr().out
    assert done.value.code == 0
    assert [line.split()[0] for line in out.splitlines()] == ["name", "graft", "native", "stent"]

    with pytest.raises(SystemExit) as done:
        main(["criteria", "show", "native"])
    out = capsys.readouterr().out
    rows = [" ".join(line.split()) for line in out.splitlines()]
    assert "50-74 50-74% Vr >= 2 Vr >= 2.0 (Jager 1985; Kohler 1987)" in rows

    bad = tmp_path / "lab.yaml"
    bad.write_text(GOOD.replace("format: 1", "format: 2"))
    with pytest.raises(SystemExit) as done:
        main(["criteria", "show", str(bad)])
    assert done.value.code == 2
    assert capsys.readouterr().err.strip().endswith("lab.yaml:1: format: 2 must be 1.")


# In-stent restenosis (Bandyk group angioplasty-site criteria, confirmed secondary):
# >= 50% PSV 180-300 and Vr 2-3.5; >= 70% PSV > 300 and Vr > 3.5 (boundaries to the higher band).
@pytest.mark.parametrize(
    ("vr", "psv", "band"),
    [
        (1.99, 250, "isr-lt50"),
        (2.0, 179, "isr-lt50"),
        (2.0, 180, "isr-50-69"),
        (3.49, 320, "isr-50-69"),
        (3.5, 299, "isr-50-69"),
        (3.5, 300, "isr-70-99"),
        (None, 150, "isr-lt50"),  # PSV alone rules out restenosis >= 50%
        (None, 350, None),  # PSV alone cannot decide: left ungraded
    ],
)
def test_stent_set_boundaries(vr: float | None, psv: float, band: str | None) -> None:
    rule = load_criteria("stent").grade(vr, psv, lesion=True)
    assert (rule.id if rule else None) == band


# Vein graft surveillance (SVS 2018, Zierler; after Bandyk 1988, confirmed): low PSV < 180 and
# Vr < 2.0; moderate PSV 180-300 or Vr > 2.0; high PSV > 300 and Vr > 3.5.
@pytest.mark.parametrize(
    ("vr", "psv", "band"),
    [
        (1.99, 179, "graft-low"),
        (2.0, 150, "graft-moderate"),
        (1.5, 180, "graft-moderate"),
        (3.5, 299, "graft-moderate"),
        (3.49, 310, "graft-moderate"),
        (3.5, 300, "graft-high"),
    ],
)
def test_graft_set_boundaries(vr: float, psv: float, band: str) -> None:
    rule = load_criteria("graft").grade(vr, psv, lesion=False)
    assert rule is not None and rule.id == band


def test_a_key_given_twice_is_refused_not_overwritten() -> None:
    text = GOOD.replace("title: Example lab set\n", "title: Example lab set\ntitle: Other\n")
    with pytest.raises(CriteriaError) as err:
        parse_criteria(text, "lab.yaml", "lab.yaml")
    assert str(err.value) == "lab.yaml:4: (file): gives the key 'title' twice."
