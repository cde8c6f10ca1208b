"""The style gallery: one page showing every band and symbol of a style, for a lab to review.

The top of the page shows each band large, in colour and as a greyscale print renders it
(ITU-R BT.601 luma), with its texture settings. Below, a fictional specimen study is assessed,
laid out and rendered by the same code as any sheet (``layout`` with the style, ``render_svg``),
so its map shows the bands on vessels of real widths and every symbol the sheet draws: lesion
ticks, an occlusion with its reconstitution point, a stent, a bypass graft, and the changes since
an earlier specimen exam. The specimen is drawn on the lab's template, on the first leg it covers.
"""

from __future__ import annotations

import re
from dataclasses import replace
from pathlib import Path
from typing import TYPE_CHECKING

from diagram.anatomy import vessel_key
from diagram.drawing.paper import PAGES
from diagram.drawing.style import BandStyle, Style, default_style
from diagram.errors import ExportError

if TYPE_CHECKING:
    from diagram.drawing.labprofile import LabProfile
    from diagram.drawing.scene import Item, Scene
    from diagram.drawing.template.mapfile import Template

MARGIN_PT = 28.0
PANEL_PT = 166.0  # height of the band panel above the map
FORMATS = ("svg", "pdf", "png")
SPECIMEN_NOTE = "Style gallery: a fictional specimen, not a patient."

# (segment, finding) of the specimen; a lesion's finding is its YAML mapping without "at".
_SEGMENTS = (
    ("CFA", "{psv: 120, waveform: triphasic}"),
    ("PFA", "{psv: 90, waveform: triphasic}"),
    ("SFA-P", "{psv: 100, waveform: triphasic}"),
    ("POP-BK", "{psv: 60, waveform: biphasic}"),
    ("TPT", "{psv: 56, waveform: biphasic}"),
    ("ATA-P", "{psv: 40, waveform: monophasic}"),
    ("PTA-P", "{psv: 52, waveform: biphasic}"),
    ("PTA-M", "{psv: 50, waveform: biphasic}"),
    ("PTA-D", "{psv: 46, waveform: biphasic}"),
    ("DPA", "{psv: 24, waveform: monophasic}"),
    ("PLA", "{psv: 30, waveform: biphasic}"),
)
# Vr 1.6 (<50%), 2.8 (50-74%), 4.5 (75-99%) on the native criteria, and an occlusion.
_LESIONS = (
    ("SFA-P", "{from_cm: 3, length_cm: 2, psv: 160, proximal_psv: 100}"),
    ("SFA-M", "{from_cm: 2, length_cm: 3, psv: 280, edv: 40, proximal_psv: 100}"),
    ("POP-AK", "{from_cm: 2, length_cm: 2, psv: 450, edv: 90, proximal_psv: 100}"),
    ("ATA-M", "{occluded: true, length_cm: 8, reconstitutes: ATA-D}"),
)
_PRIOR_LESIONS = (("SFA-M", "{from_cm: 2, length_cm: 3, psv: 170, proximal_psv: 100}"),)
_STENT = ("SFA-D", "SFA-D")
_GRAFT = ("CFA", "POP-BK")


def specimen_yaml(side: str, covered: set[str], *, prior: bool = False) -> str:
    """Return the specimen study (or its earlier exam) on one leg, as a study file."""

    def on_map(*segments: str) -> bool:
        return all(vessel_key(side, s) in covered for s in segments)

    lesions = [
        f"      - {{at: {seg}, {finding[1:]}"
        for seg, finding in (_PRIOR_LESIONS if prior else _LESIONS)
        if on_map(seg, *re.findall(r"reconstitutes: ([\w-]+)", finding))
    ]
    lines = [
        "format: 1",
        "patient: {id: SPECIMEN-1}",
        f"exam: {{date: {'2025-05-02' if prior else '2026-05-04'}, criteria: native}}",
        "limbs:",
        f"  {side}:",
        "    segments:",
        *(f"      {seg}: {finding}" for seg, finding in _SEGMENTS if on_map(seg)),
        *(["    lesions:", *lesions] if lesions else []),
    ]
    if not prior and on_map(*_STENT):
        lines.append(f"    stents: [{{from: {_STENT[0]}, to: {_STENT[1]}}}]")
    if not prior and on_map(*_GRAFT):
        lines.append(f"    grafts: [{{conduit: vein, from: {_GRAFT[0]}, to: {_GRAFT[1]}}}]")
    lines.append(f'notes: "{SPECIMEN_NOTE}"')
    return "\n".join(lines) + "\n"


def greyscale(colour: str) -> str:
    """Return ``#rrggbb`` as the grey a monochrome print gives it (ITU-R BT.601 luma)."""
    r, g, b = (int(colour[i : i + 2], 16) for i in (1, 3, 5))
    y = round((299 * r + 587 * g + 114 * b) / 1000)
    return f"#{y:02X}{y:02X}{y:02X}"


def _grey_band(band: BandStyle, band_id: str) -> BandStyle:
    return replace(
        band,
        id=band_id,
        tint=greyscale(band.tint),
        ink=greyscale(band.ink),
        outline=greyscale(band.outline),
    )


def _panel(style: Style, title: str, width: float) -> tuple[list[Item], list[BandStyle]]:
    """Return the band panel's items and the band styles they name."""
    from diagram.drawing.scene import Rect, Text, Weight

    items: list[Item] = [
        Text(
            "gallery-title", MARGIN_PT, MARGIN_PT + 8, title, 11.0, Weight.BOLD, fill=style.text_ink
        ),
        Text(
            "gallery-note",
            MARGIN_PT,
            MARGIN_PT + 20,
            "Each band in colour (upper) and as a greyscale print shows it (lower). The map is a "
            "fictional specimen drawn with this style.",
            style.small_pt,
            fill=style.muted_ink,
        ),
    ]
    bands: list[BandStyle] = []
    column = (width - 2 * MARGIN_PT) / len(style.bands)
    sw, sh = min(column - 10, 64.0), 20.0
    for i, band in enumerate(style.bands):
        x, y = MARGIN_PT + i * column, MARGIN_PT + 34
        colour_id, grey_id = f"gallery-{band.id}", f"gallery-grey-{band.id}"
        bands += [replace(band, id=colour_id), _grey_band(band, grey_id)]
        for k, (band_id, outline) in enumerate(
            ((colour_id, band.outline), (grey_id, greyscale(band.outline)))
        ):
            items.append(
                Rect(
                    f"gallery-swatch-{k}-{i}",
                    x,
                    y + k * (sh + 4),
                    sw,
                    sh,
                    stroke=outline,
                    stroke_width=0.6,
                    band=band_id,
                    dash=band.outline_dash,
                )
            )
        texts = (
            (band.label, style.legend_pt, Weight.BOLD),
            (f"{band.id}: {band.hatch}", style.small_pt, Weight.NORMAL),
            (
                f"{band.spacing_pt:g} pt, {band.angle_deg:g}°, {band.weight_pt:g} pt",
                style.small_pt,
                Weight.NORMAL,
            ),
            (f"tint {band.tint}", style.small_pt, Weight.NORMAL),
            (f"ink {band.ink}", style.small_pt, Weight.NORMAL),
        )
        ty = y + 2 * sh + 14
        for k, (text, size, weight) in enumerate(texts):
            items.append(
                Text(f"gallery-text-{k}-{i}", x, ty, text, size, weight, fill=style.text_ink)
            )
            ty += size + 3
    return items, bands


def gallery_svg(
    style: Style | None = None,
    template: Template | None = None,
    *,
    lab_name: str | None = None,
    page: str | None = None,
) -> str:
    """Return the gallery page as SVG text (A4 unless ``page`` is ``letter``)."""
    from diagram.output.svg import render_svg

    return render_svg(gallery_scene(style, template, lab_name=lab_name, page=page))


def gallery_scene(
    style: Style | None = None,
    template: Template | None = None,
    *,
    lab_name: str | None = None,
    page: str | None = None,
) -> Scene:
    """Return the gallery page: the band panel, and the specimen's sheet as a scaled inset."""
    from diagram._version import __version__
    from diagram.assess import assess
    from diagram.drawing.layout import layout
    from diagram.drawing.scene import Box, Inset, Rect, Scene
    from diagram.drawing.template.mapfile import load_template
    from diagram.reading.load import load_study_text

    style = style or default_style()
    tpl = template or load_template()
    side = tpl.sides[0]
    covered = set(tpl.vessels)
    study = load_study_text(specimen_yaml(side, covered), "specimen.yaml", ".yaml")
    earlier = load_study_text(
        specimen_yaml(side, covered, prior=True), "specimen-prior.yaml", ".yaml"
    )
    assessment = assess(study, prior=earlier)
    map_scene = layout(
        assessment, tpl, page="map", version=__version__, generated_note=SPECIMEN_NOTE, style=style
    )
    spec = PAGES["letter" if page == "letter" else "a4"]
    width, height = spec.width_pt, spec.height_pt
    title = "Style gallery" + (f" — {lab_name}" if lab_name else "")
    items, bands = _panel(style, title, width)
    page_rect = Rect("gallery-page", 0, 0, width, height, fill="#FFFFFF")
    whole = Box(0, 0, width, height)
    # The specimen's own sheet, scaled to the room under the panel.
    room_w, room_h = width - 2 * MARGIN_PT, height - PANEL_PT - MARGIN_PT
    scale = min(1.0, room_w / map_scene.width_pt, room_h / map_scene.height_pt)
    x = (width - map_scene.width_pt * scale) / 2
    return Scene(
        page="gallery",
        width_pt=width,
        height_pt=height,
        unit="mm" if page != "letter" else "in",
        font_family=style.font_family,
        bands=tuple(bands),
        items=(page_rect, *items),
        map_box=whole,
        vessel_box=whole,
        label_boxes=(),
        pressure_regions=(),
        insets=(Inset("gallery-specimen", x, PANEL_PT, scale, map_scene),),
    )


def write_gallery(
    out: str | Path,
    profile: LabProfile | None = None,
    *,
    template: str | Path | None = None,
    overwrite: bool = False,
) -> Path:
    """Write the gallery of the profile's style (the default style without one) to ``out``.

    An existing file at ``out`` is refused unless ``overwrite``.
    """
    from diagram.drawing.template.mapfile import load_template
    from diagram.output.export import (
        Drawing,
        ExportOptions,
        export,
        format_for,
        refuse_existing,
    )

    path = Path(out)
    fmt = format_for(path)
    if fmt not in FORMATS:
        raise ExportError(f"{path}: the gallery is written as {', '.join(FORMATS)}, not {fmt}.")
    refuse_existing(path, overwrite)
    chosen = template if template is not None else (profile.template if profile else None)
    scene = gallery_scene(
        profile.style if profile else None,
        load_template(chosen),
        lab_name=profile.lab_name if profile else None,
        page=profile.page if profile else None,
    )
    options = ExportOptions(png_dpi=150.0)
    drawing = Drawing(results={}, scene=scene)
    return export(drawing, path, fmt, options, overwrite=overwrite)
