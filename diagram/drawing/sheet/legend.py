"""The legend block: a swatch per band in use, the map's symbols in use, the velocity note.

Swatches flow in rows across the width; a band of the stent or graft set carries its device's
mark on its swatch (``device_mark``), so it never reads as a native band. The note (how
velocities and ratios read, and where the pressure categories come from) sits under them. The
symbols are drawn here as the map draws them: lesion-extent ticks, the reconstitution ring, the
stent mesh, the graft, the change marks.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from diagram.anatomy import Side
from diagram.assess.results import Assessment
from diagram.drawing.map.devices import device_mark
from diagram.drawing.map.marks import CHANGE_WORDS, change_mark
from diagram.drawing.scene import (
    Box,
    Circle,
    Group,
    Item,
    Line,
    PathCommand,
    PathItem,
    Rect,
    Text,
    make_id,
)
from diagram.drawing.sheet.blocks import text_lines, text_lines_height
from diagram.drawing.style import NOT_ASSESSED, BandStyle, Style
from diagram.drawing.textmetrics import text_width, wrap

VELOCITY_NOTE = (
    "PSV, EDV in cm/s. Vr = PSV at the lesion ÷ PSV of the reference segment upstream "
    "(basis in the results file)."
)
SWATCH_W, SWATCH_H, ROW_H = 22.0, 9.0, 14.0

_Placed = tuple[int, float, tuple[str, str, str]]  # row, x, (what, key, label)

SYMBOL_LABELS: Mapping[str, str] = {
    "ticks": "lesion extent",
    "reconstitution": "reconstitution",
    "stent": "stent",
    "graft": "bypass graft",
    **CHANGE_WORDS,
}


def symbols_used(assessment: Assessment, changes: Sequence[str] = ()) -> list[str]:
    """Return the map symbols in use, in legend order (``changes``: change kinds marked)."""
    lesions = [les for limb in assessment.limbs.values() for les in limb.lesions]
    limbs = [assessment.study.limb(side) for side in (Side.RIGHT, Side.LEFT)]
    used = {
        "ticks": any(les.spans for les in lesions),
        "reconstitution": any(les.reconstitution is not None for les in lesions),
        "stent": any(limb.stents for limb in limbs),
        "graft": any(limb.grafts for limb in limbs),
    }
    return [kind for kind in SYMBOL_LABELS if used.get(kind) or kind in changes]


def _symbol(
    kind: str, x: float, y: float, w: float, h: float, style: Style, bands: Mapping[str, BandStyle]
) -> Item:
    """Draw a legend symbol in the box (x, y, w, h)."""
    base = make_id("legend", "symbol", kind)
    lumen = bands.get("normal", bands[NOT_ASSESSED])
    tube = Rect(
        f"{base}-tube", x, y + 1, w, h - 2, fill=lumen.tint, stroke=lumen.outline, stroke_width=0.5
    )
    mid = y + h / 2
    parts: list[Item]
    if kind == "ticks":
        parts = [
            tube,
            *(
                Line(f"{base}-{k}", ((tx, y - 1), (tx, y + h + 1)), style.tick_ink, style.tick_pt)
                for k, tx in enumerate((x + 5, x + w - 5))
            ),
        ]
    elif kind == "reconstitution":
        cx = x + w / 2
        parts = [
            tube,
            Line(f"{base}-bar", ((cx, y - 2), (cx, y + h + 2)), style.marker_ink, 1.0),
            Circle(f"{base}-ring", cx, mid, h / 2 + 1, stroke=style.marker_ink, stroke_width=1.0),
        ]
    elif kind == "stent":
        step = w / 8
        zig = tuple((x + k * step, mid + (2.6 if k % 2 else -2.6)) for k in range(9))
        zag = tuple((px, 2 * mid - py) for px, py in zig)
        parts = [
            tube,
            Line(f"{base}-a", zig, style.stent_ink, style.stent_pt),
            Line(f"{base}-b", zag, style.stent_ink, style.stent_pt),
        ]
    elif kind in CHANGE_WORDS:
        return change_mark(base, kind, x + w / 2, mid, style)
    else:  # graft
        cmds: tuple[PathCommand, ...] = (("M", (x, mid)), ("L", (x + w, mid)))
        parts = [
            PathItem(
                f"{base}-casing", cmds, stroke=style.graft_ink, stroke_width=style.graft_pt + 1.4
            ),
            PathItem(f"{base}-lumen", cmds, stroke=style.graft_fill, stroke_width=style.graft_pt),
        ]
    return Group(base, tuple(parts), role="legend-symbol")


@dataclass(frozen=True)
class Legend:
    """The legend of ``bands`` (in order) and ``symbols``, with ``note`` under them."""

    bands: Sequence[BandStyle]
    symbols: Sequence[str]
    style: Style
    all_bands: Mapping[str, BandStyle]
    note: str = VELOCITY_NOTE

    def _entries(self, x0: float, x1: float) -> tuple[list[_Placed], int]:
        """Return each entry's row and x, and the number of rows."""
        entries = [("band", b.id, b.label) for b in self.bands]
        entries += [("symbol", kind, SYMBOL_LABELS[kind]) for kind in self.symbols]
        placed: list[_Placed] = []
        row, x = 0, x0
        for entry in entries:
            w = SWATCH_W + 4 + text_width(entry[2], self.style.legend_pt) + 12
            if x > x0 and x + w > x1:
                row, x = row + 1, x0
            placed.append((row, x, entry))
            x += w
        return placed, row + 1

    def _note_lines(self, width: float) -> list[tuple[str, bool]]:
        return [(t, False) for t in wrap(self.note, self.style.small_pt, width)]

    def height(self, width: float) -> float:
        """Return the legend's height at ``width``: the rule, the swatch rows, the note."""
        rows = self._entries(0.0, width)[1]
        note_h = text_lines_height(len(self._note_lines(width)), self.style.small_pt)
        return note_h + 2 + rows * ROW_H + 3

    def draw(self, box: Box) -> list[Item]:
        """Return the rule and the legend set to end at the foot of ``box``."""
        style = self.style
        x0, x1 = box.x, box.right
        placed, rows = self._entries(x0, x1)
        lines = self._note_lines(x1 - x0)
        note_items, note_top = text_lines(
            "legend-note", lines, style.small_pt, x0, box.bottom, style.muted_ink
        )
        top = note_top - 2 - rows * ROW_H
        items: list[Item] = []
        for r, ex, (what, key, label) in placed:
            sy = top + r * ROW_H + (ROW_H - SWATCH_H) / 2
            if what == "band":
                b = self.all_bands[key]
                items.append(
                    Rect(
                        make_id("legend", "swatch", key),
                        ex,
                        sy,
                        SWATCH_W,
                        SWATCH_H,
                        band=key,
                        stroke=b.outline,
                        stroke_width=0.6,
                        dash=b.outline_dash,
                    )
                )
                swatch = Box(ex, sy, SWATCH_W, SWATCH_H)
                items += device_mark(make_id("legend", "swatch", key), b.device, swatch, style)
            else:
                items.append(_symbol(key, ex, sy, SWATCH_W, SWATCH_H, style, self.all_bands))
            items.append(
                Text(
                    make_id("legend", "label", what, key),
                    ex + SWATCH_W + 4,
                    sy + SWATCH_H / 2 + 0.36 * style.legend_pt,
                    label,
                    style.legend_pt,
                    fill=style.text_ink,
                )
            )
        rule = Line("legend-rule", ((x0, top - 3), (x1, top - 3)), style.rule_ink, 0.5)
        return [rule, Group("legend", (*items, *note_items), role="legend")]
