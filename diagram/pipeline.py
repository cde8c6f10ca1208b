"""The pipeline in one call: Study ➜ Assessment ➜ Scene ➜ SVG text (no file I/O on the way)."""

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
    """Assess the study and draw its map; return the SVG pages and the results document.

    A lab profile gives the style, the lab name for the header, and defaults for the template
    and the page; ``template`` and a page other than the default win over it.
    """
    from diagram.drawing.layout import layout
    from diagram.drawing.template.mapfile import load_template
    from diagram.output.results import results_document
    from diagram.output.svg import render_pages

    assessment = assess_study(study, criteria=criteria, target=target, prior=prior)
    style = None
    if lab is not None:
        style = replace(lab.style, lab_name=lab.lab_name)
        template = template if template is not None else lab.template
    scene = layout(assessment, load_template(template), page=page, version=__version__, style=style)
    first, *more = render_pages(scene)
    return Drawing(
        svg=first,
        results=results_document(assessment, version=__version__),
        study=study,
        more=tuple(more),
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
