"""The text blocks at the foot of a sheet: measurement notes, the caution, the footer.

Each is set so that its last line ends at the foot of its box. The caution is the fixed text of
``diagram.caution`` on every page; the footer names the criteria sets (never cut: they wrap at a
width that leaves room for any page number, so every page of a sheet has the same footer).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from diagram.assess.results import Assessment
from diagram.caution import CAUTION
from diagram.drawing.scene import Anchor, Box, CaseHeader, Group, Item, Text, make_id
from diagram.drawing.sheet.blocks import text_lines, text_lines_height
from diagram.drawing.style import Style
from diagram.drawing.textmetrics import line_extents, text_width, wrap
from diagram.reading.study import Study


@dataclass(frozen=True)
class Caution:
    """The fixed caution: a schematic aid, not a substitute for the images or the physician."""

    style: Style

    def _lines(self, width: float) -> list[tuple[str, bool]]:
        return [(t, False) for t in wrap(CAUTION, self.style.caution_pt, width)]

    def height(self, width: float) -> float:
        """Return the caution's height at ``width``."""
        return text_lines_height(len(self._lines(width)), self.style.caution_pt)

    def draw(self, box: Box) -> list[Item]:
        """Return the caution set to end at the foot of ``box``."""
        lines = self._lines(box.w)
        style = self.style
        return text_lines("caution", lines, style.caution_pt, box.x, box.bottom, style.text_ink)[0]


def _free_text(study: Study) -> list[str]:
    """Return the study's own words (identifiers, notes, comments) a teaching sheet never shows."""
    p, e = study.patient, study.exam
    words = [p.name, p.id, e.accession, e.site, e.operator, e.referrer, e.indication, study.notes]
    words += [e.study_uid]
    for limb in study.limbs.values():
        words += [f.comment for f in limb.segments.values()]
        words += [les.comment for les in limb.lesions]
    return sorted({w.strip() for w in words if w and len(w.strip()) >= 3})


@dataclass(frozen=True)
class Notes:
    """The measurement notes: ``extra`` lines in full, the first few warnings, a count.

    ``warnings=False`` (the map-only sheet) shows only ``extra``. A teaching sheet (``case``)
    leaves out any line that quotes the study's own text.
    """

    assessment: Assessment
    style: Style
    extra: Sequence[str] = ()
    case: CaseHeader | None = None
    warnings: bool = True

    def _lines(self, width: float) -> list[tuple[str, bool]]:
        messages = [f.message for f in self.assessment.warnings] if self.warnings else []
        withheld = 0
        if self.case is not None:
            quoted = _free_text(self.assessment.study)
            kept = [m for m in messages if not any(q.casefold() in m.casefold() for q in quoted)]
            withheld, messages = len(messages) - len(kept), kept
        if not messages and not self.extra and not withheld:
            return []
        shown = messages[: self.style.max_warnings]
        lines: list[tuple[str, bool]] = [("Measurement notes", True)]
        for message in (*self.extra, *shown):
            wrapped = wrap(message, self.style.small_pt, width - 10)
            lines.extend(
                (("• " if k == 0 else "  ") + text, False) for k, text in enumerate(wrapped)
            )
        if len(messages) > len(shown):
            lines.append((f"+{len(messages) - len(shown)} more in the results file", False))
        if withheld:
            lines.append((f"{withheld} note(s) left out: they quote the study's own text", False))
        return lines

    def height(self, width: float) -> float:
        """Return the notes' height at ``width`` (0 with nothing to say)."""
        return text_lines_height(len(self._lines(width)), self.style.small_pt)

    def draw(self, box: Box) -> list[Item]:
        """Return the notes set to end at the foot of ``box``."""
        lines = self._lines(box.w)
        if not lines:
            return []
        style = self.style
        return text_lines("notes", lines, style.small_pt, box.x, box.bottom, style.warning_ink)[0]


@dataclass(frozen=True)
class NextPage:
    """The line that sends the reader to page 2 for the tables that did not fit."""

    table_ids: Sequence[str]
    style: Style

    def height(self, width: float) -> float:
        """Return the height of the one line."""
        return text_lines_height(1, self.style.table_pt)

    def draw(self, box: Box) -> list[Item]:
        """Return the line set to end at the foot of ``box``."""
        names = {"planning": "planning summary", "changes": "change since the prior exam"}
        what = " and ".join(names.get(t, t) for t in self.table_ids)
        line = [(f"{what[0].upper()}{what[1:]}: page 2.", True)]
        style = self.style
        items, _ = text_lines("next-page", line, style.table_pt, box.x, box.bottom, style.text_ink)
        return [Group("next-page", tuple(items), role="next-page")]


@dataclass(frozen=True)
class Footer:
    """The footer of page ``page`` of ``count``: criteria sets left; page, note, version right."""

    assessment: Assessment
    style: Style
    version: str
    note: str | None = None
    page: tuple[int, int] = (1, 1)

    def _right(self) -> str:
        v = self.version
        return f"limbchart {v}" if not self.note else f"{self.note} · limbchart {v}"

    def _criteria_lines(self, width: float) -> tuple[str, ...]:
        small = self.style.small_pt
        room = width - text_width(f"page 99 of 99 · {self._right()}", small) - 12
        a = self.assessment
        sets = a.criteria_used or ((a.criteria_name, a.criteria_title, ""),)
        left = "Criteria: " + "; ".join(f"{title} ({name})" for name, title, _ in sets)
        return wrap(left, small, room)

    def height(self, width: float) -> float:
        """Return the footer's height at ``width`` (the same on every page of a sheet)."""
        asc, desc = line_extents(self.style.small_pt)
        line_h = asc + desc + 1.0
        return asc + desc + (len(self._criteria_lines(width)) - 1) * line_h

    def draw(self, box: Box) -> list[Item]:
        """Return the footer set to end at the foot of ``box``."""
        style = self.style
        asc, desc = line_extents(style.small_pt)
        line_h = asc + desc + 1.0
        right = self._right()
        if self.page[1] > 1:
            right = f"page {self.page[0]} of {self.page[1]} · {right}"
        lines = self._criteria_lines(box.w)
        baseline = box.bottom - desc
        items: list[Item] = [
            Text(
                make_id("footer", "criteria", k) if k else "footer-criteria",
                box.x,
                baseline - (len(lines) - 1 - k) * line_h,
                text,
                style.small_pt,
                fill=style.muted_ink,
            )
            for k, text in enumerate(lines)
        ]
        items.append(
            Text(
                "footer-version",
                box.right,
                baseline,
                right,
                style.small_pt,
                anchor=Anchor.END,
                fill=style.muted_ink,
            )
        )
        return items
