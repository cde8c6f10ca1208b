"""The assess stage: a Study becomes an Assessment (bands, velocity ratios, warnings)."""

from __future__ import annotations

from pathlib import Path

from diagram.anatomy import Side
from diagram.assess.grading import grade_limbs
from diagram.assess.indices import limb_indices, pressure_findings
from diagram.assess.quality import quality_findings, with_shift_velocities
from diagram.assess.results import Assessment, BandDef
from diagram.criteria import NOT_ASSESSED, Criteria, load_criteria
from diagram.errors import CriteriaError, Problem, StudyError
from diagram.study import Study


def band_defs(criteria: Criteria) -> tuple[BandDef, ...]:
    """Return the legend's bands: the set's bands mildest first, then not-assessed."""
    return (
        *(BandDef(b.id, b.label, b.rank) for b in criteria.bands),
        BandDef(NOT_ASSESSED, "Not assessed", -1),
    )


def resolve_criteria(study: Study, override: str | None = None) -> Criteria:
    """Return the criteria set the study names (or ``override``), relative to the study file."""
    name = override or study.exam.criteria
    base = Path(study.source).parent if study.source else None
    try:
        return load_criteria(name, relative_to=base)
    except CriteriaError as exc:
        if override is None and len(exc.problems) == 1 and exc.problems[0].field == "exam.criteria":
            p = exc.problems[0]
            raise StudyError(
                [Problem(study.source, None, p.field, p.value, p.rule, p.hint)]
            ) from None
        raise


def assess(study: Study, *, criteria: Criteria | None = None) -> Assessment:
    """Grade every segment and lesion of the study with its criteria set."""
    crit = criteria or resolve_criteria(study)
    study, findings = with_shift_velocities(study)
    limbs, grading_findings = grade_limbs(study, crit)
    findings.extend(grading_findings)
    indices = {side: limb_indices(study.pressures, side) for side in (Side.RIGHT, Side.LEFT)}
    findings.extend(quality_findings(study, limbs, crit))
    findings.extend(pressure_findings(study.pressures, indices))
    return Assessment(
        study=study,
        criteria_name=crit.name,
        criteria_title=crit.title,
        criteria_source=crit.source,
        bands=band_defs(crit),
        limbs=limbs,
        indices=indices,
        warnings=tuple(findings),
    )
