"""The assess stage: a Study becomes an Assessment (bands, velocity ratios, warnings)."""

from __future__ import annotations

from dataclasses import replace

from diagram.anatomy import Side
from diagram.assess.compare import check_prior, compare
from diagram.assess.grading import grade_limbs
from diagram.assess.indices import limb_indices, pressure_findings
from diagram.assess.planning import plan_limb
from diagram.assess.quality import quality_findings, with_shift_velocities
from diagram.assess.results import Assessment, BandDef
from diagram.criteria import NOT_ASSESSED, Criteria, CriteriaSets, shipped_sets
from diagram.errors import StudyError
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


def study_sets(study: Study) -> CriteriaSets:
    """Return the shipped sets the study names (a lab's own file is loaded at the edge)."""
    exam = study.exam
    names = (exam.criteria, exam.stent_criteria, exam.graft_criteria)
    return shipped_sets(names, source=study.source)


def assess(
    study: Study,
    *,
    criteria: CriteriaSets | Criteria | None = None,
    target: str | None = None,
    prior: Study | None = None,
    prior_criteria: CriteriaSets | None = None,
) -> Assessment:
    """Grade the study, compute its indices and planning summary, and compare with a prior.

    ``criteria`` are the sets the study is graded with, loaded by the caller (the shipped sets
    the study names when None; no file is read here). ``target`` chooses the tibial artery of the
    planning path (ATA, PTA or PER; the least diseased by default). ``prior`` is an earlier exam
    of the same patient: it is assessed with its own sets (``prior_criteria``) and compared; a
    prior of another patient or a later date is refused.
    """
    if prior is not None:
        problems = check_prior(study, prior)
        if problems:
            raise StudyError(problems)
    if isinstance(criteria, Criteria):  # a native set alone: the study's shipped others with it
        sets = replace(study_sets(study), native=criteria)
    else:
        sets = criteria if criteria is not None else study_sets(study)
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
        criteria_rules=tuple(note for c in used if (note := c.boundary_note())),
    )
    if prior is not None:
        result = replace(
            result,
            comparison=compare(result, assess(prior, criteria=prior_criteria, target=target)),
        )
    return result
