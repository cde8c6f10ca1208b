"""The pipeline in one call: Study ➜ Assessment ➜ Scene ➜ SVG text (no file I/O on the way)."""

from __future__ import annotations

from pathlib import Path

from diagram._version import __version__
from diagram.assess import assess, resolve_criteria
from diagram.assess.results import Assessment
from diagram.export import Drawing
from diagram.study import Study

PAGES: tuple[str, ...] = ("a4", "letter", "map")


def draw(
    study: Study,
    *,
    page: str = "a4",
    template: str | Path | None = None,
    criteria: str | None = None,
    target: str | None = None,
    prior: Study | None = None,
) -> Drawing:
    """Assess the study and draw its map; return the SVG text and the results document."""
    from diagram.layout import layout
    from diagram.render import render_pages
    from diagram.summary import results_document
    from diagram.template import load_template

    assessment = assess_study(study, criteria=criteria, target=target, prior=prior)
    scene = layout(assessment, load_template(template), page=page, version=__version__)
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
