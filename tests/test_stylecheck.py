"""Style check: greyscale swatches measured from real renders, colour-vision pairs simulated."""

from __future__ import annotations

import dataclasses
import itertools
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import pytest

from diagram.cli.main import main
from diagram.design.stylecheck import (
    CVD_MATRICES,
    MIN_DELTA_E,
    MIN_EDGE_STEP,
    MIN_GREY_STEP,
    MIN_SD_STEP,
    StyleCheckError,
    Swatch,
    check_style,
    delta_e,
    lab,
    linear_rgb,
    measure_swatches,
    simulate,
    swatch_svg,
    too_alike,
)
from diagram.drawing.labprofile import load_lab_profile
from diagram.drawing.style import SEVERITY_ORDER, Hatch, Style, default_style

LAB = Path(__file__).parent / "data" / "lab"


def run(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    with pytest.raises(SystemExit) as done:
        main(args)
    out = capsys.readouterr()
    return int(done.value.code or 0), out.out, out.err


def with_bands(changes: Mapping[str, Mapping[str, Any]]) -> Style:
    """Return the default style with some bands' fields replaced (by band id)."""
    style = default_style()
    bands = tuple(dataclasses.replace(b, **changes.get(b.id, {})) for b in style.bands)
    return dataclasses.replace(style, bands=bands)


# --------------------------------------------------------------------------- colour science


@pytest.mark.parametrize(
    ("colour", "expected"),
    [
        # CIE 15:2004 definition of L*a*b*; white and black by definition, the rest from memory
        # (published sRGB-to-Lab conversions, D65): red 53.24 80.09 67.20, mid grey L* 53.59.
        ("#FFFFFF", (100.0, 0.0, 0.0)),
        ("#000000", (0.0, 0.0, 0.0)),
        ("#FF0000", (53.24, 80.09, 67.20)),
        ("#808080", (53.59, 0.0, 0.0)),
    ],
)
def test_lab_reference_points(colour: str, expected: tuple[float, float, float]) -> None:
    assert lab(linear_rgb(colour)) == pytest.approx(expected, abs=0.05)


def test_linear_rgb_reference_point() -> None:
    # IEC 61966-2-1 transfer function; WCAG 2.1 gives 0.2158605 for #808080 (all channels equal).
    assert linear_rgb("#808080") == pytest.approx((0.2158605,) * 3, abs=1e-6)


@pytest.mark.parametrize("deficiency", sorted(CVD_MATRICES))
def test_machado_matrices_keep_white_and_greys(deficiency: str) -> None:
    # Machado, Oliveira & Fernandes 2009: each row of the severity-1.0 matrices sums to 1, so
    # achromatic colours are seen unchanged.
    for row in CVD_MATRICES[deficiency]:
        assert sum(row) == pytest.approx(1.0, abs=2e-6)
    for grey in ("#FFFFFF", "#808080", "#202020"):
        rgb = linear_rgb(grey)
        assert simulate(rgb, deficiency) == pytest.approx(rgb, abs=1e-5)


def test_red_green_confusion_is_a_red_green_deficiency_only() -> None:
    # A saturated red and green of near-equal lightness: apart in normal vision, merged by the
    # red-green deficiencies, still apart for a tritanope (blue-yellow) - the published pattern.
    red, green = linear_rgb("#C0392B"), linear_rgb("#3C8D2F")
    assert delta_e(lab(red), lab(green)) > 90
    seen = {d: delta_e(lab(simulate(red, d)), lab(simulate(green, d))) for d in CVD_MATRICES}
    assert seen["deuteranopia"] < MIN_DELTA_E
    assert seen["protanopia"] < 30
    assert seen["tritanopia"] > 90


# --------------------------------------------------------------------------- greyscale swatches


def swatch(grey: float, sd: float, edges: float) -> Swatch:
    return Swatch("x", "x", grey, sd, edges)


@pytest.mark.parametrize(
    ("other", "alike"),
    [
        # Own design margins (stylecheck.py): 16 grey levels, 8 sd, 0.08 edge density.
        (swatch(100 + MIN_GREY_STEP - 0.01, 20, 0.3), True),
        (swatch(100 + MIN_GREY_STEP, 20, 0.3), False),
        (swatch(100, 20 + MIN_SD_STEP - 0.01, 0.3), True),
        (swatch(100, 20 + MIN_SD_STEP, 0.3), False),
        (swatch(100, 20, 0.3 + MIN_EDGE_STEP - 0.001), True),
        (swatch(100, 20, 0.3 + MIN_EDGE_STEP + 0.001), False),
        (swatch(100 - MIN_GREY_STEP, 20, 0.3), False),
    ],
)
def test_too_alike_thresholds(other: Swatch, alike: bool) -> None:
    assert (MIN_GREY_STEP, MIN_SD_STEP, MIN_EDGE_STEP) == (16.0, 8.0, 0.08)
    assert too_alike(swatch(100, 20, 0.3), other) is alike
    assert too_alike(other, swatch(100, 20, 0.3)) is alike


@pytest.fixture(scope="module")
def default_swatches() -> tuple[Swatch, ...]:
    return measure_swatches(default_style())


def test_swatches_measure_what_was_painted(default_swatches: tuple[Swatch, ...]) -> None:
    got = {s.band: s for s in default_swatches}
    assert list(got) == [b.id for b in default_style().bands]
    # Flat bands measure their own colour: normal is an untextured tint, occluded a solid ink.
    # BT.601 luma of #F2F6F3 is 244.5 and of #120D10 is 14.8 (Pillow rounds to whole levels).
    assert got["normal"].grey_mean == pytest.approx(244.5, abs=1.0)
    assert got["occluded"].grey_mean == pytest.approx(14.8, abs=1.0)
    assert got["normal"].grey_sd == 0 and got["normal"].edge_density == 0
    assert got["occluded"].grey_sd == 0
    # Textured bands show texture; the means fall with severity as the tints do.
    for band in ("lt50", "50-74", "75-99", "not-assessed"):
        assert got[band].grey_sd > 20 and got[band].edge_density > 0.15, band
    means = [got[b].grey_mean for b in SEVERITY_ORDER]
    assert means == sorted(means, reverse=True)


def test_the_default_style_passes(default_swatches: tuple[Swatch, ...]) -> None:
    report = check_style(default_style())
    assert report.problems == ()
    assert report.swatches == default_swatches
    for a, b in itertools.combinations(default_swatches, 2):
        assert not too_alike(a, b), (a.band, b.band)


def test_two_bands_with_the_same_grey_and_texture_are_reported() -> None:
    # The lt50 band drawn exactly like 50-74 except for the angle of its lines.
    look = default_style().band_map()["50-74"]
    style = with_bands(
        {
            "lt50": {
                "tint": look.tint,
                "ink": look.ink,
                "hatch": Hatch.LINES,
                "spacing_pt": look.spacing_pt,
                "angle_deg": 135.0,
                "weight_pt": look.weight_pt,
            }
        }
    )
    problems = check_style(style).problems
    assert [(p.field, p.rule.split(":")[0]) for p in problems] == [
        ("bands.lt50/50-74", "too alike printed in greyscale")
    ]
    assert problems[0].hint == "change the lightness of one tint or give one a hatch of its own"


def test_a_red_green_pair_is_reported_under_deuteranopia() -> None:
    style = with_bands({"lt50": {"tint": "#3C8D2F"}, "50-74": {"tint": "#C0392B"}})
    pairs = [
        (p.field, p.rule.split(":")[0])
        for p in check_style(style).problems
        if p.field == "bands.lt50.tint/bands.50-74.tint"
    ]
    assert pairs == [("bands.lt50.tint/bands.50-74.tint", "merge under deuteranopia")]


def test_a_solid_band_is_judged_by_its_ink() -> None:
    # Occluded is painted in its ink; a red ink beside a green tint is a red-green pair.
    style = with_bands(
        {"occluded": {"ink": "#B03A2E", "tint": "#FFFFFF"}, "lt50": {"tint": "#4C8C3A"}}
    )
    fields = {p.field for p in check_style(style).problems}
    assert "bands.lt50.tint/bands.occluded.ink" in fields


def test_swatch_svg_uses_the_render_patterns() -> None:
    svg = swatch_svg(default_style())
    for band in default_style().bands:
        assert f'id="band-{band.id}"' in svg
        assert f'fill="url(#band-{band.id})"' in svg


# --------------------------------------------------------------------------- the command


def test_style_check_default_passes(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = run(["style", "check"], capsys)
    assert code == 0 and err == ""
    lines = out.splitlines()
    assert lines[0].startswith("greyscale: each band's swatch (48 x 24 pt, 2 pt inset)")
    assert "less than 16 of 255" in lines[0] and "8 sd and 0.08 edge density" in lines[0]
    assert "Machado, Oliveira & Fernandes 2009" in lines[1] and "ΔE*ab >= 10" in lines[1]
    assert lines[2].split() == ["band", "grey", "sd", "edges"]
    assert [line.split()[0] for line in lines[3:9]] == [b.id for b in default_style().bands]
    assert lines[-1] == (
        "ok: 6 bands; no pair too alike in greyscale; no colour pair merged under protanopia, "
        "deuteranopia, tritanopia"
    )


def test_style_check_of_a_clashing_lab_file(capsys: pytest.CaptureFixture[str]) -> None:
    path = LAB / "clash.yaml"
    code, out, err = run(["style", "check", str(path)], capsys)
    assert code == 2
    assert out.startswith("greyscale:") and "ok:" not in out
    heads = [line.split(" too alike")[0].split(" merge under")[0] for line in err.splitlines()]
    fields = [(h.split(": ")[0], h.split(": ")[1]) for h in heads]
    assert fields == [
        (f"{path}:5", "bands.lt50/50-74"),
        (f"{path}:6", "bands.lt50.tint/bands.50-74.tint"),
        (f"{path}:6", "bands.lt50.tint/bands.75-99.tint"),
        (f"{path}:13", "bands.50-74.tint/bands.75-99.tint"),
        (f"{path}:13", "bands.50-74.tint/bands.75-99.tint"),
    ]
    assert "'#3C8D2F'/'#C0392B' merge under deuteranopia: ΔE*ab 6.4 < 10" in err


def test_style_check_reports_profile_problems_first(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = run(["style", "check", str(LAB / "bad.yaml")], capsys)
    assert code == 2 and out == ""
    expected = (LAB / "bad.expected").read_text("utf-8").splitlines()
    assert err.splitlines() == [e.replace("{f}", str(LAB / "bad.yaml")) for e in expected]


def test_the_problem_error_is_an_input_error() -> None:
    report = check_style(with_bands({"lt50": {"tint": "#3C8D2F"}, "50-74": {"tint": "#C0392B"}}))
    err = StyleCheckError(report.problems)
    assert err.exit_code == 2 and err.lines() == [str(p) for p in report.problems]


def test_lab_profile_style_passes_when_it_should() -> None:
    profile = load_lab_profile(LAB / "lab.yaml")
    assert check_style(profile.style, source=profile.source, line_of=profile.line).problems == ()
