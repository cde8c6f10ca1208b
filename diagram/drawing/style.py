"""The look of the map: band styles (tint plus its own texture) and the sheet's sizes and inks.

Every band has a tint *and* a texture so that the map reads correctly printed in greyscale and by
colour-blind readers: the tints fall in lightness with severity (normal lightest, occluded darkest),
and each band has a hatch of its own (none, dots, diagonal lines, cross-hatch, solid). Not assessed
is white with sparse open rings and a dashed outline, so it can never be mistaken for a normal
lumen. The palette and the hatch code are this project's own.

A style is plain data; a lab profile may later replace any field (``dataclasses.replace``).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from enum import StrEnum


class Hatch(StrEnum):
    """The texture drawn over a band's tint."""

    NONE = "none"
    DOTS = "dots"
    RINGS = "rings"  # open circles: reserved for "not assessed"
    LINES = "lines"
    CROSS = "cross"
    SOLID = "solid"  # the whole area in the ink colour


@dataclass(frozen=True)
class BandStyle:
    """How one band is painted: tint, texture, and the tube outline around it."""

    id: str
    label: str
    tint: str  # "#rrggbb" background of the lumen
    hatch: Hatch
    spacing_pt: float  # repeat of the texture
    angle_deg: float  # rotation of the texture (lines, cross)
    weight_pt: float  # line width, or dot radius for dots and rings
    ink: str  # "#rrggbb" colour of the texture
    outline: str  # "#rrggbb" colour of the tube's edge
    outline_dash: tuple[float, ...] = ()  # empty: a solid edge
    device: str = ""  # "stent" or "graft": a band of that set, marked as its device is drawn


# Severity ladder of the default set; a criteria set with other band ids is mapped onto it by rank.
SEVERITY_ORDER: tuple[str, ...] = ("normal", "lt50", "50-74", "75-99", "occluded")
NOT_ASSESSED = "not-assessed"


def _band(
    band_id: str,
    label: str,
    tint: str,
    hatch: Hatch,
    spacing: float,
    angle: float,
    weight: float,
    ink: str,
    outline: str,
    dash: tuple[float, ...] = (),
) -> BandStyle:
    return BandStyle(band_id, label, tint, hatch, spacing, angle, weight, ink, outline, dash)


def _default_bands() -> tuple[BandStyle, ...]:
    # Tints fall in lightness with severity (relative luminance about 0.91, 0.62, 0.40, 0.14,
    # 0.013; a test pins the order); textures add the second, colour-free cue. Tiles of 3.3 pt
    # or more keep the texture visible on screens (72-96 dpi) in every renderer tried; at
    # 2.2-2.6 pt librsvg and poppler drew flat tints there (tests/test_cairo_render.py).
    return (
        # id          label           tint       hatch        spacing angle weight ink  outline
        _band("normal", "Normal", "#F2F6F3", Hatch.NONE, 4.0, 0.0, 0.0, "#4F6660", "#4F6660"),
        _band("lt50", "<50%", "#ECCB6A", Hatch.DOTS, 3.9, 0.0, 0.75, "#5E4A0E", "#5E4A0E"),
        _band("50-74", "50-74%", "#E59A4E", Hatch.LINES, 3.6, 45.0, 0.82, "#4A2608", "#4A2608"),
        _band("75-99", "75-99%", "#A94A36", Hatch.CROSS, 3.3, 45.0, 0.75, "#2B0E07", "#2B0E07"),
        _band("occluded", "Occluded", "#241C20", Hatch.SOLID, 4.0, 0.0, 0.0, "#120D10", "#000000"),
        # Not assessed: white, sparse open rings, dashed edge - never read as a normal lumen.
        _band(
            NOT_ASSESSED,
            "Not assessed",
            "#FFFFFF",
            Hatch.RINGS,
            4.4,
            0.0,
            0.95,
            "#6F787A",
            "#6C7476",
            (1.6, 1.2),
        ),
    )


@dataclass(frozen=True)
class Style:
    """Band styles, fonts, sizes and inks of a sheet. Sizes in points."""

    bands: tuple[BandStyle, ...] = field(default_factory=_default_bands)
    lab_name: str | None = None  # heads the sheet in place of the study's exam.site
    font_family: str = "DejaVu Sans"
    text_ink: str = "#1A1A1A"
    muted_ink: str = "#555555"
    header_title_pt: float = 11.0
    header_pt: float = 8.0
    label_pt: float = 7.0
    legend_pt: float = 7.0
    small_pt: float = 6.5
    caution_pt: float = 7.0  # the fixed caution line is never the smallest text
    side_mark_pt: float = 14.0
    line_gap_pt: float = 1.6  # vertical gap between stacked labels
    label_pad_pt: float = 1.0  # room kept around a label's text box
    silhouette_fill: str = "#F6F6F4"
    silhouette_stroke: str = "#BDBDB8"
    silhouette_width_pt: float = 0.6
    tube_pt_per_mm: float = 0.8  # vessel width on the sheet per mm of nominal diameter
    tube_min_pt: float = 5.0  # thinnest vessel still showing its texture
    tube_max_pt: float = 14.0
    tube_outline_pt: float = 0.6
    tick_ink: str = "#111111"
    tick_pt: float = 0.8
    leader_ink: str = "#707070"
    leader_pt: float = 0.45
    marker_ink: str = "#0B3C8C"  # reconstitution symbol: a blue that stays dark in greyscale
    stent_ink: str = "#2F2F2F"
    stent_pt: float = 0.45
    graft_ink: str = "#2F2F2F"
    graft_fill: str = "#FFFFFF"
    graft_pt: float = 5.0  # the graft lumen: as wide as the thinnest vessel, its texture seen
    rule_ink: str = "#9A9A9A"
    warning_ink: str = "#7A2E00"
    max_warnings: int = 6
    table_pt: float = 7.0  # values in the pressure boxes and tables; their basis in small_pt
    table_rule_ink: str = "#CFCFCA"
    box_fill: str = "#FBFBF9"
    # Change since the prior exam: one dark ink (reads in greyscale); the shape tells the kind.
    change_ink: str = "#7C1A10"
    change_mark_pt: float = 7.0

    def band_map(self) -> Mapping[str, BandStyle]:
        """Return the band styles by id."""
        return {b.id: b for b in self.bands}

    def band_for(
        self,
        band_id: str,
        rank: int | None = None,
        label: str | None = None,
        look: str | None = None,
    ) -> BandStyle:
        """Return the style of ``band_id``.

        A band of another criteria set is drawn with the house look it names (``look``), else
        with the default band of its severity ``rank`` (-1 not assessed, 0 normal ... 4 occluded).
        """
        bands = self.band_map()
        if band_id in bands:
            found = bands[band_id]
        elif look and look in bands:
            found = bands[look]
        elif rank is None or rank < 0:
            found = bands[NOT_ASSESSED]
        else:
            found = bands[SEVERITY_ORDER[min(rank, len(SEVERITY_ORDER) - 1)]]
        if found.id != band_id or (label is not None and label != found.label):
            found = replace(found, id=band_id, label=label if label is not None else found.label)
        return found


def default_style() -> Style:
    """Return the project's default style."""
    return Style()
