"""The sheet's boxes and tables: ankle pressures, the planning summary and the change table.

Every value is shown with its basis beside it in small type (the figures it came from, or the
rule that set it). Content is built as plain rows of text runs first (``pressure_entries``,
``planning_table``, ``change_table``), then set into the page by ``draw_table`` and
``draw_box``, which wrap the runs with the shipped font's metrics.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from enum import StrEnum
from functools import partial

from diagram.anatomy import Side
from diagram.assess.compare import ABI_SOURCE, BAND_CHANGES, Change, Comparison
from diagram.assess.planning import CALCIFICATION_ASSUMPTION, Planning, planning_note
from diagram.assess.results import LimbIndices
from diagram.drawing.scene import (
    Box,
    Group,
    Item,
    Line,
    Point,
    Polygon,
    Rect,
    Text,
    Weight,
    make_id,
)
from diagram.drawing.style import NOT_ASSESSED, BandStyle, Style
from diagram.drawing.textmetrics import line_extents, text_width

SIDES = (Side.RIGHT, Side.LEFT)
LABEL_COLUMN_PT = 84.0
CELL_PAD_PT = 3.0
CHIP_PT = 6.0  # band swatch in front of a value
_TOKENS = re.compile(r"\S+\s*|\s+")
PRESSURE_SOURCES = (
    "ABI and TBI categories: 2016 AHA/ACC PAD guideline; ischaemia grade: SVS WIfI (Mills 2014)."
)
PLANNING_SOURCES = (
    "GLASS grades and stage: Global Vascular Guidelines 2019; TASC II: Norgren 2007; runoff "
    "score: SVS (Rutherford 1997)."
)


class Tone(StrEnum):
    """How a run of text is set."""

    VALUE = "value"
    STRONG = "strong"  # the value itself, bold
    BASIS = "basis"  # what it rests on: small, muted
    FLAG = "flag"  # a finding to act on: bold, warning ink


@dataclass(frozen=True)
class Run:
    """A piece of text in one tone."""

    text: str
    tone: Tone = Tone.VALUE


@dataclass(frozen=True)
class Entry:
    """One item of a cell; it starts on a new line, after a band chip or change mark if any."""

    runs: tuple[Run, ...]
    chip: str | None = None  # band id
    mark: str | None = None  # a Change value: the map's change symbol


Cell = tuple[Entry, ...]


@dataclass(frozen=True)
class Row:
    """A table row: a label, then one cell per leg (right, left)."""

    label: str
    cells: tuple[Cell, ...]


@dataclass(frozen=True)
class Table:
    """A titled table with the legs as columns; ``notes`` run across the foot."""

    id: str
    title: tuple[Run, ...]
    rows: tuple[Row, ...]
    notes: tuple[Entry, ...] = ()


def _entry(*runs: Run | str, chip: str | None = None, mark: str | None = None) -> Entry:
    return Entry(tuple(Run(r) if isinstance(r, str) else r for r in runs), chip, mark)


def _basis(text: str) -> Run:
    return Run(text, Tone.BASIS)


def _strong(text: str) -> Run:
    return Run(text, Tone.STRONG)


def _cm(value: float) -> str:
    return f"{round(value, 1):g} cm"


def _signed(value: float, digits: int) -> str:
    return f"{value:+.{digits}f}".replace("-", "\u2212")  # a true minus sign


# --------------------------------------------------------------------------- ankle pressures


def pressure_entries(ix: LimbIndices | None) -> tuple[Entry, ...]:
    """Return the lines of one leg's pressure box: ABI, TBI and ischaemia grade, each with basis."""
    if ix is None:
        none = _basis(" · no pressures recorded")
        return (
            _entry(_strong("ABI not measured"), none),
            _entry(_strong("TBI not measured"), none),
        )
    if ix.abi is None:
        abi = _entry(_strong("ABI not measured"), _basis(f" · {ix.abi_basis}"))
    elif ix.abi_category == "noncompressible":
        abi = _entry(
            _strong(f"ABI {ix.abi:.2f} noncompressible — use TBI"), _basis(f" · {ix.abi_basis}")
        )
    else:
        category = ix.abi_category or ""
        if category == "abnormal" and ix.abi_severity:
            category += ", " + ix.abi_severity.replace("-", "\u2013")
        abi = _entry(_strong(f"ABI {ix.abi:.2f} {category}"), _basis(f" · {ix.abi_basis}"))
    if ix.tbi is None:
        tbi = _entry(_strong("TBI not measured"), _basis(f" · {ix.tbi_basis}"))
    else:
        tbi = _entry(_strong(f"TBI {ix.tbi:.2f} {ix.tbi_category}"), _basis(f" · {ix.tbi_basis}"))
    if ix.ischaemia_grade is None:
        grade = _entry(_strong("Ischaemia (WIfI) not graded"), _basis(f" · {ix.ischaemia_basis}"))
    else:
        grade = _entry(
            _strong(f"Ischaemia (WIfI) grade {ix.ischaemia_grade}"),
            _basis(f" · {ix.ischaemia_basis}"),
        )
    return abi, tbi, grade


# --------------------------------------------------------------------------- planning summary

LEVEL_NAMES = (
    "Inflow (aorta to CFA)",
    "Femoropopliteal",
    "Infrapopliteal",
    "Pedal",
)


def _per_side(
    planning: Mapping[Side, Planning], cell: Callable[[Planning], Cell]
) -> tuple[Cell, ...]:
    return tuple(
        cell(planning[s]) if s in planning else (_entry(_basis("not summarised")),) for s in SIDES
    )


def _pretty(text: str) -> str:
    """Return generated text with the sheet's symbols (>= as ≥, <= as ≤, -> as →)."""
    return text.replace(">=", "\u2265").replace("<=", "\u2264").replace("->", "\u2192")


def _level(p: Planning, k: int, bands: Mapping[str, BandStyle]) -> Cell:
    lv = p.levels[k]
    label = bands[lv.worst_band].label if lv.worst_band in bands else lv.worst_band
    runs: list[Run | str] = [_strong(label)]
    if lv.worst_band == NOT_ASSESSED:  # nothing at this level was assessed
        runs.append(_basis(" · " + ", ".join(lv.not_assessed)))
        return (_entry(*runs, chip=lv.worst_band),)
    if lv.lesion_count == 0 and lv.diseased_cm == 0:
        runs.append(" · no disease \u226550%")
    else:
        count = f"{lv.lesion_count} lesion{'s' if lv.lesion_count != 1 else ''}"
        runs.append(f" · \u226550% over {_cm(lv.diseased_cm)} ({count})")
        if lv.occluded_cm:
            runs.append(f" · occluded {_cm(lv.occluded_cm)}")
    if lv.not_assessed:
        runs.append(_basis(" · not assessed: " + ", ".join(lv.not_assessed)))
    return (_entry(*runs, chip=lv.worst_band),)


def _occlusions(p: Planning) -> Cell:
    if not p.occlusions:
        return (_entry("none"),)
    out = []
    for o in p.occlusions:
        end = (
            Run(f" \u2192 reconstitutes {o.reconstitutes}")
            if o.reconstitutes
            else _basis(" · reconstitution not recorded")
        )
        out.append(
            _entry(_strong(f"{o.segment} from {o.start_cm:g} cm"), f", {_cm(o.length_cm)}", end)
        )
    return tuple(out)


def _runoff(p: Planning) -> Cell:
    by_state: dict[str, list[str]] = {}
    for r in p.runoff:
        by_state.setdefault(r.state, []).append(r.vessel)
    words = {"patent": "patent", "occluded": "occluded", "not-assessed": "not fully assessed"}
    states = "; ".join(f"{', '.join(v)} {words.get(k, k)}" for k, v in by_state.items())
    runs: list[Run | str] = [
        _strong(f"{p.runoff_vessels} of 3"),
        " patent to the ankle",
        _basis(f" ({states})"),
        " · SVS score ",
    ]
    if p.runoff_score is None:
        runs += [_strong("\u2014"), _basis(" (not scored)")]
    else:
        runs += [_strong(f"{p.runoff_score:g}"), _basis(f" = {p.runoff_basis}")]
    return (_entry(*runs),)


def _graded(head: Sequence[Run | str], drivers: Sequence[str]) -> Cell:
    """Return a grade and, on the same flow, what set it."""
    return (_entry(*head, _basis(" · " + "; ".join(_pretty(d) for d in drivers))),)


def _fp(p: Planning) -> Cell:
    return _graded(
        [_strong("not graded" if p.fp_grade is None else f"FP{p.fp_grade}")], p.fp_drivers
    )


def _ip(p: Planning) -> Cell:
    if p.ip_grade is None:
        return _graded([_strong("not graded")], p.ip_drivers)
    head: list[Run | str] = [
        _strong(f"IP{p.ip_grade}"),
        f" · target {p.target}",
        _basis(f" ({p.target_basis})"),
    ]
    return _graded(head, p.ip_drivers)


def _stage(p: Planning) -> Cell:
    head = _entry(_strong(p.stage or "not staged"), _basis(f" · {_pretty(p.stage_basis)}"))
    if p.inflow_significant:
        inflow = _entry(
            Run("inflow disease \u226550%, staged apart", Tone.FLAG),
            _basis(" · " + "; ".join(p.inflow_drivers[1:] or p.inflow_drivers)),
        )
    elif p.inflow_significant is None:
        inflow = _entry(_basis("inflow not assessed (staged apart)"))
    else:
        inflow = _entry(_basis("inflow: no disease \u226550% (staged apart)"))
    return head, inflow


def _tasc(p: Planning) -> Cell:
    return _graded([_strong(p.tasc_fp or "\u2014")], p.tasc_drivers)


def planning_table(planning: Mapping[Side, Planning], bands: Mapping[str, BandStyle]) -> Table:
    """Return the surgeon's summary, per leg: levels, occlusions, runoff, grades, stage, TASC."""
    rows = [
        Row(name, _per_side(planning, partial(_level, k=k, bands=bands)))
        for k, name in enumerate(LEVEL_NAMES)
    ]
    rows += [
        Row("Occlusions", _per_side(planning, _occlusions)),
        Row("Runoff (SVS)", _per_side(planning, _runoff)),
        Row("FP grade (GLASS)", _per_side(planning, _fp)),
        Row("IP grade, target", _per_side(planning, _ip)),
        Row("Limb stage (GLASS)", _per_side(planning, _stage)),
        Row("TASC II FP class", _per_side(planning, _tasc)),
    ]
    if any(CALCIFICATION_ASSUMPTION in p.assumptions for p in planning.values()):

        def calcified(p: Planning) -> Cell:
            if CALCIFICATION_ASSUMPTION in p.assumptions:
                return (
                    _entry(
                        Run("applied", Tone.FLAG), _basis(f" · {_pretty(CALCIFICATION_ASSUMPTION)}")
                    ),
                )
            return (_entry("not applied"),)

        rows.append(Row("Calcification", _per_side(planning, calcified)))
    others = [a for p in planning.values() for a in p.assumptions if a != CALCIFICATION_ASSUMPTION]
    if others:

        def assumed(p: Planning) -> Cell:
            rest = [a for a in p.assumptions if a != CALCIFICATION_ASSUMPTION]
            return (_entry(_basis(_pretty("; ".join(rest)) if rest else "none")),)

        rows.append(Row("Assumptions", _per_side(planning, assumed)))
    return Table(
        "planning",
        (_strong("Planning summary"), _basis(" · from the duplex findings")),
        tuple(rows),
        (_entry(_basis(planning_note())), _entry(_basis(PLANNING_SOURCES))),
    )


# --------------------------------------------------------------------------- change since prior

CHANGE_WORDS: Mapping[str, str] = {
    Change.WORSE: "worse since the prior exam",
    Change.BETTER: "better since the prior exam",
    Change.NEW_OCCLUSION: "new occlusion",
    Change.RESOLVED_OCCLUSION: "occlusion no longer seen",
}


def _band_label(bands: Mapping[str, BandStyle], band: str) -> str:
    return bands[band].label if band in bands else band


def _psv_change(before: float | None, after: float | None, pct: float | None) -> str:
    if before is None or after is None:
        return ""
    text = f"PSV {before:g} → {after:g} cm/s"
    return text + (f" ({_signed(pct, 0)}%)" if pct is not None else "")


def change_table(comparison: Comparison, bands: Mapping[str, BandStyle]) -> Table:
    """Return the change since the prior exam, per leg: bands, lesion PSVs, devices, ABI."""
    interval = (
        "interval unknown"
        if comparison.interval_days is None
        else f"interval {comparison.interval_days} days"
    )

    def segments(side: Side) -> Cell:
        out = []
        for c in comparison.segments:
            if c.side is not side or c.change not in BAND_CHANGES:
                continue
            psv = _psv_change(c.psv_before, c.psv_after, c.psv_change_pct)
            out.append(
                _entry(
                    _strong(c.segment),
                    f" {_band_label(bands, c.before_band)} → {_band_label(bands, c.after_band)}",
                    _basis(f" · {psv}" if psv else ""),
                    mark=c.change.value,
                )
            )
        for kind, words in (
            (Change.NEWLY_ASSESSED, "newly assessed"),
            (Change.NO_LONGER_ASSESSED, "not assessed this time"),
        ):
            segs = [c.segment for c in comparison.segments if c.side is side and c.change is kind]
            if segs:
                out.append(_entry(_basis(f"{words}: {', '.join(segs)}")))
        return tuple(out) or (_entry("no band change"),)

    def lesions(side: Side) -> Cell:
        out = []
        for c in comparison.lesions:
            if c.side is not side:
                continue
            psv = _psv_change(c.psv_before, c.psv_after, c.psv_change_pct) or "PSV not in both"
            bands_moved = (
                f" · {_band_label(bands, c.band_before)} → {_band_label(bands, c.band_after)}"
                if c.band_before != c.band_after
                else ""
            )
            out.append(
                _entry(
                    _strong(f"{c.segment} at {c.from_cm_after:g} cm"),
                    f" {psv}",
                    _basis(bands_moved),
                )
            )
        return tuple(out) or (_entry(_basis("no lesion in both exams")),)

    def devices(side: Side) -> Cell:
        out = [
            _entry(_strong(f"new {d.kind}"), f" {d.from_} → {d.to}")
            if d.change == "new"
            else _entry(f"{d.kind} {d.from_} → {d.to}", _basis(" · no longer recorded"))
            for d in comparison.devices
            if d.side is side
        ]
        return tuple(out) or (_entry("no change"),)

    def abi(side: Side) -> Cell:
        found = [a for a in comparison.abi if a.side is side]
        if not found or found[0].change is None or found[0].before is None:
            return (_entry("\u2014", _basis(f" · {found[0].basis}" if found else "")),)
        a = found[0]
        moved = f"{a.before:.2f} \u2192 {a.after:.2f} ({_signed(a.change or 0.0, 2)})"
        verdict = a.basis.split(": ", 1)[-1]  # the basis repeats the figures before its verdict
        if a.significant:
            flag = Run("significant fall > 0.15", Tone.FLAG)
            return (_entry(_strong(moved)), _entry(flag, _basis(f" ({ABI_SOURCE})")))
        return (_entry(_strong(moved), _basis(f" · {verdict}")),)

    rows = (
        Row("Segments (band)", tuple(segments(s) for s in SIDES)),
        Row("Lesions (PSV)", tuple(lesions(s) for s in SIDES)),
        Row("Stents, grafts", tuple(devices(s) for s in SIDES)),
        Row("ABI", tuple(abi(s) for s in SIDES)),
    )
    notes = tuple(_entry(_basis(n)) for n in comparison.notes)
    return Table(
        "changes",
        (_strong("Change since the prior exam"), _basis(f" · {interval}")),
        rows,
        notes,
    )


# --------------------------------------------------------------------------- change symbol


def change_mark(base: str, kind: str, cx: float, cy: float, style: Style) -> Item:
    """Draw the change symbol centred on (cx, cy).

    Worse: a solid triangle pointing up; better: an open triangle pointing down; new occlusion:
    a solid diamond; occlusion no longer seen: an open diamond. A white rim keeps each mark
    readable over a vessel.
    """
    r = style.change_mark_pt / 2
    if kind in (Change.WORSE, Change.BETTER):
        sign = 1.0 if kind == Change.WORSE else -1.0
        pts: tuple[Point, ...] = (
            (cx, cy - sign * r),
            (cx + r, cy + sign * r * 0.8),
            (cx - r, cy + sign * r * 0.8),
        )
    else:
        pts = ((cx, cy - r * 1.1), (cx + r, cy), (cx, cy + r * 1.1), (cx - r, cy))
    solid = kind in (Change.WORSE, Change.NEW_OCCLUSION)
    return Group(
        base,
        (
            Polygon(f"{base}-rim", pts, fill="#FFFFFF", stroke="#FFFFFF", stroke_width=2.4),
            Polygon(
                f"{base}-mark",
                pts,
                fill=style.change_ink if solid else "#FFFFFF",
                stroke=style.change_ink,
                stroke_width=0.9,
            ),
        ),
        role=f"change {kind}",
    )


# --------------------------------------------------------------------------- setting text


@dataclass(frozen=True)
class _Piece:
    x: float  # from the start of the line
    text: str
    tone: Tone


def _font(tone: Tone, style: Style) -> tuple[float, bool]:
    if tone is Tone.BASIS:
        return style.small_pt, False
    return style.table_pt, tone in (Tone.STRONG, Tone.FLAG)


def line_height(style: Style) -> float:
    """Return the height of one line of a table or box."""
    asc, desc = line_extents(style.table_pt)
    return asc + desc + 1.0


def flow(entry: Entry, width: float, style: Style) -> list[list[_Piece]]:
    """Break an entry's runs into lines no wider than ``width`` (words kept whole)."""
    lead = (CHIP_PT + 3.0) if entry.chip or entry.mark else 0.0
    lines: list[list[_Piece]] = [[]]
    x = lead
    for run in entry.runs:
        size, bold = _font(run.tone, style)
        for token in _TOKENS.findall(run.text):
            word = token.rstrip()
            if word and lines[-1] and x + text_width(word, size, bold) > width:
                lines.append([])
                x = lead
            if not word and not lines[-1]:
                continue  # no space at the start of a line
            line = lines[-1]
            if line and line[-1].tone is run.tone:
                line[-1] = _Piece(line[-1].x, line[-1].text + token, run.tone)
            elif word:  # a piece starts at a glyph (SVG drops leading spaces): spaces only move x
                line.append(_Piece(x, token, run.tone))
            x += text_width(token, size, bold)
    return lines


def _set(
    base: str,
    entry: Entry,
    x: float,
    top: float,
    width: float,
    style: Style,
    bands: Mapping[str, BandStyle],
) -> tuple[list[Item], float]:
    """Return the items of one entry set from ``top``, and the y below it."""
    lh = line_height(style)
    asc, _ = line_extents(style.table_pt)
    items: list[Item] = []
    lines = flow(entry, width, style)
    if entry.chip is not None and entry.chip in bands:
        chip = bands[entry.chip]
        y = top + (lh - CHIP_PT) / 2
        items.append(
            Rect(
                f"{base}-chip",
                x,
                y,
                CHIP_PT,
                CHIP_PT,
                band=entry.chip,
                stroke=chip.outline,
                stroke_width=0.5,
                dash=chip.outline_dash,
            )
        )
    if entry.mark is not None:
        items.append(change_mark(f"{base}-mark", entry.mark, x + CHIP_PT / 2, top + lh / 2, style))
    for i, pieces in enumerate(lines):
        for j, piece in enumerate(pieces):
            size, bold = _font(piece.tone, style)
            ink = {Tone.BASIS: style.muted_ink, Tone.FLAG: style.warning_ink}.get(
                piece.tone, style.text_ink
            )
            items.append(
                Text(
                    f"{base}-{i}-{j}",
                    x + piece.x,
                    top + i * lh + asc,
                    piece.text.rstrip(),
                    size,
                    Weight.BOLD if bold else Weight.NORMAL,
                    fill=ink,
                )
            )
    return items, top + len(lines) * lh


def _set_cell(
    base: str,
    cell: Cell,
    x: float,
    top: float,
    width: float,
    style: Style,
    bands: Mapping[str, BandStyle],
) -> tuple[list[Item], float]:
    items: list[Item] = []
    y = top
    for k, entry in enumerate(cell):
        more, y = _set(f"{base}-{k}", entry, x, y, width, style, bands)
        items.extend(more)
    return items, y


# --------------------------------------------------------------------------- boxes and tables


def draw_box(
    base: str,
    title: str,
    entries: Sequence[Entry],
    box: Box,
    style: Style,
    bands: Mapping[str, BandStyle],
) -> list[Item]:
    """Return a framed box with a bold title line and its entries, set inside ``box``."""
    lh = line_height(style)
    asc, _ = line_extents(style.table_pt)
    x, y = box.x + CELL_PAD_PT, box.y + CELL_PAD_PT
    items: list[Item] = [
        Rect(
            f"{base}-frame",
            box.x,
            box.y,
            box.w,
            box.h,
            fill=style.box_fill,
            stroke=style.rule_ink,
            stroke_width=0.5,
        ),
        Text(f"{base}-title", x, y + asc, title, style.table_pt, Weight.BOLD, fill=style.text_ink),
    ]
    cell, _ = _set_cell(
        f"{base}-line", tuple(entries), x, y + lh, box.w - 2 * CELL_PAD_PT, style, bands
    )
    return [Group(base, (*items, *cell), role="pressure-box")]


def box_height(entries: Sequence[Entry], width: float, style: Style) -> float:
    """Return the height ``draw_box`` needs for ``entries`` at ``width``."""
    lines = sum(len(flow(e, width - 2 * CELL_PAD_PT, style)) for e in entries)
    return (lines + 1) * line_height(style) + 2 * CELL_PAD_PT


@dataclass(frozen=True)
class _Columns:
    label: tuple[float, float]
    cells: tuple[tuple[float, float], ...]  # (x, width) per leg: right, then left

    @staticmethod
    def of(x0: float, x1: float) -> _Columns:
        first = x0 + LABEL_COLUMN_PT
        half = (x1 - first) / 2
        cells = ((first, half - CELL_PAD_PT * 2), (first + half, half - CELL_PAD_PT))
        return _Columns((x0, LABEL_COLUMN_PT - CELL_PAD_PT), cells)


def row_heights(table: Table, x0: float, x1: float, style: Style) -> list[float]:
    """Return the height of each row of ``table`` set between ``x0`` and ``x1``."""
    cols = _Columns.of(x0, x1)
    lh = line_height(style)
    out = []
    for row in table.rows:
        lines = [
            sum(len(flow(e, w, style)) for e in cell)
            for cell, (_, w) in zip(row.cells, cols.cells, strict=True)
        ]
        label_lines = len(flow(_entry(_basis(row.label)), cols.label[1], style))
        out.append(max([*lines, label_lines]) * lh + 2.0)
    return out


def table_head_height(style: Style) -> float:
    """Return the height of a table's title and column heads."""
    return 2 * line_height(style) + 3.0


def notes_height(table: Table, x0: float, x1: float, style: Style) -> float:
    """Return the height of a table's foot notes."""
    lines = sum(len(flow(e, x1 - x0, style)) for e in table.notes)
    return lines * line_height(style) + (2.0 if lines else 0.0)


def draw_table(
    table: Table,
    rows: range,
    x0: float,
    x1: float,
    top: float,
    style: Style,
    bands: Mapping[str, BandStyle],
    *,
    with_notes: bool,
    continued: bool = False,
) -> tuple[list[Item], float]:
    """Return the items of ``rows`` of ``table`` set from ``top`` (title and heads first)."""
    cols = _Columns.of(x0, x1)
    lh = line_height(style)
    asc, _ = line_extents(style.table_pt)
    base = table.id + ("-cont" if continued else "")
    title = table.title + ((_basis(" (continued)"),) if continued else ())
    items, y = _set(f"{base}-title", Entry(title), x0, top, x1 - x0, style, bands)
    for (x, _), name in zip(cols.cells, ("Right", "Left"), strict=True):
        items.append(
            Text(
                f"{base}-head-{name}",
                x,
                y + asc,
                name,
                style.table_pt,
                Weight.BOLD,
                fill=style.text_ink,
            )
        )
    y += lh + 1.0
    items.append(Line(f"{base}-rule", ((x0, y), (x1, y)), style.rule_ink, 0.6))
    y += 2.0
    heights = row_heights(table, x0, x1, style)
    for i in rows:
        row = table.rows[i]
        rid = make_id(base, "row", i)
        label, _ = _set(
            f"{rid}-label",
            _entry(_basis(row.label)),
            *cols.label[:1],
            y,
            cols.label[1],
            style,
            bands,
        )
        items.extend(label)
        for k, (cell, (x, w)) in enumerate(zip(row.cells, cols.cells, strict=True)):
            cell_items, _ = _set_cell(f"{rid}-{k}", cell, x, y, w, style, bands)
            items.extend(cell_items)
        y += heights[i]
        items.append(Line(f"{rid}-rule", ((x0, y - 1.0), (x1, y - 1.0)), style.table_rule_ink, 0.4))
    if with_notes:
        y += 1.0
        for k, entry in enumerate(table.notes):
            more, y = _set(f"{base}-note-{k}", entry, x0, y, x1 - x0, style, bands)
            items.extend(more)
    return [Group(base, tuple(items), role="table")], y
