"""The assess stage: a Study becomes an Assessment (bands, velocity ratios, warnings)."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

from diagram.anatomy import Side
from diagram.assess.compare import check_prior, compare
from diagram.assess.grading import grade_limbs
from diagram.assess.indices import limb_indices, pressure_findings
from diagram.assess.planning import plan_limb
from diagram.assess.quality import quality_findings, with_shift_velocities
from diagram.assess.results import Assessment, BandDef
from diagram.criteria import NOT_ASSESSED, Criteria, CriteriaSets, load_criteria
from diagram.errors import CriteriaError, Problem, StudyError
from diagram.reading.study import Study


def band_defs(sets: CriteriaSets, used: tuple[Criteria, ...]) -> tuple[BandDef, ...]:
    """Return the legend's bands: each used set's bands mildest first, then not-assessed."""
    out: dict[str, BandDef] = {}
    for crit in used:
        for b in crit.bands:
            if b.id not in out:
                rank = sets.severity(b.id)
                out[b.id] = BandDef(b.id, b.label, rank, b.look, crit.name, crit.kind)
    occluded = [b for b in out.values() if b.look == "occluded"]
    rest = [b for b in out.values() if b.look != "occluded"]
    return (*rest, *occluded, BandDef(NOT_ASSESSED, "Not assessed", -1, "", ""))


def _load(name: str, base: Path | None, field: str, source: str) -> Criteria:
    try:
        return load_criteria(name, relative_to=base)
    except CriteriaError as exc:
        if len(exc.problems) == 1 and exc.problems[0].field == "exam.criteria":
            p = exc.problems[0]
            raise StudyError([Problem(source, None, field, p.value, p.rule, p.hint)]) from None
        raise


def resolve_criteria(study: Study, override: str | None = None) -> CriteriaSets:
    """Return the sets the study names (native set replaced by ``override`` when given)."""
    base = Path(study.source).parent if study.source else None
    exam = study.exam
    return CriteriaSets(
        native=_load(override or exam.criteria, base, "exam.criteria", study.source),
        stent=_load(exam.stent_criteria, base, "exam.stent_criteria", study.source),
        graft=_load(exam.graft_criteria, base, "exam.graft_criteria", study.source),
    )


def assess(
    study: Study,
    *,
    criteria: Criteria | CriteriaSets | None = None,
    target: str | None = None,
    prior: Study | None = None,
) -> Assessment:
    """Grade the study, compute its indices and planning summary, and compare with a prior.

    ``target`` chooses the tibial artery of the planning path (ATA, PTA or PER; the least
    diseased by default). ``prior`` is an earlier exam of the same patient: it is assessed with
    its own criteria sets and compared; a prior of another patient or a later date is refused.
    """
    if prior is not None:
        problems = check_prior(study, prior)
        if problems:
            raise StudyError(problems)
    if isinstance(criteria, Criteria):
        sets = replace(resolve_criteria(study), native=criteria)
    else:
        sets = criteria or resolve_criteria(study)
    study, findings = with_shift_velocities(study)
    limbs, grading_findings = grade_limbs(study, sets)
    findings.extend(grading_findings)
    indices = {
        side: limb_indices(study.pressures, side, study.limb(side).presentation)
        for side in (Side.RIGHT, Side.LEFT)
    }
    findings.extend(quality_findings(study, limbs, sets))
    findings.extend(pressure_findings(study.pressures, indices))
    used = [sets.native]
    if any(study.limb(s).stents for s in Side):
        used.append(sets.stent)
    if any(study.limb(s).grafts for s in Side):
        used.append(sets.graft)
    crit = sets.native
    planning = {side: plan_limb(study, limbs[side], sets, target=target) for side in Side}
    result = Assessment(
        study=study,
        criteria_name=crit.name,
        criteria_title=crit.title,
        criteria_source=crit.source,
        bands=band_defs(sets, tuple(used)),
        limbs=limbs,
        indices=indices,
        warnings=tuple(findings),
        criteria_used=tuple((c.name, c.title, c.origin) for c in used),
        planning=planning,
    )
    if prior is not None:
        result = replace(result, comparison=compare(result, assess(prior, target=target)))
    return result
