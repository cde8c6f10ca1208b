"""Grade a bypass graft: each site against the valid sample above it, then the graft's risk.

The graft flow velocity is the lowest PSV in the graft body (proximal, mid, distal sites); below
45 cm/s it turns a high-risk site into the highest risk (SVS 2018 surveillance table, after
Bandyk 1988) and is always reported. The walk along the graft stops at a site graded
moderate risk or worse, as the walk along the native arteries stops at a stenosis >= 50%.
"""

from __future__ import annotations

from collections.abc import Callable

from diagram.assess.results import GraftResult, GraftSite, Reference
from diagram.assess.samplegrade import SampleGrader, Walk
from diagram.criteria import NOT_ASSESSED, SIGNIFICANT_SEVERITY, CriteriaSets
from diagram.reading.study import GRAFT_BODY_SITES, GRAFT_SITES, Graft

# Graft flow velocity below 45 cm/s (SVS 2018 surveillance table, Bandyk 1988).
GRAFT_LOW_FLOW_CM_S = 45.0
_PROXIMAL_SITES = ("proximal_anastomosis", "proximal")


def _fixed(walk: Walk) -> Callable[[], Walk]:
    return lambda: walk


def graft_flow_velocity(graft: Graft) -> float | None:
    """Return the lowest PSV in the graft body, cm/s (None when the body was not sampled)."""
    body = [
        sample.psv
        for site in GRAFT_BODY_SITES
        if (sample := graft.samples.get(site)) is not None
        and sample.psv is not None
        and not sample.not_assessed
    ]
    return min(body) if body else None


def grade_graft(
    grader: SampleGrader,
    sets: CriteriaSets,
    inflow: Callable[[str], Walk],
    index: int,
    graft: Graft,
) -> GraftResult:
    """Grade each site along a graft and return the graft's worst band with its basis."""
    crit = sets.graft
    side = grader.side.value
    what = f"limbs.{side}.grafts[{index}]"
    flow = graft_flow_velocity(graft)
    upstream = inflow(graft.from_)
    sites: list[GraftSite] = []
    for site in GRAFT_SITES:
        sample = graft.samples.get(site)
        if sample is None:
            continue
        here = upstream
        segment = graft.from_ if site in _PROXIMAL_SITES else graft.to
        graded = grader.grade(
            sample,
            segment,
            lesion=False,
            what=f"{what}.samples.{site}",
            crit=crit,
            walk=_fixed(here),
            flow=flow,
            site=True,
        )
        sites.append(
            GraftSite(site, graded.band, sample.psv, graded.vr, graded.reference, graded.basis)
        )
        name = f"graft {site.replace('_', ' ')}"
        if sets.severity(graded.band) >= SIGNIFICANT_SEVERITY:
            upstream = Walk(None, f"the {name} is graded {graded.band}")
        elif sample.psv and sample.psv > 0 and graded.band != NOT_ASSESSED:
            upstream = Walk(Reference(sample.psv, "graft", name), None)
    worst = max(sites, key=lambda g: (sets.severity(g.band), crit.rank(g.band)), default=None)
    band = worst.band if worst else NOT_ASSESSED
    basis = f"{worst.site.replace('_', ' ')}: {worst.basis}" if worst else "no graft samples"
    if flow is not None and flow < GRAFT_LOW_FLOW_CM_S:
        basis += f"; graft flow velocity {flow:g} cm/s, below 45"
        grader.note(
            "graft-low-flow",
            graft.to,
            f"{what}: graft flow velocity {flow:g} cm/s is below 45 cm/s; with a high-risk "
            "lesion the graft is at the highest risk (SVS 2018).",
        )
    return GraftResult(
        index, grader.side, graft.conduit, graft.from_, graft.to, band, tuple(sites), flow, basis
    )
