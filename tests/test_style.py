"""Band styles: lighter to darker with severity, a texture of their own, not-assessed unmistakable."""

from __future__ import annotations

import dataclasses
import itertools
import re

import pytest

from diagram.drawing.style import NOT_ASSESSED, SEVERITY_ORDER, Hatch, Style, default_style


def relative_luminance(colour: str) -> float:
    """Return the relative luminance of an sRGB colour (WCAG 2.1, definition of the term)."""

    def linear(channel: int) -> float:
        c = channel / 255
        return c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4

    r, g, b = (int(colour[i : i + 2], 16) for i in (1, 3, 5))
    return 0.2126 * linear(r) + 0.7152 * linear(g) + 0.0722 * linear(b)


@pytest.mark.parametrize(
    ("colour", "expected"),
    [("#FFFFFF", 1.0), ("#000000", 0.0), ("#808080", 0.2158605)],  # WCAG 2.1 worked values
)
def test_relative_luminance_reference_points(colour: str, expected: float) -> None:
    assert relative_luminance(colour) == pytest.approx(expected, abs=1e-6)


def lightness(luminance: float) -> float:
    """Return CIE 1976 L* of a relative luminance (CIE 15:2004, white Y = 1)."""
    t = (
        luminance ** (1 / 3)
        if luminance > (6 / 29) ** 3
        else luminance / (3 * (6 / 29) ** 2) + 4 / 29
    )
    return 116 * t - 16


@pytest.mark.parametrize(("y", "l_star"), [(1.0, 100.0), (0.18418652, 50.0), (0.0, 0.0)])
def test_lightness_reference_points(y: float, l_star: float) -> None:
    assert lightness(y) == pytest.approx(l_star, abs=1e-4)  # CIE 15:2004: mid grey L* 50


def test_tints_darken_strictly_with_severity() -> None:
    bands = default_style().band_map()
    lum = [relative_luminance(bands[b].tint) for b in SEVERITY_ORDER]
    for milder, worse in itertools.pairwise(lum):
        assert milder > worse, lum
        # design margin, own choice (not a published figure): neighbouring tints at least
        # 10 units of L* apart so that each step still shows in a greyscale print
        assert lightness(milder) - lightness(worse) >= 10, [round(lightness(v), 1) for v in lum]


def test_every_band_has_its_own_texture() -> None:
    style = default_style()
    hatches = [b.hatch for b in style.bands]
    assert len(set(hatches)) == len(hatches)
    assert style.band_map()["normal"].hatch is Hatch.NONE
    assert style.band_map()["occluded"].hatch is Hatch.SOLID


def test_occluded_is_solid_and_darkest() -> None:
    bands = default_style().band_map()
    occluded = relative_luminance(bands["occluded"].ink)
    assert occluded < 0.02
    assert all(occluded <= relative_luminance(b.tint) for b in bands.values())


def test_not_assessed_cannot_pass_for_normal() -> None:
    bands = default_style().band_map()
    na, normal = bands[NOT_ASSESSED], bands["normal"]
    assert na.outline_dash and not normal.outline_dash  # dashed edge against a solid one
    assert na.hatch is Hatch.RINGS and normal.hatch is Hatch.NONE
    assert na.spacing_pt >= 2 * 2 * na.weight_pt  # sparse: rings cover well under half the tile


@pytest.mark.parametrize("field", ["tint", "ink", "outline"])
def test_colours_are_hex(field: str) -> None:
    for band in default_style().bands:
        assert re.fullmatch(r"#[0-9A-F]{6}", getattr(band, field)), band


def test_style_is_frozen_data() -> None:
    style = default_style()
    with pytest.raises(dataclasses.FrozenInstanceError):
        style.label_pt = 9  # type: ignore[misc, unused-ignore]
    assert default_style() == style
    bigger = dataclasses.replace(style, label_pt=8.0)  # how a lab profile will override it
    assert bigger.label_pt == 8.0 and style.label_pt == 7.0


@pytest.mark.parametrize(
    ("band_id", "rank", "look", "hatch"),
    [
        ("lt50", None, None, Hatch.DOTS),  # a house band keeps its own look
        ("isr-50-69", 2, "50-74", Hatch.LINES),  # another set's band: its named look
        ("graft-high", 3, None, Hatch.CROSS),  # no look: the house band of its rank
        ("graft-occl", 9, None, Hatch.SOLID),  # rank beyond the ladder: the worst look
        ("odd", -1, None, Hatch.RINGS),  # not assessed
        ("odd", None, "no-such-look", Hatch.RINGS),
    ],
)
def test_band_for(band_id: str, rank: int | None, look: str | None, hatch: Hatch) -> None:
    found = default_style().band_for(band_id, rank, "Label", look)
    assert (found.id, found.label, found.hatch) == (band_id, "Label", hatch)


def test_band_for_keeps_the_house_label_when_none_is_given() -> None:
    assert default_style().band_for("75-99").label == "75-99%"
    assert isinstance(default_style(), Style)
