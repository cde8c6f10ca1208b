"""limbchart: graded leg-artery maps from arterial duplex findings.

The pipeline, one pure function per stage (DESIGN.md §2); files are read only at its edge::

    load_study(path) ─▶ Study ─▶ load_inputs ─▶ Inputs (criteria sets, prior exam)
    assess_study(study, criteria=...) ─▶ Assessment
    draw(study, criteria=..., template=...) ─▶ Drawing ─▶ export(drawing, path)
    draw_file(path) and assess_file(path): the whole way in one call

Errors (``DiagramError`` and its subclasses) carry every problem with its file and place; see
:mod:`diagram.errors`. The names below are the public API; they are imported when first used, so
that importing the package (and ``limbchart --help``) stays light.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

from diagram._version import __version__

if TYPE_CHECKING:
    from diagram.assess import assess as assess_study
    from diagram.assess.results import Assessment
    from diagram.criteria import Criteria, CriteriaSets, load_criteria
    from diagram.drawing.labprofile import LabProfile, load_lab_profile
    from diagram.drawing.template.mapfile import Template, load_template
    from diagram.errors import (
        CriteriaError,
        DiagramError,
        ExportError,
        Problem,
        StudyError,
        TemplateError,
    )
    from diagram.inputs import (
        Inputs,
        assess_file,
        draw_file,
        load_inputs,
        load_template_for,
        study_criteria,
    )
    from diagram.output.export import Drawing, ExportOptions, export
    from diagram.pipeline import draw
    from diagram.reading.load import load_prior, load_study, load_study_text, study_schema
    from diagram.reading.study import Study

_WHERE: dict[str, str] = {
    "Assessment": "diagram.assess.results",
    "Criteria": "diagram.criteria",
    "CriteriaError": "diagram.errors",
    "CriteriaSets": "diagram.criteria",
    "DiagramError": "diagram.errors",
    "Drawing": "diagram.output.export",
    "ExportError": "diagram.errors",
    "ExportOptions": "diagram.output.export",
    "Inputs": "diagram.inputs",
    "LabProfile": "diagram.drawing.labprofile",
    "Problem": "diagram.errors",
    "Study": "diagram.reading.study",
    "StudyError": "diagram.errors",
    "Template": "diagram.drawing.template.mapfile",
    "TemplateError": "diagram.errors",
    "assess_study": "diagram.assess",  # the function ``diagram.assess.assess``
    "assess_file": "diagram.inputs",
    "draw": "diagram.pipeline",
    "draw_file": "diagram.inputs",
    "export": "diagram.output.export",
    "load_criteria": "diagram.criteria",
    "load_inputs": "diagram.inputs",
    "load_lab_profile": "diagram.drawing.labprofile",
    "load_prior": "diagram.reading.load",
    "load_study": "diagram.reading.load",
    "load_study_text": "diagram.reading.load",
    "load_template": "diagram.drawing.template.mapfile",
    "load_template_for": "diagram.inputs",
    "study_criteria": "diagram.inputs",
    "study_schema": "diagram.reading.load",
}

_ORIGINAL = {"assess_study": "assess"}  # ``diagram.assess`` is the stage's package

__all__ = [
    "Assessment",
    "Criteria",
    "CriteriaError",
    "CriteriaSets",
    "DiagramError",
    "Drawing",
    "ExportError",
    "ExportOptions",
    "Inputs",
    "LabProfile",
    "Problem",
    "Study",
    "StudyError",
    "Template",
    "TemplateError",
    "__version__",
    "assess_file",
    "assess_study",
    "draw",
    "draw_file",
    "export",
    "load_criteria",
    "load_inputs",
    "load_lab_profile",
    "load_prior",
    "load_study",
    "load_study_text",
    "load_template",
    "load_template_for",
    "study_criteria",
    "study_schema",
]


def __getattr__(name: str) -> Any:
    """Import a public name from its stage the first time it is used."""
    module = _WHERE.get(name)
    if module is None:
        raise AttributeError(f"module 'diagram' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), _ORIGINAL.get(name, name))
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted({*globals(), *_WHERE})
