"""The study: findings of one duplex exam as validated, immutable values.

Field names are the study file's keys (DESIGN.md §3). Units are fixed by the file contract:
velocities cm/s, pressures mmHg, lengths cm, angles degrees, pulse repetition frequency Hz,
transmit frequency MHz.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping
from dataclasses import dataclass, field
from enum import StrEnum

from diagram.anatomy import Side


class Waveform(StrEnum):
    """Doppler waveform shape."""

    TRIPHASIC = "triphasic"
    BIPHASIC = "biphasic"
    MONOPHASIC = "monophasic"
    ABSENT = "absent"


class Flow(StrEnum):
    """Flow direction seen in the segment."""

    ANTEGRADE = "antegrade"
    RETROGRADE = "retrograde"
    ABSENT = "absent"


class Presentation(StrEnum):
    """The leg's clinical presentation; rest pain and tissue loss mark chronic limb-threatening
    ischaemia (CLTI: Global Vascular Guidelines 2019)."""

    ASYMPTOMATIC = "asymptomatic"
    CLAUDICATION = "claudication"
    REST_PAIN = "rest-pain"
    TISSUE_LOSS = "tissue-loss"

    @property
    def clti(self) -> bool:
        """Return True for rest pain and tissue loss."""
        return self in (Presentation.REST_PAIN, Presentation.TISSUE_LOSS)


class Plaque(StrEnum):
    """Plaque character at the site."""

    NONE = "none"
    SOFT = "soft"
    MIXED = "mixed"
    CALCIFIED = "calcified"


@dataclass(frozen=True)
class Sample:
    """Measurements at one site; every field is optional in the file."""

    psv: float | None = None  # peak systolic velocity, cm/s
    edv: float | None = None  # end-diastolic velocity, cm/s
    vr: float | None = None  # velocity ratio measured directly
    proximal_psv: float | None = None  # reference PSV upstream, cm/s
    angle: float | None = None  # insonation angle, degrees
    prf_hz: float | None = None  # pulse repetition frequency, Hz
    f0_mhz: float | None = None  # transmitted frequency, MHz
    shift_hz: float | None = None  # peak systolic Doppler shift, Hz (PSV computed from it)
    waveform: Waveform | None = None
    flow: Flow | None = None
    plaque: Plaque | None = None
    occluded: bool = False
    band: str | None = None  # a grade given by hand where velocities could not be obtained
    not_assessed: bool = False
    comment: str | None = None
    line: int | None = None  # line in the study file, for messages


@dataclass(frozen=True)
class SegmentFinding(Sample):
    """The sample recorded for a whole segment."""

    id: str = ""
    samples: tuple[Sample, ...] = ()  # repeated measurements in order; the fields above are graded


@dataclass(frozen=True)
class Lesion(Sample):
    """A focal lesion or occlusion; it starts in ``at`` and may run on downstream."""

    at: str = ""
    from_cm: float | None = None  # offset from the start of ``at``
    length_cm: float | None = None
    reconstitutes: str | None = None  # segment where flow returns below an occlusion


@dataclass(frozen=True)
class Stent:
    """A stent from one segment to another (inclusive)."""

    from_: str
    to: str
    from_cm: float | None = None
    length_cm: float | None = None
    line: int | None = None


GRAFT_SITES: tuple[str, ...] = (
    "proximal_anastomosis",
    "proximal",
    "mid",
    "distal",
    "distal_anastomosis",
)
GRAFT_BODY_SITES: tuple[str, ...] = ("proximal", "mid", "distal")


@dataclass(frozen=True)
class Graft:
    """A bypass graft from its origin segment to its target segment, with samples along it."""

    conduit: str  # vein | prosthetic
    from_: str
    to: str
    samples: Mapping[str, Sample] = field(default_factory=dict)  # by GRAFT_SITES
    line: int | None = None


@dataclass(frozen=True)
class LimbPressures:
    """Systolic pressures at one ankle and toe, mmHg."""

    pt: float | None = None
    dp: float | None = None
    toe: float | None = None
    tcpo2: float | None = None  # transcutaneous oxygen pressure on the foot, mmHg
    noncompressible: tuple[str, ...] = ()  # ankle arteries the cuff could not compress: pt, dp


@dataclass(frozen=True)
class Pressures:
    """Systolic pressures of the exam, mmHg."""

    brachial_right: float | None = None
    brachial_left: float | None = None
    right: LimbPressures = field(default_factory=LimbPressures)
    left: LimbPressures = field(default_factory=LimbPressures)

    def limb(self, side: Side) -> LimbPressures:
        """Return the pressures of one leg."""
        return self.right if side is Side.RIGHT else self.left


@dataclass(frozen=True)
class Limb:
    """Findings of one leg."""

    side: Side
    segments: Mapping[str, SegmentFinding] = field(default_factory=dict)
    lesions: tuple[Lesion, ...] = ()
    stents: tuple[Stent, ...] = ()
    grafts: tuple[Graft, ...] = ()
    presentation: Presentation | None = None


@dataclass(frozen=True)
class Patient:
    """Patient identifiers; the teaching export removes every one of them."""

    name: str | None = None
    id: str | None = None
    birth_date: dt.date | None = None
    sex: str | None = None


@dataclass(frozen=True)
class Exam:
    """The exam's own facts."""

    date: dt.date | None = None
    accession: str | None = None
    site: str | None = None
    operator: str | None = None
    referrer: str | None = None
    indication: str | None = None
    criteria: str = "native"
    stent_criteria: str = "stent"
    graft_criteria: str = "graft"
    study_uid: str | None = None


@dataclass(frozen=True)
class Study:
    """One exam as read from a study file."""

    source: str  # the file it was read from, as given (for messages)
    patient: Patient
    exam: Exam
    pressures: Pressures
    limbs: Mapping[Side, Limb]
    prior: str | None = None
    notes: str | None = None
    format: int = 1
    import_notes: tuple[str, ...] = ()  # what an imported report held that could not be placed

    def limb(self, side: Side) -> Limb:
        """Return the findings of one leg (empty when the file gives none)."""
        return self.limbs.get(side) or Limb(side=side)
