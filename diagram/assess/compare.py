"""Change since the prior exam: bands per segment, PSV, lesions, new stents and grafts, ABI.

Each exam's bands are put on the common severity scale of the criteria sets it was graded with
(``BandDef.rank``, which is ``CriteriaSets.severity``: -1 not assessed, 0 normal ... 4 occluded),
so exams graded with different sets still compare. Call :func:`check_prior` before comparing: it
refuses a prior exam of another patient or one dated after the current exam. A prior of the same
day is accepted (an exam before and after a procedure on one day); its interval is 0 days.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable
from decimal import ROUND_HALF_UP, Context, Decimal, localcontext

from diagram.anatomy import SEGMENT_IDS, UNPAIRED, Side
from diagram.assess.compare_results import BAND_CHANGES as BAND_CHANGES
from diagram.assess.compare_results import AbiChange as AbiChange
from diagram.assess.compare_results import Change as Change
from diagram.assess.compare_results import Comparison as Comparison
from diagram.assess.compare_results import DeviceChange as DeviceChange
from diagram.assess.compare_results import LesionChange as LesionChange
from diagram.assess.compare_results import SegmentChange as SegmentChange
from diagram.assess.results import Assessment, LesionResult, LimbIndices
from diagram.criteria import LOOK_SEVERITY
from diagram.errors import Problem
from diagram.reading.study import Study

OCCLUDED = LOOK_SEVERITY["occluded"]
# A fall of the ABI by more than 0.15 is significant: SVS practice guideline on follow-up after
# arterial procedures (Zierler RE et al., J Vasc Surg 2018;68:256, graft table after Bandyk 1988)
# and Westerband 1997 (clinical-values.md, confirmed). A fall of exactly 0.15 is not.
ABI_SIGNIFICANT_FALL = Decimal("0.15")
ABI_SOURCE = "SVS 2018; Westerband 1997"


def _severity(assessment: Assessment) -> Callable[[str], int]:
    """Return the band-to-severity lookup of one exam, from the legend it was graded with."""
    ranks = {b.id: b.rank for b in assessment.bands}

    def severity(band: str) -> int:
        if band not in ranks:
            raise ValueError(f"band {band!r} is not in the exam's legend")
        return ranks[band]

    return severity


def classify(before: int, after: int) -> Change | None:
    """Return the change between two severities (None when neither exam assessed the segment)."""
    if before < 0 and after < 0:
        return None
    if before < 0:
        return Change.NEWLY_ASSESSED
    if after < 0:
        return Change.NO_LONGER_ASSESSED
    if after >= OCCLUDED > before:
        return Change.NEW_OCCLUSION
    if before >= OCCLUDED > after:
        return Change.RESOLVED_OCCLUSION
    if after == before:
        return Change.UNCHANGED
    return Change.WORSE if after > before else Change.BETTER


def psv_change_pct(before: float | None, after: float | None) -> float | None:
    """Return the PSV change in whole percent of the prior value, halves away from zero.

    PSVs are read to the whole cm/s, so a tenth of a percent would be false precision.
    """
    if before is None or after is None or before <= 0:
        return None
    change = (after - before) / before * 100.0
    with localcontext(Context(prec=400)):
        exact = Decimal(repr(change)).quantize(Decimal(1), rounding=ROUND_HALF_UP)
    return float(exact)


def _interval(current: Study, prior: Study) -> int | None:
    a: dt.date | None = current.exam.date
    b: dt.date | None = prior.exam.date
    return None if a is None or b is None else (a - b).days


def _match(
    side: Side, now: tuple[LesionResult, ...], then: tuple[LesionResult, ...]
) -> list[LesionChange]:
    """Pair lesions that start in the same segment, nearest from_cm first."""
    pairs = sorted(
        (abs(a.from_cm - b.from_cm), i, j)
        for i, a in enumerate(now)
        for j, b in enumerate(then)
        if a.at == b.at
    )
    used_now: set[int] = set()
    used_then: set[int] = set()
    out = []
    for _, i, j in pairs:
        if i in used_now or j in used_then:
            continue
        used_now.add(i)
        used_then.add(j)
        a, b = now[i], then[j]
        pct = psv_change_pct(b.psv, a.psv)
        out.append(
            LesionChange(side, a.at, b.from_cm, a.from_cm, b.band, a.band, b.psv, a.psv, pct)
        )
    return sorted(out, key=lambda c: (SEGMENT_IDS.index(c.segment), c.from_cm_after))


def _devices(side: Side, current: Assessment, prior: Assessment) -> list[DeviceChange]:
    """Return stents and grafts (keyed by from and to) recorded in one exam only."""
    out = []
    for kind in ("stent", "graft"):
        now, then = (
            [
                (d.from_, d.to)
                for d in (a.limbs[side].stents if kind == "stent" else a.limbs[side].grafts)
            ]
            for a in (current, prior)
        )
        out += [DeviceChange(side, kind, f, t, "new") for f, t in now if (f, t) not in then]
        gone = [(f, t) for f, t in then if (f, t) not in now]
        out += [DeviceChange(side, kind, f, t, "no-longer-recorded") for f, t in gone]
    return out


def abi_change(side: Side, before: LimbIndices | None, after: LimbIndices | None) -> AbiChange:
    """Return the ABI change of one leg; a fall of more than 0.15 is significant."""
    b = before.abi if before else None
    a = after.abi if after else None
    if a is None or b is None:
        which = "the current exam" if b is not None else "the prior exam" if a is not None else ""
        return AbiChange(side, b, a, None, None, f"no ABI in {which or 'either exam'}")
    delta = Decimal(repr(a)) - Decimal(repr(b))
    change = float(delta.quantize(Decimal("0.01")))
    noncompressible = "noncompressible" in (
        before.abi_category if before else None,
        after.abi_category if after else None,
    )
    if noncompressible:
        basis = "ABI > 1.40 (noncompressible) in one exam: the change is not judged"
        return AbiChange(side, b, a, change, None, basis)
    significant = -delta > ABI_SIGNIFICANT_FALL
    if significant:
        verdict = "a fall of more than 0.15: significant"
    else:
        verdict = "no fall" if delta >= 0 else "a fall of 0.15 or less: not significant"
    basis = f"{b:.2f} -> {a:.2f} ({change:+.2f}): {verdict} ({ABI_SOURCE})"
    return AbiChange(side, b, a, change, significant, basis)


def compare(current: Assessment, prior: Assessment) -> Comparison:
    """Return what changed from the prior exam to the current one."""
    sev_now, sev_then = _severity(current), _severity(prior)
    segments: list[SegmentChange] = []
    lesions: list[LesionChange] = []
    devices: list[DeviceChange] = []
    for side in (Side.RIGHT, Side.LEFT):
        now, then = current.limbs[side], prior.limbs[side]
        for seg in SEGMENT_IDS:
            if seg in UNPAIRED and side is not Side.RIGHT:
                continue  # graded once and copied to both legs
            a, b = now.segments[seg], then.segments[seg]
            change = classify(sev_then(b.band), sev_now(a.band))
            if change is None:
                continue
            pct = psv_change_pct(b.psv, a.psv)
            segments.append(SegmentChange(side, seg, b.band, a.band, change, b.psv, a.psv, pct))
        lesions += _match(side, now.lesions, then.lesions)
        devices += _devices(side, current, prior)
    abi = tuple(
        abi_change(side, prior.indices.get(side), current.indices.get(side))
        for side in (Side.RIGHT, Side.LEFT)
    )
    notes = []
    if prior.criteria_name != current.criteria_name:
        notes.append(
            f"native criteria differ (prior: {prior.criteria_name}; current: "
            f"{current.criteria_name}); bands are compared on the common severity scale"
        )
    interval = _interval(current.study, prior.study)
    if interval is None:
        notes.append("an exam date is missing: the interval is unknown")
    return Comparison(interval, tuple(segments), tuple(lesions), tuple(devices), abi, tuple(notes))


def changed_segments(comparison: Comparison) -> tuple[tuple[Side, str], ...]:
    """Return the (side, segment) pairs whose band changed, for the map's change symbol."""
    return tuple((c.side, c.segment) for c in comparison.segments if c.change in BAND_CHANGES)


def _same(a: object, b: object) -> bool:
    """Compare identifiers ignoring case and runs of white space."""
    return " ".join(str(a).split()).casefold() == " ".join(str(b).split()).casefold()


def check_prior(current: Study, prior: Study) -> list[Problem]:
    """Return why ``prior`` cannot serve as the current exam's prior (empty when it can).

    Identifiers are never echoed: each problem names the field and the rule only.
    """
    file = prior.source or current.prior or "prior"
    now, then = current.patient, prior.patient
    checks: list[tuple[str, object, object, str]] = []
    if now.id and then.id:
        checks.append(("patient.id", now.id, then.id, ""))
    elif now.name and then.name:
        checks.append(("patient.name", now.name, then.name, " (no patient.id in both exams)"))
    if now.birth_date and then.birth_date:
        checks.append(("patient.birth_date", now.birth_date, then.birth_date, ""))
    problems = [
        Problem(
            file,
            None,
            field,
            None,
            f"differs from the current exam's {field}{why}: a prior exam must be of the same "
            "patient.",
        )
        for field, a, b, why in checks
        if not _same(a, b)
    ]
    for field, a, b in (
        ("exam.accession", current.exam.accession, prior.exam.accession),
        ("exam.study_uid", current.exam.study_uid, prior.exam.study_uid),
    ):
        if a and b and _same(a, b):  # one line for a copy, which has both
            rule = f"is the same as the current exam's {field}: a prior is an earlier exam."
            hint = "is the prior a copy of the current study?"
            problems.append(Problem(file, None, field, None, rule, hint))
            break
    interval = _interval(current, prior)
    if interval is not None and interval < 0:
        problems.append(
            Problem(
                file,
                None,
                "exam.date",
                None,
                "is later than the current exam's exam.date: a prior exam must not be dated "
                "after the current one.",
                "are the current and prior files the wrong way round?",
            )
        )
    return problems
