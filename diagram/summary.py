"""Assessment ➜ the results document (JSON-ready dict) and the plain-text table of ``check``."""

from __future__ import annotations

from typing import Any

from diagram import anatomy
from diagram.anatomy import Side
from diagram.assess.results import Assessment, LesionResult, Reference, SegmentResult, Span

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


def results_document(assessment: Assessment, *, version: str) -> dict[str, Any]:
    """Return the results as plain data (identifiers are not included)."""
    return {
        "results_format": RESULTS_FORMAT,
        "tool": {"name": "limbchart", "version": version},
        "criteria": {
            "name": assessment.criteria_name,
            "title": assessment.criteria_title,
            "source": assessment.criteria_source,
        },
        "bands": [{"id": b.id, "label": b.label} for b in assessment.bands],
        "limbs": {
            side.value: {
                "segments": {seg: _segment(limb.segments[seg]) for seg in anatomy.SEGMENT_IDS},
                "lesions": [_lesion(les) for les in limb.lesions],
            }
            for side, limb in sorted(
                assessment.limbs.items(), key=lambda kv: kv[0].value != "right"
            )
        },
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


def _fmt(value: float | None) -> str:
    if value is None:
        return "-"
    return f"{value:g}" if not isinstance(value, float) or value.is_integer() else f"{value:.2f}"


def results_table(assessment: Assessment) -> str:
    """Return the grading as a plain-text table, one row per assessed segment and lesion."""
    rows: list[tuple[str, ...]] = [("side", "segment", "band", "PSV", "EDV", "Vr", "basis")]
    for side in (Side.RIGHT, Side.LEFT):
        limb = assessment.limbs[side]
        for seg in anatomy.SEGMENT_IDS:
            r = limb.segments[seg]
            if not r.assessed:
                continue
            rows.append((side.value, seg, r.band, _fmt(r.psv), _fmt(r.edv), _fmt(r.vr), r.basis))
        for les in limb.lesions:
            where = f"{les.at} lesion {les.index + 1}"
            if les.length_cm is not None:
                where += f" ({les.length_cm:g} cm)"
            rows.append(
                (side.value, where, les.band, _fmt(les.psv), _fmt(les.edv), _fmt(les.vr), les.basis)
            )
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]) - 1)]
    lines = [
        "  ".join(c.ljust(w) for c, w in zip(r[:-1], widths, strict=False)) + "  " + r[-1]
        for r in rows
    ]
    unassessed = [
        f"{side.value} {seg}"
        for side in Side
        for seg in anatomy.SEGMENT_IDS
        if not assessment.limbs[side].segments[seg].assessed
    ]
    out = [f"criteria: {assessment.criteria_title} ({assessment.criteria_name})", *lines]
    if unassessed:
        out.append(f"not assessed: {len(unassessed)} segments")
    for w in assessment.warnings:
        where = " ".join(x for x in (w.side.value if w.side else None, w.segment) if x)
        out.append(f"warning [{w.code}] {where}: {w.message}")
    return "\n".join(out)
