"""The pipeline in one call: Study ➜ Assessment ➜ Scene (no file I/O on the way).

Everything read from files (criteria sets, the prior exam, the template, the lab profile) comes
in as values; :mod:`diagram.inputs` reads them. The Drawing it returns carries the Scene; each
output format renders it as it needs.
"""

from __future__ import annotations

from dataclasses import replace
from typing import TYPE_CHECKING

from diagram._version import __version__
from diagram.assess import assess
from diagram.output.export import Drawing
from diagram.reading.study import Study

if TYPE_CHECKING:
    from diagram.criteria import CriteriaSets
    from diagram.drawing.labprofile import LabProfile
    from diagram.drawing.template.mapfile import Template


def draw(
    study: Study,
    *,
    criteria: CriteriaSets | None = None,
    prior: Study | None = None,
    prior_criteria: CriteriaSets | None = None,
    template: Template | None = None,
    page: str = "a4",
    target: str | None = None,
    lab: LabProfile | None = None,
) -> Drawing:
    """Assess the study and draw its map; return the Scene and the results document.

    ``criteria`` and ``prior_criteria`` are the loaded sets (the shipped sets each study names
    when None); ``template`` the loaded map (the shipped bilateral map when None). A lab profile
    gives the style and the lab name for the header.
    """
    from diagram.drawing.layout import layout
    from diagram.drawing.template.mapfile import load_template
    from diagram.output.results import results_document

    assessment = assess(
        study, criteria=criteria, target=target, prior=prior, prior_criteria=prior_criteria
    )
    style = replace(lab.style, lab_name=lab.lab_name) if lab is not None else None
    tpl = template if template is not None else load_template()
    scene = layout(assessment, tpl, page=page, version=__version__, style=style)
    return Drawing(
        results=results_document(assessment, version=__version__), scene=scene, study=study
    )
