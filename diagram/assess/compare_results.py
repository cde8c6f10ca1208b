"""What the comparison with a prior exam produces: the changes, as frozen values.

The rules that find them are in :mod:`diagram.assess.compare`; the results document and the
sheet take these values without importing the rules.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum

from diagram.anatomy import Side


class Change(StrEnum):
    """How a segment's band moved between the prior and the current exam."""

    WORSE = "worse"
    BETTER = "better"
    UNCHANGED = "unchanged"
    NEW_OCCLUSION = "new-occlusion"
    RESOLVED_OCCLUSION = "resolved-occlusion"
    NEWLY_ASSESSED = "newly-assessed"
    NO_LONGER_ASSESSED = "no-longer-assessed"


# The changes of disease the map marks; a segment seen in one exam only is not one of them.
BAND_CHANGES = frozenset(
    {Change.WORSE, Change.BETTER, Change.NEW_OCCLUSION, Change.RESOLVED_OCCLUSION}
)


@dataclass(frozen=True)
class SegmentChange:
    """One segment in both exams (the unpaired aorta is listed once, under the right side)."""

    side: Side
    segment: str
    band_before: str
    band_after: str
    change: Change
    psv_before: float | None
    psv_after: float | None
    psv_change_pct: float | None  # (after - before) / before x 100, whole percent


@dataclass(frozen=True)
class LesionChange:
    """A lesion starting in the same segment in both exams, matched by the nearest from_cm."""

    side: Side
    segment: str
    from_cm_before: float
    from_cm_after: float
    band_before: str
    band_after: str
    psv_before: float | None
    psv_after: float | None
    psv_change_pct: float | None


@dataclass(frozen=True)
class DeviceChange:
    """A stent or graft (keyed by its from and to segments) in one exam only."""

    side: Side
    kind: str  # "stent" | "graft"
    from_: str
    to: str
    change: str  # "new" | "no-longer-recorded"


@dataclass(frozen=True)
class AbiChange:
    """The ABI of one leg in both exams; ``significant`` is None when it cannot be judged."""

    side: Side
    before: float | None
    after: float | None
    change: float | None  # after - before, two decimals
    significant: bool | None  # a fall of more than 0.15
    basis: str


@dataclass(frozen=True)
class Comparison:
    """Everything that changed between the prior exam and the current one."""

    interval_days: int | None
    segments: tuple[SegmentChange, ...]
    lesions: tuple[LesionChange, ...]
    devices: tuple[DeviceChange, ...]
    abi: tuple[AbiChange, ...]
    notes: tuple[str, ...]
