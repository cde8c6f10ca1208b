"""Criteria sets: band thresholds as data files, each number with its published source.

::

    model.py   the values: BandRule, Criteria, CriteriaSets, the house looks
    parse.py   a criteria file's text ➜ Criteria (every problem at once)
    load.py    shipped sets by name, a lab's file by path, the three sets a study names

A criteria file lists bands mildest first. A band applies when its ``when`` conditions hold
(``vr_min`` and/or ``psv_min``, combined with ``match: all`` (default) or ``any``); the worst band
that applies wins, so a value on a boundary belongs to the higher band. A band with
``occlusion: true`` is the band for an occluded vessel. ``not-assessed`` is built in.
"""

from diagram.criteria.load import (
    load_criteria,
    load_sets,
    shipped_names,
    shipped_sets,
)
from diagram.criteria.model import (
    LOOK_SEVERITY,
    LOOKS,
    NOT_ASSESSED,
    SIGNIFICANT_SEVERITY,
    BandRule,
    Criteria,
    CriteriaSets,
    criteria_table,
)
from diagram.criteria.parse import parse_criteria

__all__ = [
    "LOOKS",
    "LOOK_SEVERITY",
    "NOT_ASSESSED",
    "SIGNIFICANT_SEVERITY",
    "BandRule",
    "Criteria",
    "CriteriaSets",
    "criteria_table",
    "load_criteria",
    "load_sets",
    "parse_criteria",
    "shipped_names",
    "shipped_sets",
]
