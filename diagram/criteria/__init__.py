"""Criteria sets: band thresholds as data files, each number with its published source.

A criteria file lists bands mildest first. A band applies when its ``when`` conditions hold:
``vr_min`` / ``psv_min`` (the value on the boundary belongs to this, the higher band: ">=") or
``vr_over`` / ``psv_over`` (the boundary value stays in the milder band: ">"), joined by the set's
one ``match`` rule: ``all`` (both PSV and Vr must reach the band) or ``any`` (either does). A
graft set may add ``flow_below`` (graft flow velocity below it, cm/s), which must hold as well.
The worst band that applies wins. A band with ``occlusion: true`` is the band for an occluded
vessel; ``not-assessed`` is built in.

``psv_only`` lists the set's rule for a sample with a PSV but no valid velocity ratio (no
reference upstream, or one across an occlusion or a stenosis >= 50%): each entry names a band and
its PSV threshold; the result is never below ``lesion_floor`` for a documented lesion.

::

    model.py   the values: BandRule, PsvOnlyRule, Criteria, CriteriaSets, the house looks
    parse.py   a criteria file's text ➜ Criteria (every problem at once)
    load.py    shipped sets by name, a lab's file by path, the three sets a study names
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
    PsvOnlyRule,
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
    "PsvOnlyRule",
    "criteria_table",
    "load_criteria",
    "load_sets",
    "parse_criteria",
    "shipped_names",
    "shipped_sets",
]
