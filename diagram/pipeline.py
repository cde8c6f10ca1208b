"""The pipeline in one call: Study ➜ Assessment ➜ Scene (no file I/O on the way).

The Drawing it returns carries the Scene; each output format renders it as it needs.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path
from typing import TYPE_CHECKING

from diagram._version import __version__
from diagram.assess import assess, resolve_criteria
from diagram.assess.results import Assessment
from diagram.output.export import Drawing
from diagram.reading.study import Study

if TYPE_CHECKING:
    from diagram.drawing.labprofile import LabProfile


def draw(
    study: Study,
    *,
    page: str = "a4",
    template: str | Path | None = None,
    criteria: str | None = None,
    target: str | None = None,
    prior: Study | None = None,
    lab: LabProfile | None = None,
) -> Drawing:
    """Assess the study and draw its map; return the Scene and the results document.

    A lab profile gives the style, the lab name for the header, and defaults for the template
    and the page; ``template`` and a page other than the default win over it.
    """
    from diagram.drawing.layout import layout
    from diagram.drawing.template.mapfile import load_template
    from diagram.output.results import results_document

    assessment = assess_study(study, criteria=criteria, target=target, prior=prior)
    style = None
    if lab is not None:
        style = replace(lab.style, lab_name=lab.lab_name)
        template = template if template is not None else lab.template
    scene = layout(assessment, load_template(template), page=page, version=__version__, style=style)
    return Drawing(
        results=results_document(assessment, version=__version__), scene=scene, study=study
    )


def assess_study(
    study: Study,
    *,
    criteria: str | None = None,
    target: str | None = None,
    prior: Study | None = None,
) -> Assessment:
    """Assess the study with its own criteria sets (``criteria`` replaces the native one)."""
    return assess(study, criteria=resolve_criteria(study, criteria), target=target, prior=prior)
