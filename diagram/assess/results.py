"""What assessment computes from a study: the typed value handed to layout and to the results."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from diagram.anatomy import Side
from diagram.reading.study import Study

if TYPE_CHECKING:  # defined downstream of this module; annotations only
    from diagram.assess.compare_results import Comparison
    from diagram.assess.plan_results import Planning


@dataclass(frozen=True)
class Span:
    """A stretch of one segment, in cm from its start and as fractions of its nominal length."""

    segment: str
    start_cm: float
    end_cm: float
    start_frac: float
    end_frac: float


@dataclass(frozen=True)
class Reference:
    """The upstream PSV a velocity ratio was computed against, and where it came from."""

    psv: float
    source: str  # "proximal_psv" (given with the sample) or "segment" (found by walking the tree)
    segment: str | None  # the segment whose sample was used, when walked
    diseased: bool = False  # the reference segment itself carries a stenosis below 50%
    post_stenotic: bool = False  # the sample lies between a lesion >= 50% above and this one

    def describe(self) -> str:
        """Return a short explanation of the basis, for the results and the sheet."""
        if self.source == "proximal_psv":
            return f"proximal PSV {self.psv:g} cm/s given with the sample"
        if self.post_stenotic:
            return (
                f"PSV {self.psv:g} cm/s in {self.segment} (post-stenotic sample between a "
                "lesion >= 50% above and this one)"
            )
        return f"PSV {self.psv:g} cm/s in {self.segment} (nearest non-stenotic upstream sample)"


@dataclass(frozen=True)
class LesionResult:
    """One lesion graded, with the stretch of vessel it covers."""

    index: int  # position in the study file's lesion list of that limb
    side: Side
    at: str
    band: str
    psv: float | None
    edv: float | None
    vr: float | None
    vr_source: str  # "computed", "measured" (vr given), "none"
    reference: Reference | None
    length_cm: float | None  # as given; None when the file gives none
    from_cm: float
    occluded: bool
    reconstitutes: str | None
    reconstitution: Span | None  # the point where flow returns (a zero-length span), if known
    spans: tuple[Span, ...]
    basis: str  # why this band: the rule of the criteria set that matched
    criteria: str = ""  # the name of the set it was graded with (native, stent, ...)


@dataclass(frozen=True)
class SegmentResult:
    """One segment graded: worst of its own sample and every lesion that touches it."""

    side: Side
    segment: str
    band: str
    psv: float | None
    edv: float | None
    vr: float | None
    reference: Reference | None
    waveform: str | None
    lesions: tuple[int, ...]  # indices of the lesions that touch it
    basis: str
    assessed: bool  # False when nothing was recorded or it was marked not assessed
    # the band of the stretch outside its lesions: its own sample's band, not-assessed when it
    # has no sample and its lesions do not cover it, else the worst lesion's (the map's lumen)
    base_band: str = ""


@dataclass(frozen=True)
class Finding:
    """A warning about the measurements, with a stable code."""

    code: str
    side: Side | None
    segment: str | None
    message: str


@dataclass(frozen=True)
class StentResult:
    """A stent's extent along the vessels."""

    index: int
    side: Side
    from_: str
    to: str
    spans: tuple[Span, ...]


@dataclass(frozen=True)
class GraftSite:
    """One sample along a bypass graft, graded with the graft set."""

    site: str  # one of study.GRAFT_SITES
    band: str
    psv: float | None
    vr: float | None
    reference: Reference | None
    basis: str


@dataclass(frozen=True)
class GraftResult:
    """A bypass graft: its sites graded, the worst band and the graft flow velocity."""

    index: int
    side: Side
    conduit: str
    from_: str
    to: str
    band: str
    sites: tuple[GraftSite, ...]
    flow_velocity: float | None  # lowest PSV in the graft body, cm/s
    basis: str


@dataclass(frozen=True)
class LimbResult:
    """One leg graded."""

    side: Side
    segments: Mapping[str, SegmentResult]
    lesions: tuple[LesionResult, ...]
    stents: tuple[StentResult, ...] = ()
    grafts: tuple[GraftResult, ...] = ()


@dataclass(frozen=True)
class LimbIndices:
    """Pressure indices of one leg, each with the figures it was computed from."""

    side: Side
    ankle_mmhg: float | None  # the higher of PT and DP
    brachial_mmhg: float | None  # the higher brachial pressure
    abi: float | None
    abi_category: str | None
    abi_severity: str | None  # "severe" / "mild-moderate" within abnormal
    abi_basis: str
    tbi: float | None
    tbi_category: str | None
    tbi_basis: str
    ischaemia_grade: int | None
    ischaemia_basis: str
    # WIfI grades limbs with CLTI: the sheet prints the grade only where this is True
    ischaemia_applies: bool = True
    ischaemia_context: str = ""  # why it applies: the presentation or the CLTI-range pressures
    tcpo2_mmhg: float | None = None


@dataclass(frozen=True)
class BandDef:
    """One band of a criteria set, as the legend and the results name it."""

    id: str
    label: str
    rank: int  # severity on the common scale: -1 not assessed, 0 normal ... 4 occluded
    look: str = ""  # the house look it is drawn with (normal, lt50, 50-74, 75-99, occluded)
    criteria: str = ""  # the name of the set it belongs to
    kind: str = ""  # that set's kind: native, stent or graft


@dataclass(frozen=True)
class Assessment:
    """Everything computed from one study."""

    study: Study
    criteria_name: str
    criteria_title: str
    criteria_source: str
    bands: tuple[BandDef, ...]  # in legend order, mildest first, not-assessed last
    limbs: Mapping[Side, LimbResult]
    indices: Mapping[Side, LimbIndices] = field(default_factory=dict)
    warnings: tuple[Finding, ...] = field(default=())
    criteria_used: tuple[tuple[str, str, str], ...] = ()  # (name, title, origin) of each set
    planning: Mapping[Side, Planning] = field(default_factory=dict)
    comparison: Comparison | None = None
    # each used set's bands with their thresholds as the file writes them (>= or >): the legend
    # says which side of a boundary goes to the higher band
    criteria_rules: tuple[str, ...] = ()
