"""The sheet's header block: the lab or site, who the sheet is about, the exam.

Each field appears only when the study has it. A teaching sheet shows only the case; a further
page repeats who the sheet is about on one line and says it continues.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from diagram.assess.results import Assessment
from diagram.drawing.scene import Anchor, Box, CaseHeader, Item, Line, Text, Weight, make_id
from diagram.drawing.sheet.blocks import BLOCK_GAP_PT
from diagram.drawing.style import Style
from diagram.drawing.textmetrics import ellipsize, line_extents, text_width

KIND = "Lower-limb arterial duplex"
# A teaching document's only metadata: fixed, so it names no patient, lab, place or date.
TEACHING_TITLE = f"{KIND} · teaching case"


def sheet_title(assessment: Assessment, style: Style, case: CaseHeader | None) -> str:
    """Return the sheet's title for a document's metadata: the kind of sheet and the lab.

    Never an identifier: no patient, no accession, no case id (a teaching sheet says only
    that it is one).
    """
    if case is not None:
        return TEACHING_TITLE
    lab = style.lab_name or assessment.study.exam.site
    return f"{KIND} · {lab}" if lab else KIND


def _title_line(
    title: str | None, right: str, style: Style, x0: float, x1: float, y: float
) -> tuple[list[Item], float]:
    """Return a bold title at the left and a muted note at the right; the y below them."""
    asc, desc = line_extents(style.header_title_pt, True)
    baseline = y + asc
    items: list[Item] = [
        Text(
            "header-kind",
            x1,
            baseline,
            right,
            style.header_pt,
            anchor=Anchor.END,
            fill=style.muted_ink,
        )
    ]
    if title:
        room = x1 - x0 - text_width(right, style.header_pt) - 12
        shown = ellipsize(title, style.header_title_pt, room, True)
        items.append(
            Text(
                "header-site",
                x0,
                baseline,
                shown,
                style.header_title_pt,
                Weight.BOLD,
                fill=style.text_ink,
            )
        )
    return items, baseline + desc + 2


_GAP = " " * 5


def _fields(
    rows: Sequence[Sequence[tuple[str, str | None]]], style: Style, x0: float, x1: float, y: float
) -> tuple[list[Item], float]:
    """Return rows of "name value" pairs (only those with a value), wrapping at ``x1``."""
    items: list[Item] = []
    h_asc, h_desc = line_extents(style.header_pt)
    line_h = h_asc + h_desc + 1.5
    for r, row in enumerate(rows):
        present = [(k, v) for k, v in row if v]
        if not present:
            continue
        x, baseline = x0, y + h_asc
        for k, (name, value) in enumerate(present):
            name_w = text_width(name + "  ", style.header_pt)
            if k and x + name_w + 40 > x1:
                x, y = x0, y + line_h
                baseline = y + h_asc
            items.append(
                Text(
                    make_id("header", r, k, "name"),
                    x,
                    baseline,
                    name,
                    style.header_pt,
                    fill=style.muted_ink,
                )
            )
            shown = ellipsize(str(value), style.header_pt, x1 - x - name_w, True)
            items.append(
                Text(
                    make_id("header", r, k, "value"),
                    x + name_w,
                    baseline,
                    shown,
                    style.header_pt,
                    Weight.BOLD,
                    fill=style.text_ink,
                )
            )
            # five spaces to the next field, so that the row is one line of text in the SVG
            x += (
                name_w
                + text_width(shown, style.header_pt, True)
                + text_width(_GAP, style.header_pt)
            )
        y += line_h
    return items, y


def _rule(
    items: list[Item], style: Style, x0: float, x1: float, y: float
) -> tuple[list[Item], float]:
    y += 2
    items.append(Line("header-rule", ((x0, y), (x1, y)), style.rule_ink, 0.5))
    return items, y + BLOCK_GAP_PT


def _set(
    assessment: Assessment,
    style: Style,
    x0: float,
    x1: float,
    y: float,
    case: CaseHeader | None,
    page_number: int,
) -> tuple[list[Item], float]:
    """Return the header items set from ``y`` between ``x0`` and ``x1``, and the y below them."""
    more = page_number > 1
    right = KIND if not more else f"{KIND} · continued"
    if case is not None:
        items, y = _title_line(f"Teaching case {case.case_id}", right, style, x0, x1, y)
        row = (
            ("Year", None if case.year is None else str(case.year)),
            ("Age", case.age),
            ("Sex", case.sex),
            ("Free text", case.free_text),
        )
        fields, y = _fields((row,), style, x0, x1, y)
        return _rule(items + fields, style, x0, x1, y)
    study = assessment.study
    p, e = study.patient, study.exam
    items, y = _title_line(style.lab_name or study.exam.site, right, style, x0, x1, y)
    who = (
        ("Patient", p.name),
        ("ID", p.id),
        ("Born", p.birth_date.isoformat() if p.birth_date else None),
        ("Sex", p.sex),
    )
    exam = (("Exam", e.date.isoformat() if e.date else None), ("Accession", e.accession))
    rows = ((*who[:3], exam[0]),) if more else (who, exam, (("Indication", e.indication),))
    fields, y = _fields(rows, style, x0, x1, y)
    return _rule(items + fields, style, x0, x1, y)


@dataclass(frozen=True)
class Header:
    """The header of page ``page_number``; with ``case``, a teaching sheet's header."""

    assessment: Assessment
    style: Style
    case: CaseHeader | None = None
    page_number: int = 1

    def height(self, width: float) -> float:
        """Return the header's height at ``width``, the gap below it included."""
        return _set(self.assessment, self.style, 0.0, width, 0.0, self.case, self.page_number)[1]

    def draw(self, box: Box) -> list[Item]:
        """Return the header set from the top of ``box``."""
        return _set(
            self.assessment, self.style, box.x, box.right, box.y, self.case, self.page_number
        )[0]
