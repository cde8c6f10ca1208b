"""The codes a vascular ultrasound report (DICOM SR) is read by, and the segment of each site.

:mod:`diagram.reading.sr` walks the report's content tree; every code it compares against is
here, each table with the DICOM part and context group (CID) or template (TID) it comes from, and
so are the few functions that read a coded content item (its concept, its coded value, its name
in a note).

Segment mapping (finding site + topographical modifier -> segment id; ``-`` = no modifier taken):

=============================  ==========  ================================================
finding site (SCT, CID 12109)  modifier    segment
=============================  ==========  ================================================
73634005 Common iliac artery   -           CIA
113269004 External iliac       -           EIA
90024005 Internal iliac        -           IIA
181347005 Common femoral       -           CFA
31677005 Profunda femoris      -           PFA
181349008 Superficial femoral  P / M / D   SFA-P / SFA-M / SFA-D
43899006 Popliteal             P / D       POP-AK / POP-BK (a Middle popliteal is not placed)
68053000 Anterior tibial       P / M / D   ATA-P / ATA-M / ATA-D
13363002 Posterior tibial      P / M / D   PTA-P / PTA-M / PTA-D
8821006 Peroneal               P / M / D   PER-P / PER-M / PER-D
86547008 Dorsalis pedis        -           DPA
83018002 Plantar arterial arch -           PLA
=============================  ==========  ================================================

Modifiers (CID 12116): SCT 40415009 Proximal (P), NCIt C25569 Middle (M), SCT 46053002 Distal
(D). Measurements: LN 11726-7 Peak Systolic Velocity -> ``psv``, LN 11653-3 End Diastolic
Velocity -> ``edv``, converted to cm/s from the UCUM unit (cm/s, m/s, mm/s; any other unit is
refused). Side: SCT 24028007 Right, SCT 7771000 Left (Laterality SCT 272741003, on the section or
on the group). Editions differ, and each form is accepted: the section heading LN 59776-5 or DCM
121070 "Findings"; the document title DCM 125100 or a title of CID 12100.
"""

from __future__ import annotations

from decimal import Decimal
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from pydicom.dataset import Dataset

Code = tuple[str, str]  # (coding scheme designator, code value)

# DICOM PS3.16 CID 12100 (Vascular Ultrasound Report Document Title) and DCM 125100.
TITLES: frozenset[Code] = frozenset(
    {
        ("DCM", "125100"),  # Vascular Ultrasound Procedure Report
        ("LN", "24616-5"),  # US Carotid Arteries Report
        ("LN", "46375-2"),  # US Artery Report
        ("LN", "39036-9"),  # US Vein Report
        ("LN", "39445-2"),  # US Doppler Vessels Report
        ("LN", "24534-0"),  # US Doppler Abdominal Vessels Report
        ("LN", "43771-5"),  # US Doppler Extremity Vessels Report
        ("LN", "24733-8"),  # US Doppler Head Vessels Report
        ("LN", "44174-1"),  # US Doppler Lower Extremity Vessels Report
        ("LN", "39448-6"),  # US Doppler Upper Extremity Vessels Report
        ("SCT", "48526000"),  # Peripheral Vascular Ultrasound Report
    }
)
FINDINGS: frozenset[Code] = frozenset({("LN", "59776-5"), ("DCM", "121070")})
FINDING_SITE: Code = ("SCT", "363698007")
TOPOGRAPHICAL_MODIFIER: Code = ("SCT", "106233006")
LATERALITY: Code = ("SCT", "272741003")
SIDES: dict[Code, str] = {("SCT", "24028007"): "right", ("SCT", "7771000"): "left"}
MODIFIERS: dict[Code, str] = {
    ("SCT", "40415009"): "P",  # Proximal
    ("NCIt", "C25569"): "M",  # Middle
    ("SCT", "46053002"): "D",  # Distal
}
# CID 12109 lower extremity arteries: (segment without modifier, or {modifier: segment})
VESSELS: dict[Code, str | dict[str, str]] = {
    ("SCT", "73634005"): "CIA",
    ("SCT", "113269004"): "EIA",
    ("SCT", "90024005"): "IIA",
    ("SCT", "181347005"): "CFA",
    ("SCT", "31677005"): "PFA",
    ("SCT", "181349008"): {"P": "SFA-P", "M": "SFA-M", "D": "SFA-D"},
    ("SCT", "43899006"): {"P": "POP-AK", "D": "POP-BK"},
    ("SCT", "68053000"): {"P": "ATA-P", "M": "ATA-M", "D": "ATA-D"},
    ("SCT", "13363002"): {"P": "PTA-P", "M": "PTA-M", "D": "PTA-D"},
    ("SCT", "8821006"): {"P": "PER-P", "M": "PER-M", "D": "PER-D"},
    ("SCT", "86547008"): "DPA",
    ("SCT", "83018002"): "PLA",
}
MEASUREMENTS: dict[Code, str] = {
    ("LN", "11726-7"): "psv",  # Peak Systolic Velocity
    ("LN", "11653-3"): "edv",  # End Diastolic Velocity
}
# UCUM velocity units a measurement may carry, as factors to cm/s.
TO_CM_S: dict[str, Decimal] = {"cm/s": Decimal(1), "m/s": Decimal(100), "mm/s": Decimal("0.1")}
# Text items kept as the study's notes (impressions and summaries).
SUMMARY_TEXT: frozenset[Code] = frozenset({("DCM", "121106"), ("DCM", "121111"), ("LN", "55112-7")})
# DICOM PS3.4 SR storage SOP classes a report may come in.
SR_CLASSES: frozenset[str] = frozenset(
    {
        "1.2.840.10008.5.1.4.1.1.88.11",  # Basic Text SR
        "1.2.840.10008.5.1.4.1.1.88.22",  # Enhanced SR
        "1.2.840.10008.5.1.4.1.1.88.33",  # Comprehensive SR
        "1.2.840.10008.5.1.4.1.1.88.34",  # Comprehensive 3D SR
        "1.2.840.10008.5.1.4.1.1.88.35",  # Extensible SR
    }
)
# DICOM PS3.3 Patient's Sex (0010,0040); any other value is left out.
PATIENT_SEX: dict[str, str] = {"F": "female", "M": "male", "O": "other"}


def segment_of(vessel: Code | None, modifier: Code | None) -> str | None:
    """Return the segment id of a finding site and its modifier, or None when it has none."""
    target = VESSELS.get(vessel or ("", ""))
    if isinstance(target, str) or target is None:
        return target
    return target.get(MODIFIERS.get(modifier or ("", ""), ""))


def code_of(seq: Any) -> Code | None:
    """Return the (scheme, value) of the first item of a code sequence, or None when empty."""
    if not seq:
        return None
    item = seq[0]
    return (str(item.get("CodingSchemeDesignator", "")), str(item.get("CodeValue", "")))


def meaning_of(seq: Any) -> str:
    """Return the Code Meaning of the first item of a code sequence (empty when none)."""
    return str(seq[0].get("CodeMeaning", "")) if seq else ""


def concept_of(item: Dataset) -> Code | None:
    """Return the concept name code of a content item."""
    return code_of(item.get("ConceptNameCodeSequence"))


def value_code_of(item: Dataset) -> Code | None:
    """Return the coded value of a CODE content item (None for any other value type)."""
    return code_of(item.get("ConceptCodeSequence")) if item.get("ValueType") == "CODE" else None


def item_name(item: Dataset) -> str:
    """Return how a note names an item: its concept's meaning, and its coded value's."""
    concept = meaning_of(item.get("ConceptNameCodeSequence"))
    value = meaning_of(item.get("ConceptCodeSequence")) if item.get("ValueType") == "CODE" else ""
    if concept and value:
        return f"{concept!r} = {value!r}"
    if concept or value:
        return repr(concept or value)
    code = concept_of(item)
    return f"code {code[0]} {code[1]}" if code else "an item without a concept name"
