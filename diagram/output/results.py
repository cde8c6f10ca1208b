"""Assessment ➜ the results document (JSON-ready dict) and the plain-text table of ``check``."""

from __future__ import annotations

import dataclasses
import json
from enum import Enum
from typing import TYPE_CHECKING, Any

from diagram import anatomy
from diagram.anatomy import Side
from diagram.assess.results import (
    Assessment,
    GraftResult,
    LesionResult,
    LimbIndices,
    Reference,
    SegmentResult,
    Span,
    StentResult,
)
from diagram.caution import CAUTION
from diagram.reading.plain import CRITERIA_KEYS, exam_data, patient_data
from diagram.reading.study import Study

if TYPE_CHECKING:
    from diagram.assess.compare import Comparison

RESULTS_FORMAT = 1


def _num(value: float | None) -> float | int | None:
    if value is None:
        return None
    return int(value) if float(value).is_integer() else round(float(value), 3)


def _ref(ref: Reference | None) -> dict[str, Any] | None:
    if ref is None:
        return None
    return {
        "psv": _num(ref.psv),
        "source": ref.source,
        "segment": ref.segment,
        "diseased": ref.diseased,
        "basis": ref.describe(),
    }


def _span(span: Span) -> dict[str, Any]:
    return {"segment": span.segment, "start_cm": _num(span.start_cm), "end_cm": _num(span.end_cm)}


def _segment(r: SegmentResult) -> dict[str, Any]:
    return {
        "band": r.band,
        "psv": _num(r.psv),
        "edv": _num(r.edv),
        "vr": _num(r.vr),
        "reference": _ref(r.reference),
        "waveform": r.waveform,
        "basis": r.basis,
        "assessed": r.assessed,
        "lesions": list(r.lesions),
    }


def _lesion(r: LesionResult) -> dict[str, Any]:
    return {
        "at": r.at,
        "band": r.band,
        "psv": _num(r.psv),
        "edv": _num(r.edv),
        "vr": _num(r.vr),
        "vr_source": r.vr_source,
        "reference": _ref(r.reference),
        "from_cm": _num(r.from_cm),
        "length_cm": _num(r.length_cm),
        "occluded": r.occluded,
        "reconstitutes": r.reconstitutes,
        "reconstitution": _span(r.reconstitution) if r.reconstitution else None,
        "extent": [_span(s) for s in r.spans],
        "basis": r.basis,
    }


def _stent(r: StentResult) -> dict[str, Any]:
    return {"from": r.from_, "to": r.to, "extent": [_span(s) for s in r.spans]}


def _graft(r: GraftResult) -> dict[str, Any]:
    return {
        "conduit": r.conduit,
        "from": r.from_,
        "to": r.to,
        "band": r.band,
        "flow_velocity": _num(r.flow_velocity),
        "basis": r.basis,
        "sites": [
            {
                "site": g.site,
                "band": g.band,
                "psv": _num(g.psv),
                "vr": _num(g.vr),
                "reference": _ref(g.reference),
                "basis": g.basis,
            }
            for g in r.sites
        ],
    }


def _limb(assessment: Assessment, side: Side) -> dict[str, Any]:
    limb = assessment.limbs[side]
    out: dict[str, Any] = {
        "segments": {seg: _segment(limb.segments[seg]) for seg in anatomy.SEGMENT_IDS},
        "lesions": [_lesion(les) for les in limb.lesions],
        "stents": [_stent(s) for s in limb.stents],
        "grafts": [_graft(g) for g in limb.grafts],
    }
    plan = assessment.planning.get(side)
    if plan is not None:
        out["planning"] = _plain(plan)
    ix = assessment.indices.get(side)
    if ix is not None:
        out.update(
            {
                "abi": _num(ix.abi),
                "abi_category": ix.abi_category,
                "abi_severity": ix.abi_severity,
                "abi_basis": ix.abi_basis,
                "tbi": _num(ix.tbi),
                "tbi_category": ix.tbi_category,
                "tbi_basis": ix.tbi_basis,
                "ischaemia_grade": ix.ischaemia_grade,
                "ischaemia_basis": ix.ischaemia_basis,
            }
        )
    return out


def _plain(value: Any) -> Any:
    """Return a frozen result value as JSON-ready data (``from_`` is written ``from``)."""
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {
            f.name.rstrip("_"): _plain(getattr(value, f.name)) for f in dataclasses.fields(value)
        }
    if isinstance(value, Enum):
        return value.value
    if isinstance(value, tuple | list):
        return [_plain(v) for v in value]
    if isinstance(value, float):
        return _num(value)
    return value


def _study_echo(study: Study) -> dict[str, Any]:
    exam = exam_data(study.exam)
    return {
        "patient": patient_data(study.patient),
        "exam": {k: v for k, v in exam.items() if k not in CRITERIA_KEYS},
    }


def results_document(
    assessment: Assessment, *, version: str, identified: bool = True
) -> dict[str, Any]:
    """Return the results as plain data; the study's identifiers only when ``identified``."""
    doc: dict[str, Any] = {
        "results_format": RESULTS_FORMAT,
        "tool": {"name": "limbchart", "version": version},
        "caution": CAUTION,
    }
    if identified:
        doc["study"] = _study_echo(assessment.study)
    doc.update(
        {
            "criteria": {
                "name": assessment.criteria_name,
                "title": assessment.criteria_title,
                "source": assessment.criteria_source,
                "used": [
                    {"name": n, "title": t, "origin": o} for n, t, o in assessment.criteria_used
                ],
            },
            "bands": [
                {"id": b.id, "label": b.label, "look": b.look or None} for b in assessment.bands
            ],
            "limbs": {side.value: _limb(assessment, side) for side in (Side.RIGHT, Side.LEFT)},
            "comparison": _plain(assessment.comparison) if assessment.comparison else None,
            "warnings": [
                {
                    "code": w.code,
                    "side": w.side.value if w.side else None,
                    "segment": w.segment,
                    "message": w.message,
                }
                for w in assessment.warnings
            ],
        }
    )
    return doc


def results_json(doc: dict[str, Any] | list[dict[str, Any]]) -> bytes:
    """Return the bytes of a results file: ``check --json`` prints what ``-o x.json`` writes.

    The list ``check --json`` prints for several studies is written the same way.

    UTF-8, two-space indent, one final newline. A lone surrogate (from a JSON study's
    ``"\\ud800"`` escape) is no UTF-8 character: then every non-ASCII character is written as a
    JSON escape instead, the value exactly as it came in.
    """
    try:
        return (json.dumps(doc, indent=2, ensure_ascii=False) + "\n").encode("utf-8")
    except UnicodeEncodeError:
        return (json.dumps(doc, indent=2) + "\n").encode("ascii")


def results_schema() -> dict[str, Any]:
    """Return the JSON Schema of the results document (closed objects, every field described)."""
    from diagram.output.results_schema import build_results_schema

    return build_results_schema(RESULTS_FORMAT)


def _fmt(value: float | None) -> str:
    if value is None:
        return "-"
    return f"{value:g}" if not isinstance(value, float) or value.is_integer() else f"{value:.2f}"


Row = tuple[str, ...]


def _graft_rows(side: Side, g: GraftResult) -> list[Row]:
    flow = f"graft flow {g.flow_velocity:g} cm/s" if g.flow_velocity is not None else ""
    basis = "; ".join(x for x in (g.basis, flow) if x)
    rows: list[Row] = [
        (side.value, f"{g.conduit} graft {g.from_}-{g.to}", g.band, "-", "-", "-", basis)
    ]
    for site in g.sites:
        where = f"  graft {site.site.replace('_', ' ')}"
        rows.append((side.value, where, site.band, _fmt(site.psv), "-", _fmt(site.vr), site.basis))
    return rows


def _index_rows(side: Side, ix: LimbIndices | None) -> list[Row]:
    if ix is None or (ix.abi is None and ix.tbi is None):
        return []
    rows: list[Row] = [
        (side.value, "ABI", ix.abi_category or "-", "-", "-", _fmt(ix.abi), ix.abi_basis)
    ]
    if ix.tbi is not None:
        rows.append(
            (side.value, "TBI", ix.tbi_category or "-", "-", "-", _fmt(ix.tbi), ix.tbi_basis)
        )
    return rows


def _limb_rows(assessment: Assessment, side: Side) -> list[Row]:
    """Return one limb's rows: segments, lesions, stents, grafts, then its indices."""
    limb = assessment.limbs[side]
    rows: list[Row] = []
    for seg in anatomy.SEGMENT_IDS:
        r = limb.segments[seg]
        unpaired = seg in anatomy.UNPAIRED
        if r.assessed and not (unpaired and side is Side.LEFT):
            # the unpaired aorta is listed once, with no side, among the right side's rows
            where = "-" if unpaired else side.value
            rows.append((where, seg, r.band, _fmt(r.psv), _fmt(r.edv), _fmt(r.vr), r.basis))
    for les in limb.lesions:
        where = f"{les.at} lesion {les.index + 1}"
        if les.length_cm is not None:
            where += f" ({les.length_cm:g} cm)"
        rows.append(
            (side.value, where, les.band, _fmt(les.psv), _fmt(les.edv), _fmt(les.vr), les.basis)
        )
    for stent in limb.stents:
        extent = (
            f"{stent.spans[0].segment}-{stent.spans[-1].segment}" if stent.spans else stent.from_
        )
        rows.append((side.value, f"stent {extent}", "-", "-", "-", "-", "in-stent criteria"))
    for g in limb.grafts:
        rows.extend(_graft_rows(side, g))
    rows.extend(_index_rows(side, assessment.indices.get(side)))
    return rows


def results_table(assessment: Assessment) -> str:
    """Return the grading as a plain-text table, one row per assessed segment and lesion."""
    rows: list[Row] = [("side", "segment", "band", "PSV", "EDV", "Vr", "basis")]
    for side in (Side.RIGHT, Side.LEFT):
        rows.extend(_limb_rows(assessment, side))
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]) - 1)]
    lines = [
        "  ".join(c.ljust(w) for c, w in zip(r[:-1], widths, strict=False)) + "  " + r[-1]
        for r in rows
    ]
    out = [f"criteria: {assessment.criteria_title} ({assessment.criteria_name})", *lines]
    out += unassessed_lines(assessment)
    if assessment.comparison is not None:
        out += comparison_lines(assessment.comparison)
    for w in assessment.warnings:
        where = " ".join(x for x in (w.side.value if w.side else None, w.segment) if x)
        out.append(f"warning [{w.code}] {where}: {w.message}")
    return "\n".join(out)


def unassessed_lines(assessment: Assessment) -> list[str]:
    """Return the segments not assessed, by name: the aorta once, then each leg's."""
    groups: list[tuple[str, list[str]]] = []
    aorta = [s for s in anatomy.UNPAIRED if not assessment.limbs[Side.RIGHT].segments[s].assessed]
    if aorta:
        groups.append(("aorta", aorta))
    for side in Side:
        segs = assessment.limbs[side].segments
        found = [s for s in anatomy.SEGMENT_IDS if s not in anatomy.UNPAIRED]
        missing = [s for s in found if not segs[s].assessed]
        if missing:
            groups.append((side.value, missing))
    total = sum(len(names) for _, names in groups)
    if not total:
        return []
    lines = [f"not assessed: {total} segments"]
    lines += [f"  {where}: {', '.join(names)}" for where, names in groups]
    return lines


def comparison_lines(comparison: Comparison) -> list[str]:
    """Return the change since the prior exam as text, with what the sheet's change table shows."""
    from diagram.assess.compare import ABI_SOURCE, BAND_CHANGES, Change

    interval = (
        "interval unknown"
        if comparison.interval_days is None
        else f"interval {comparison.interval_days} days"
    )
    out = [f"change since the prior exam ({interval}):"]
    for c in comparison.segments:
        if c.change in BAND_CHANGES:
            psv = _psv_moved(c.psv_before, c.psv_after, c.psv_change_pct)
            out.append(
                f"  {c.side.value} {c.segment}: {c.band_before} -> {c.band_after} "
                f"({c.change.value}){'; ' + psv if psv else ''}"
            )
    for side in Side:
        for kind, words in (
            (Change.NEWLY_ASSESSED, "newly assessed"),
            (Change.NO_LONGER_ASSESSED, "not assessed this time"),
        ):
            segs = [c.segment for c in comparison.segments if c.side is side and c.change is kind]
            if segs:
                out.append(f"  {side.value} {words}: {', '.join(segs)}")
    for les in comparison.lesions:
        psv = _psv_moved(les.psv_before, les.psv_after, les.psv_change_pct) or "PSV not in both"
        moved = (
            f"; {les.band_before} -> {les.band_after}" if les.band_before != les.band_after else ""
        )
        out.append(
            f"  {les.side.value} lesion {les.segment} at {les.from_cm_after:g} cm: {psv}{moved}"
        )
    for d in comparison.devices:
        what = "new" if d.change == "new" else "no longer recorded:"
        out.append(f"  {d.side.value} {what} {d.kind} {d.from_} -> {d.to}")
    for a in comparison.abi:
        if a.change is None or a.before is None or a.after is None:
            out.append(f"  {a.side.value} ABI: {a.basis}")
        else:
            flag = f"significant fall > 0.15 ({ABI_SOURCE})" if a.significant else "not significant"
            out.append(
                f"  {a.side.value} ABI {a.before:.2f} -> {a.after:.2f} ({a.change:+.2f}): {flag}"
            )
    out += [f"  note: {note}" for note in comparison.notes]
    if len(out) == 1:
        out.append("  no change recorded")
    return out


def _psv_moved(before: float | None, after: float | None, pct: float | None) -> str:
    if before is None or after is None:
        return ""
    change = f" ({pct:+.0f}%)" if pct is not None else ""  # whole percent, as on the sheet
    return f"PSV {before:g} -> {after:g} cm/s{change}"
