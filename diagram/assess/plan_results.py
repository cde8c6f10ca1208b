"""The planning summary of one leg as frozen dataclasses; ``planning.py`` computes it.

Every grade, stage and score travels with the text of what set it (``*_drivers``, ``*_basis``)
and the assumptions made, so a sheet never shows a derived value without its basis.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum

from diagram.anatomy import Side


class PlanLevel(StrEnum):
    """Levels of the planning summary; the CFA counts with inflow (GVG 2019)."""

    INFLOW = "inflow"
    FEMOROPOPLITEAL = "femoropopliteal"
    INFRAPOPLITEAL = "infrapopliteal"
    PEDAL = "pedal"


@dataclass(frozen=True)
class LevelSummary:
    """Disease at one level: worst band, lengths >= 50% and occluded, significant lesions."""

    level: PlanLevel
    worst_band: str
    diseased_cm: float
    occluded_cm: float
    lesion_count: int  # lesions (and segment samples) >= 50% touching the level
    not_assessed: tuple[str, ...]
    segment_count: int = 0  # segments of the level; "partly assessed" when some are not

    @property
    def assessment(self) -> str:
        """Return "assessed", "partly assessed" or "not assessed" for the level's segments."""
        if not self.not_assessed:
            return "assessed"
        return "not assessed" if len(self.not_assessed) >= self.segment_count else "partly assessed"


@dataclass(frozen=True)
class Occlusion:
    """An occlusion: where it starts, its length and where flow returns (None when unknown)."""

    segment: str
    start_cm: float
    length_cm: float
    reconstitutes: str | None
    source: str


@dataclass(frozen=True)
class RunoffVessel:
    """One tibial artery's runoff: patent / occluded / not-assessed and its SVS vessel scale."""

    vessel: str
    state: str
    scale: float | None
    basis: str


@dataclass(frozen=True)
class VesselGrade:
    """The IP grade a tibial artery would have as the target."""

    vessel: str
    grade: int | None
    diseased_cm: float
    occluded_cm: float
    drivers: tuple[str, ...]


@dataclass(frozen=True)
class Planning:
    """The surgeon's summary of one leg; every grade carries the text of what set it."""

    side: Side
    levels: tuple[LevelSummary, ...]
    occlusions: tuple[Occlusion, ...]
    runoff: tuple[RunoffVessel, ...]
    runoff_vessels: int  # assessed tibial arteries patent to the ankle
    runoff_unassessed: tuple[str, ...]
    runoff_score: float | None
    runoff_basis: str
    inflow_band: str
    inflow_significant: bool | None
    inflow_drivers: tuple[str, ...]
    fp_grade: int | None
    fp_drivers: tuple[str, ...]
    target: str | None
    target_basis: str
    ip_grade: int | None
    ip_drivers: tuple[str, ...]
    ip_by_vessel: tuple[VesselGrade, ...]
    stage: str | None
    stage_basis: str
    tasc_fp: str | None
    tasc_drivers: tuple[str, ...]
    assumptions: tuple[str, ...]
    # a grade built on segments that were not examined is provisional: unseen disease may raise it
    fp_provisional: bool = False
    ip_provisional: bool = False
    stage_provisional: bool = False
    tasc_provisional: bool = False
