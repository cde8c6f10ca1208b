"""Lab profiles: validated like criteria files, and a lab's style reaches the rendered map."""

from __future__ import annotations

import dataclasses
import re
from pathlib import Path

import pytest

from diagram.drawing.labprofile import (
    MAX_PROFILE_BYTES,
    LabProfile,
    LabProfileError,
    load_lab_profile,
    parse_lab_profile,
)
from diagram.drawing.style import Hatch, default_style
from diagram.errors import DiagramError

LAB = Path(__file__).parent / "data" / "lab"
EXAMPLES = Path(__file__).parent.parent / "examples"


def problems_of(text: str, tmp_path: Path) -> list[str]:
    path = tmp_path / "lab.yaml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(LabProfileError) as err:
        load_lab_profile(path)
    assert err.value.exit_code == 2
    return [line.removeprefix(f"{path}:") for line in err.value.lines()]


def test_a_full_profile() -> None:
    profile = load_lab_profile(LAB / "lab.yaml")
    assert profile.source == str(LAB / "lab.yaml")
    assert profile.lab_name == "Riverside Demo Vascular Lab"
    assert profile.template == "infrainguinal-left"
    assert profile.page == "letter"
    assert profile.line("bands.50-74.angle_deg") == 12
    assert profile.line("bands.50-74.ink") == 8  # not given: the band's own line
    assert profile.line("nothing") is None
    default = default_style()
    bands = profile.style.band_map()
    assert bands["50-74"] == dataclasses.replace(
        default.band_map()["50-74"],
        tint="#7FB3D5",
        hatch=Hatch.LINES,
        spacing_pt=3.0,
        angle_deg=120.0,
        weight_pt=0.8,
    )
    assert bands["occluded"] == dataclasses.replace(default.band_map()["occluded"], ink="#101820")
    untouched = [b for b in profile.style.bands if b.id not in {"50-74", "occluded"}]
    assert untouched == [b for b in default.bands if b.id not in {"50-74", "occluded"}]
    assert dataclasses.replace(profile.style, bands=default.bands) == default


def test_an_empty_profile_changes_nothing(tmp_path: Path) -> None:
    path = tmp_path / "lab.yaml"
    path.write_text("# nothing yet\n", encoding="utf-8")
    profile = load_lab_profile(path)
    assert profile == LabProfile(str(path), lines=profile.lines)
    assert profile.style == default_style()
    assert (profile.lab_name, profile.template, profile.page) == (None, None, None)


def test_a_template_path_is_taken_relative_to_the_profile() -> None:
    profile = load_lab_profile(LAB / "own-template.yaml")
    assert profile.template == LAB / ".." / "templates" / "transformed.svg"


def test_every_problem_on_its_own_line_with_a_hint() -> None:
    path = LAB / "bad.yaml"
    expected = (LAB / "bad.expected").read_text(encoding="utf-8").splitlines()
    with pytest.raises(LabProfileError) as err:
        load_lab_profile(path)
    assert err.value.lines() == [line.replace("{f}", str(path)) for line in expected]


@pytest.mark.parametrize(
    ("fixture", "expected"),
    [
        ("anchors.yaml", "{f}:3: (file): must not use YAML anchors or aliases"),
        ("duplicate.yaml", "{f}:5: page: appears twice (first on line 2) (keep one)"),
    ],
)
def test_anchors_and_duplicate_keys_are_refused(fixture: str, expected: str) -> None:
    path = LAB / fixture
    with pytest.raises(LabProfileError) as err:
        load_lab_profile(path)
    assert err.value.lines() == [expected.format(f=path)]


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("- a\n- b\n", "1: (file): must be a mapping of lab profile fields"),
        (
            "page: [a4\n",
            "2: (file): is not valid YAML: expected ',' or ']', but got '<stream end>'",
        ),
        ("format: 2\n", "1: format: 2 must be 1"),
        ("lab_name: ''\n", "1: lab_name: '' must be a one-line text"),
        ("lab_name: 3\n", "1: lab_name: 3 must be a one-line text"),
        ('lab_name: "a\\tb"\n', "1: lab_name: 'a\\tb' must be a one-line text"),
        (
            f"lab_name: {'x' * 81}\n",
            "1: lab_name: 'xxxxxxxxxxxxxxxxxxxx...' must be at most 80 characters",
        ),
        ("bands: [lt50]\n", "1: bands: ['lt50'] must be a mapping of band looks to their fields"),
        (
            "template: 7\n",
            "1: template: 7 must be a shipped template's name or a path to an SVG file",
        ),
        (
            "bands:\n  not-assessed: {hatch: rings}\n  lt50: {hatch: rings}\n",
            "3: bands.lt50.hatch: 'rings' must be one of none, dots, lines, cross, solid (rings "
            "are kept for not-assessed)",
        ),
    ],
)
def test_field_rules(tmp_path: Path, text: str, expected: str) -> None:
    assert problems_of(text, tmp_path) == [expected]


@pytest.mark.parametrize(
    ("field", "value", "ok"),
    [
        # Own design bounds (labprofile.py): spacing 1-12 pt, angle 0 to below 180°, weight at
        # least 0.1 pt and at most half the spacing for a textured hatch.
        ("spacing_pt", "0.99", False),
        ("spacing_pt", "1", True),
        ("spacing_pt", "12", True),
        ("spacing_pt", "12.01", False),
        ("spacing_pt", "true", False),
        ("spacing_pt", '"3"', False),
        ("spacing_pt", "1e3", False),  # YAML 1.1 reads 1e3 as text
        ("angle_deg", "-1", False),
        ("angle_deg", "0", True),
        ("angle_deg", "179.9", True),
        ("angle_deg", "180", False),
        ("angle_deg", ".nan", False),
        ("weight_pt", "0.09", False),
        ("weight_pt", "0.1", True),
        ("weight_pt", "1.8", True),  # half of the 3.6 pt spacing of the 50-74 lines
        ("weight_pt", "1.81", False),
    ],
)
def test_texture_bounds(tmp_path: Path, field: str, value: str, ok: bool) -> None:
    path = tmp_path / "lab.yaml"
    light = "" if field == "weight_pt" else "    weight_pt: 0.5\n"
    path.write_text(f"bands:\n  50-74:\n    {field}: {value}\n{light}", encoding="utf-8")
    if ok:
        band = load_lab_profile(path).style.band_map()["50-74"]
        assert getattr(band, field) == float(value)
    else:
        with pytest.raises(LabProfileError) as err:
            load_lab_profile(path)
        assert [p.field for p in err.value.problems] == [f"bands.50-74.{field}"]
        assert err.value.problems[0].line == 3


@pytest.mark.parametrize("font", ["DejaVu Sans", "dejavu sans", " DejaVu Sans "])
def test_the_shipped_font_in_any_case(tmp_path: Path, font: str) -> None:
    path = tmp_path / "lab.yaml"
    path.write_text(f"font: '{font}'\n", encoding="utf-8")
    assert load_lab_profile(path).style.font_family == "DejaVu Sans"


def test_colours_are_normalised_to_upper_case(tmp_path: Path) -> None:
    path = tmp_path / "lab.yaml"
    path.write_text('bands: {lt50: {tint: "#aabbcc", ink: "#010203"}}\n', encoding="utf-8")
    band = load_lab_profile(path).style.band_map()["lt50"]
    assert (band.tint, band.ink) == ("#AABBCC", "#010203")


def test_hostile_profiles(tmp_path: Path) -> None:
    big = tmp_path / "big.yaml"
    big.write_bytes(b"#" * (MAX_PROFILE_BYTES + 1))
    with pytest.raises(LabProfileError, match=f"is larger than {MAX_PROFILE_BYTES} bytes"):
        load_lab_profile(big)
    deep = "bands: " + "[" * 5000 + "]" * 5000 + "\n"
    assert problems_of(deep, tmp_path) == ["1: (file): nests deeper than 8 levels"]
    binary = tmp_path / "bin.yaml"
    binary.write_bytes(b"\xff\xfe")
    with pytest.raises(LabProfileError, match="is not UTF-8 text"):
        load_lab_profile(binary)
    with pytest.raises(LabProfileError, match="cannot be read: No such file or directory"):
        load_lab_profile(tmp_path / "missing.yaml")
    tagged = "lab_name: !!python/object/apply:os.system ['true']\n"
    assert problems_of(tagged, tmp_path) == [
        "1: (file): is not valid YAML: only plain mappings, lists, texts and numbers are read"
    ]


def test_parse_in_memory_uses_the_base_folder() -> None:
    profile = parse_lab_profile("template: lab.yaml\n", "inline", LAB)
    assert profile.template == LAB / "lab.yaml"  # any existing file; the template is read later


def test_a_lab_style_reaches_the_rendered_map() -> None:
    # The 50-74 band's tint, angle, spacing and weight appear in the SVG the pipeline renders.
    from diagram._version import __version__
    from diagram.assess import assess
    from diagram.drawing.layout import layout
    from diagram.drawing.template.mapfile import load_template
    from diagram.output.svg import render_svg
    from diagram.reading.load import load_study

    profile = load_lab_profile(LAB / "lab.yaml")
    assessment = assess(load_study(EXAMPLES / "multilevel-occlusion.yaml"))
    assert any(les.band == "50-74" for limb in assessment.limbs.values() for les in limb.lesions)
    svg = render_svg(layout(assessment, load_template(), version=__version__, style=profile.style))
    default = render_svg(layout(assessment, load_template(), version=__version__))
    pattern = re.search(r'<pattern [^>]*id="band-50-74"[^>]*>.*?</pattern>', svg, re.DOTALL)
    assert pattern is not None
    text = pattern.group(0)
    assert 'patternTransform="rotate(120) scale(0.1)"' in text
    assert 'fill="#7FB3D5"' in text and 'stroke-width="8"' in text  # 0.8 pt x 10 (tile scale)
    assert 'width="30"' in text  # 3 pt spacing x 10
    assert "#7FB3D5" not in default and "#E59A4E" in default
    assert svg.replace("#7FB3D5", "#E59A4E") != default  # the angle changed as well


def test_errors_are_input_errors() -> None:
    assert issubclass(LabProfileError, DiagramError)


def test_a_profile_travels_to_worker_processes() -> None:
    import pickle

    profile = load_lab_profile(LAB / "lab.yaml")
    copy = pickle.loads(pickle.dumps(profile))
    assert copy == profile and hash(copy) == hash(profile)
    assert copy.line("bands.50-74.tint") == 9
