"""What the sheet's boxes and tables say: ankle pressures, the planning summary, the changes.

Every value is shown with its basis beside it in small type (the figures it came from, or the
rule that set it). Content is built here as plain rows of text runs (``pressure_entries``,
``planning_table``, ``change_table``); ``diagram.drawing.sheet.pressure`` and
``diagram.drawing.sheet.tableblock`` set them on the page.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from functools import partial

from diagram.anatomy import Side
from diagram.assess.compare import ABI_SOURCE, BAND_CHANGES, Change, Comparison
from diagram.assess.grafts import GRAFT_LOW_FLOW_CM_S
from diagram.assess.planning import CALCIFICATION_ASSUMPTION, Planning, planning_note
from diagram.assess.results import GraftResult, LimbIndices
from diagram.drawing.sheet.cells import Cell, Entry, Row, Run, Table, Tone
from diagram.drawing.sheet.cells import basis as _basis
from diagram.drawing.sheet.cells import entry as _entry
from diagram.drawing.sheet.cells import strong as _strong
from diagram.drawing.style import NOT_ASSESSED, BandStyle

SIDES = (Side.RIGHT, Side.LEFT)
PRESSURE_SOURCES = (
    "ABI and TBI categories: 2016 AHA/ACC PAD guideline; ischaemia grade: SVS WIfI (Mills 2014)."
)
PLANNING_SOURCES = (
    "GLASS grades and stage: Global Vascular Guidelines 2019; TASC II: Norgren 2007; runoff "
    "score: SVS (Rutherford 1997)."
)


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
    if ix.abi is None and ix.abi_category == "noncompressible":  # recorded noncompressible
        abi = _entry(_strong("ABI noncompressible — use TBI"), _basis(f" · {ix.abi_basis}"))
    elif ix.abi is None:
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
    elif not ix.ischaemia_applies:  # a CLTI tool: not printed for a claudicant's leg
        grade = _entry(
            _strong("Ischaemia (WIfI) not applied"), _basis(f" · {ix.ischaemia_context}")
        )
    else:
        grade = _entry(
            _strong(f"Ischaemia (WIfI) grade {ix.ischaemia_grade}"),
            _basis(f" · {ix.ischaemia_basis}; {_pretty(ix.ischaemia_context)}"),
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
    unseen = len(lv.not_assessed)
    if lv.worst_band == NOT_ASSESSED:  # nothing at this level was assessed
        runs: list[Run | str] = [
            _strong("Not assessed"),
            _basis(f" · {unseen} of {lv.segment_count} segments: " + ", ".join(lv.not_assessed)),
        ]
        return (_entry(*runs, chip=lv.worst_band),)
    runs = []
    if unseen:  # never a bare "Normal" over segments that were not examined
        runs += [Run("Partly assessed", Tone.FLAG), " · ", _strong(label), " where seen"]
    else:
        runs.append(_strong(label))
    if lv.lesion_count == 0 and lv.diseased_cm == 0:
        runs.append(" · no disease \u226550%")
    else:
        count = f"{lv.lesion_count} lesion{'s' if lv.lesion_count != 1 else ''}"
        runs.append(f" · \u226550% over {_cm(lv.diseased_cm)} ({count})")
        if lv.occluded_cm:
            runs.append(f" · occluded {_cm(lv.occluded_cm)}")
    if unseen:
        where = ", ".join(lv.not_assessed)
        runs.append(_basis(f" · {unseen} of {lv.segment_count} not assessed: {where}"))
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
    unseen = len(p.runoff_unassessed)
    if not unseen:
        head: list[Run | str] = [_strong(f"{p.runoff_vessels} of 3"), " patent to the ankle"]
    elif not p.runoff_vessels and "occluded" not in by_state:
        head = [_strong("Not assessed"), " to the ankle"]  # not "0 of 3": nothing was seen
    else:
        head = [
            _strong(f"{p.runoff_vessels} patent"),
            f", {unseen} not assessed",
            " to the ankle",
        ]
    runs: list[Run | str] = [*head, _basis(f" ({states})"), " · SVS score "]
    if p.runoff_score is None:
        runs += [_strong("\u2014"), _basis(" (not scored)")]
    else:
        runs += [_strong(f"{p.runoff_score:g}"), _basis(f" = {p.runoff_basis}")]
    return (_entry(*runs),)


def _graded(head: Sequence[Run | str], drivers: Sequence[str]) -> Cell:
    """Return a grade and, on the same flow, what set it."""
    return (_entry(*head, _basis(" · " + "; ".join(_pretty(d) for d in drivers))),)


def _provisional(grade: str, provisional: bool) -> list[Run | str]:
    """Return a grade's head; one resting on unseen segments says so (it may be higher)."""
    head: list[Run | str] = [_strong(grade)]
    if provisional:
        head.append(Run(" provisional", Tone.FLAG))
    return head


def _fp(p: Planning) -> Cell:
    if p.fp_grade is None:
        return _graded([_strong("not graded")], p.fp_drivers)
    return _graded(_provisional(f"FP{p.fp_grade}", p.fp_provisional), p.fp_drivers)


def _ip(p: Planning) -> Cell:
    if p.ip_grade is None:
        return _graded([_strong("not graded")], p.ip_drivers)
    head: list[Run | str] = [
        *_provisional(f"IP{p.ip_grade}", p.ip_provisional),
        f" · target {p.target}",
        _basis(f" ({p.target_basis})"),
    ]
    return _graded(head, p.ip_drivers)


def _stage(p: Planning) -> Cell:
    head = _entry(
        *_provisional(p.stage or "not staged", p.stage_provisional),
        _basis(f" · {_pretty(p.stage_basis)}"),
    )
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
    return _graded(_provisional(p.tasc_fp or "\u2014", p.tasc_provisional), p.tasc_drivers)


def _grafts(grafts: Sequence[GraftResult], bands: Mapping[str, BandStyle]) -> Cell:
    """Return each bypass graft's risk with its basis; a low graft flow velocity is flagged."""
    if not grafts:
        return (_entry("none"),)
    out = []
    for g in grafts:
        label = bands[g.band].label if g.band in bands else g.band
        runs: list[Run | str] = [_strong(f"{g.conduit} {g.from_} \u2192 {g.to}: {label}")]
        worst = g.basis.split("; graft flow velocity")[0]
        runs.append(_basis(f" · {_pretty(worst)}"))
        if g.flow_velocity is not None and g.flow_velocity < GRAFT_LOW_FLOW_CM_S:
            low = f" · graft flow velocity {g.flow_velocity:g} cm/s, below 45"
            runs.append(Run(low, Tone.FLAG))
        elif g.flow_velocity is not None:
            runs.append(_basis(f" · graft flow velocity {g.flow_velocity:g} cm/s"))
        out.append(_entry(*runs, chip=g.band))
    return tuple(out)


def planning_table(
    planning: Mapping[Side, Planning],
    bands: Mapping[str, BandStyle],
    grafts: Mapping[Side, Sequence[GraftResult]] | None = None,
) -> Table:
    """Return the surgeon's summary, per leg: levels, occlusions, runoff, grades, stage, TASC.

    ``grafts`` adds a row with each bypass graft's surveillance risk and graft flow velocity.
    """
    rows = [
        Row(name, _per_side(planning, partial(_level, k=k, bands=bands)))
        for k, name in enumerate(LEVEL_NAMES)
    ]
    if grafts and any(grafts.values()):
        cells = tuple(_grafts(grafts.get(s, ()), bands) for s in SIDES)
        rows.append(Row("Bypass graft", cells))
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


def _band_label(bands: Mapping[str, BandStyle], band: str) -> str:
    return bands[band].label if band in bands else band


def _psv_change(before: float | None, after: float | None, pct: float | None) -> str:
    if before is None or after is None:
        return ""
    text = f"PSV {before:g} → {after:g} cm/s"
    return text + (f" ({_signed(pct, 0)}%)" if pct is not None else "")


def _segment_changes(comparison: Comparison, bands: Mapping[str, BandStyle], side: Side) -> Cell:
    """Return one leg's segments whose band changed, and those seen in one exam only."""
    out = []
    for c in comparison.segments:
        if c.side is not side or c.change not in BAND_CHANGES:
            continue
        psv = _psv_change(c.psv_before, c.psv_after, c.psv_change_pct)
        out.append(
            _entry(
                _strong(c.segment),
                f" {_band_label(bands, c.band_before)} → {_band_label(bands, c.band_after)}",
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


def _lesion_changes(comparison: Comparison, bands: Mapping[str, BandStyle], side: Side) -> Cell:
    """Return one leg's lesions seen in both exams, with their PSV change."""
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


def _device_changes(comparison: Comparison, side: Side) -> Cell:
    """Return one leg's stents and grafts new or no longer recorded."""
    out = [
        _entry(_strong(f"new {d.kind}"), f" {d.from_} → {d.to}")
        if d.change == "new"
        else _entry(f"{d.kind} {d.from_} → {d.to}", _basis(" · no longer recorded"))
        for d in comparison.devices
        if d.side is side
    ]
    return tuple(out) or (_entry("no change"),)


def _abi_change(comparison: Comparison, side: Side) -> Cell:
    """Return one leg's ABI change, flagged when it fell significantly."""
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


def change_table(comparison: Comparison, bands: Mapping[str, BandStyle]) -> Table:
    """Return the change since the prior exam, per leg: bands, lesion PSVs, devices, ABI."""
    interval = (
        "interval unknown"
        if comparison.interval_days is None
        else f"interval {comparison.interval_days} days"
    )

    rows = (
        Row("Segments (band)", tuple(_segment_changes(comparison, bands, s) for s in SIDES)),
        Row("Lesions (PSV)", tuple(_lesion_changes(comparison, bands, s) for s in SIDES)),
        Row("Stents, grafts", tuple(_device_changes(comparison, s) for s in SIDES)),
        Row("ABI", tuple(_abi_change(comparison, s) for s in SIDES)),
    )
    notes = tuple(_entry(_basis(n)) for n in comparison.notes)
    return Table(
        "changes",
        (_strong("Change since the prior exam"), _basis(f" · {interval}")),
        rows,
        notes,
    )
