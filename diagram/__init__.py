"""limbchart: graded leg-artery maps from arterial duplex findings.

The pipeline, one pure function per stage (DESIGN.md §2)::

    load_study(path) ─▶ Study ─▶ assess(study) ─▶ Assessment ─▶ draw(study) ─▶ Drawing ─▶ export()

Errors (``DiagramError`` and its subclasses) carry every problem with its file and line; see
:mod:`diagram.errors`.
"""

from diagram._version import __version__
from diagram.assess import assess
from diagram.assess.results import Assessment
from diagram.errors import (
    CriteriaError,
    DiagramError,
    ExportError,
    Problem,
    StudyError,
    TemplateError,
)
from diagram.output.export import Drawing, ExportOptions, export
from diagram.pipeline import draw
from diagram.reading.load import load_study, load_study_text, study_schema
from diagram.reading.study import Study

__all__ = [
    "Assessment",
    "CriteriaError",
    "DiagramError",
    "Drawing",
    "ExportError",
    "ExportOptions",
    "Problem",
    "Study",
    "StudyError",
    "TemplateError",
    "__version__",
    "assess",
    "draw",
    "export",
    "load_study",
    "load_study_text",
    "study_schema",
]
