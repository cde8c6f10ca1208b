"""The edge of the pipeline: every file one study's sheet needs, read before the pipeline runs.

The stages below never open a file: a study's criteria sets (shipped, or a lab's file beside
the study), its prior exam, the map template and the lab profile are read here and passed in
as values. A study that has no file beside it (one read from a DICOM SR, or held by an editor)
goes through the same functions.

::

    load_inputs(study or path) ─▶ Inputs ─▶ pipeline.draw / assess
    draw_file(path) and assess_file(path): the same in one call
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

from diagram.assess import assess
from diagram.assess.compare import check_prior
from diagram.criteria import CriteriaSets, load_sets
from diagram.errors import StudyError
from diagram.pipeline import draw
from diagram.reading.load import load_prior, load_study
from diagram.reading.study import Study

if TYPE_CHECKING:
    from diagram.assess.results import Assessment
    from diagram.drawing.labprofile import LabProfile
    from diagram.drawing.template.mapfile import Template
    from diagram.output.export import Drawing


@dataclass(frozen=True)
class Inputs:
    """A study with its criteria sets and its prior exam (with the prior's own sets), all read."""

    study: Study
    criteria: CriteriaSets
    prior: Study | None = None
    prior_criteria: CriteriaSets | None = None


def study_criteria(study: Study, override: str | None = None) -> CriteriaSets:
    """Return the sets the study names (its native set replaced by ``override`` when given).

    A lab's file is taken relative to the study's file; a study with no file beside it takes
    it relative to the working folder.
    """
    exam = study.exam
    base = Path(study.source).parent if study.source else None
    names = (override or exam.criteria, exam.stent_criteria, exam.graft_criteria)
    return load_sets(names, source=study.source, relative_to=base)


def load_inputs(
    study: Study | str | Path,
    *,
    criteria: str | None = None,
    prior: str | Path | None = None,
) -> Inputs:
    """Read a study (unless given one) and everything it refers to.

    ``criteria`` replaces the study's native set (a shipped name or a file); ``prior`` names an
    earlier exam instead of the one the study names. A prior of another patient or a later date
    is refused before its own criteria sets are read.
    """
    current = study if isinstance(study, Study) else load_study(study)
    sets = study_criteria(current, criteria)
    earlier = load_prior(current, prior)
    if earlier is None:
        return Inputs(current, sets)
    problems = check_prior(current, earlier)
    if problems:
        raise StudyError(problems)
    return Inputs(current, sets, earlier, study_criteria(earlier))


def load_template_for(
    template: str | Path | None = None, lab: LabProfile | None = None
) -> Template:
    """Return the map template: ``template`` when given, else the lab's, else the shipped map."""
    from diagram.drawing.template.mapfile import load_template

    chosen = template if template is not None else lab.template if lab is not None else None
    return load_template(chosen)


def assess_inputs(inputs: Inputs, *, target: str | None = None) -> Assessment:
    """Assess a study whose inputs are read."""
    return assess(
        inputs.study,
        criteria=inputs.criteria,
        target=target,
        prior=inputs.prior,
        prior_criteria=inputs.prior_criteria,
    )


def draw_inputs(
    inputs: Inputs,
    template: Template,
    *,
    page: str = "a4",
    target: str | None = None,
    lab: LabProfile | None = None,
) -> Drawing:
    """Draw a study whose inputs are read on the given template."""
    return draw(
        inputs.study,
        criteria=inputs.criteria,
        prior=inputs.prior,
        prior_criteria=inputs.prior_criteria,
        template=template,
        page=page,
        target=target,
        lab=lab,
    )


def assess_file(
    study: Study | str | Path,
    *,
    criteria: str | None = None,
    target: str | None = None,
    prior: str | Path | None = None,
) -> Assessment:
    """Read a study file and what it refers to, and assess it."""
    return assess_inputs(load_inputs(study, criteria=criteria, prior=prior), target=target)


def draw_file(
    study: Study | str | Path,
    *,
    page: str | None = None,
    template: str | Path | None = None,
    lab: str | Path | LabProfile | None = None,
    criteria: str | None = None,
    target: str | None = None,
    prior: str | Path | None = None,
) -> Drawing:
    """Read a study file and what it refers to, and draw its sheet.

    ``lab`` is a lab profile (or its file): its template and page are used unless ``template``
    or ``page`` is given.
    """
    from diagram.drawing.labprofile import LabProfile, load_lab_profile

    profile = lab if isinstance(lab, LabProfile) or lab is None else load_lab_profile(lab)
    inputs = load_inputs(study, criteria=criteria, prior=prior)
    chosen = page or (profile.page if profile is not None and profile.page else "a4")
    tpl = load_template_for(template, profile)
    return draw_inputs(inputs, tpl, page=chosen, target=target, lab=profile)
