"""Build vascular ultrasound structured reports (DICOM SR) for the tests, following the standard.

The content tree follows PS3.16 TID 5100 "Vascular Ultrasound Procedure Report": a root CONTAINER
titled DCM 125100 (or a CID 12100 title), sections (TID 5103) titled "Findings" with a Laterality
modifier, measurement groups (TID 5104) with a Finding Site (CID 12109) and a Topographical
modifier (CID 12116), and numeric measurements (TID 300) coded from CID 12119/12120 with UCUM
units. The header carries the modules of the Comprehensive SR IOD (PS3.3 A.35.3) so that
dciodvfy reports no errors. Codes come from pydicom's offline dictionaries.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path

from pydicom.dataset import Dataset, FileMetaDataset
from pydicom.sequence import Sequence
from pydicom.sr.codedict import codes
from pydicom.uid import ComprehensiveSRStorage, ExplicitVRLittleEndian

ROOT = "2.25"  # UUID-derived UIDs (PS3.5 B.2), fixed ones below so files are reproducible


@dataclass(frozen=True)
class Measure:
    """One numeric measurement: a concept code, a value as written, a UCUM unit."""

    concept: object
    value: str
    unit: str = "cm/s"


@dataclass(frozen=True)
class Group:
    """One TID 5104 measurement group."""

    site: object  # a pydicom Code from CID 12109 (or a vein, to be warned about)
    modifier: object | None = None  # Proximal, Middle, Distal
    measures: tuple[Measure, ...] = ()
    modifier_as_child: bool = True  # this edition puts the modifier under the finding site


@dataclass(frozen=True)
class Section:
    """One TID 5103 section: a side and its groups."""

    side: str  # "right" or "left"
    groups: tuple[Group, ...]
    heading: object = field(default_factory=lambda: codes.LN.Findings)  # or codes.DCM.Findings


def psv(value: str, unit: str = "cm/s") -> Measure:
    return Measure(codes.LN.PeakSystolicVelocity, value, unit)


def edv(value: str, unit: str = "cm/s") -> Measure:
    return Measure(codes.LN.EndDiastolicVelocity, value, unit)


def _code(code: object) -> Dataset:
    item = Dataset()
    item.CodeValue = code.value  # type: ignore[attr-defined]
    item.CodingSchemeDesignator = code.scheme_designator  # type: ignore[attr-defined]
    item.CodeMeaning = code.meaning  # type: ignore[attr-defined]
    return item


def _item(relation: str, kind: str, concept: object) -> Dataset:
    item = Dataset()
    item.RelationshipType = relation
    item.ValueType = kind
    item.ConceptNameCodeSequence = Sequence([_code(concept)])
    return item


def code_item(relation: str, concept: object, value: object) -> Dataset:
    item = _item(relation, "CODE", concept)
    item.ConceptCodeSequence = Sequence([_code(value)])
    return item


def num_item(measure: Measure) -> Dataset:
    item = _item("CONTAINS", "NUM", measure.concept)
    value = Dataset()
    value.NumericValue = measure.value
    unit = Dataset()
    unit.CodeValue = measure.unit
    unit.CodingSchemeDesignator = "UCUM"
    unit.CodeMeaning = measure.unit
    value.MeasurementUnitsCodeSequence = Sequence([unit])
    item.MeasuredValueSequence = Sequence([value])
    return item


def text_item(relation: str, concept: object, text: str) -> Dataset:
    item = _item(relation, "TEXT", concept)
    item.TextValue = text
    return item


def container(relation: str | None, concept: object, children: Iterable[Dataset]) -> Dataset:
    item = _item(relation or "CONTAINS", "CONTAINER", concept)
    if relation is None:
        del item.RelationshipType
    item.ContinuityOfContent = "SEPARATE"
    item.ContentSequence = Sequence(list(children))
    return item


def group_item(group: Group) -> Dataset:
    site = code_item("HAS CONCEPT MOD", codes.SCT.FindingSite, group.site)
    children = [site]
    if group.modifier is not None:
        modifier = code_item("HAS CONCEPT MOD", codes.SCT.TopographicalModifier, group.modifier)
        if group.modifier_as_child:
            site.ContentSequence = Sequence([modifier])
        else:
            children.append(modifier)
    children += [num_item(m) for m in group.measures]
    return container("CONTAINS", codes.DCM.MeasurementGroup, children)


def section_item(section: Section) -> Dataset:
    side = codes.SCT.Right if section.side == "right" else codes.SCT.Left
    children = [
        code_item("HAS CONCEPT MOD", codes.SCT.FindingSite, codes.SCT.LowerLimb),
        code_item("HAS CONCEPT MOD", codes.SCT.Laterality, side),
        *(group_item(g) for g in section.groups),
    ]
    return container("CONTAINS", section.heading, children)


@dataclass(frozen=True)
class Header:
    """The header facts a report carries; fictional."""

    patient_name: str = "Demo^Ada"
    patient_id: str = "DEMO-SR-01"
    birth_date: str = "19480314"
    sex: str = "F"
    study_date: str = "20261120"
    accession: str = "DEMO-ACC-77"
    study_uid: str = "2.25.300000000000000000000000000000000001"
    referrer: str = "Referrer^Demo"
    institution: str = "Demo Vascular Lab"


def report(
    sections: Iterable[Section],
    *,
    header: Header | None = None,
    title: object = None,
    summary: str | None = None,
    extra: Iterable[Dataset] = (),
) -> Dataset:
    """Return a whole Comprehensive SR dataset (file meta included)."""
    head = header or Header()
    ds = Dataset()
    ds.file_meta = FileMetaDataset()
    ds.file_meta.MediaStorageSOPClassUID = ComprehensiveSRStorage
    ds.file_meta.MediaStorageSOPInstanceUID = f"{ROOT}.300000000000000000000000000000000003"
    ds.file_meta.TransferSyntaxUID = ExplicitVRLittleEndian
    ds.SpecificCharacterSet = "ISO_IR 192"
    ds.SOPClassUID = ComprehensiveSRStorage
    ds.SOPInstanceUID = ds.file_meta.MediaStorageSOPInstanceUID
    ds.PatientName = head.patient_name
    ds.PatientID = head.patient_id
    ds.PatientBirthDate = head.birth_date
    ds.PatientSex = head.sex
    ds.StudyInstanceUID = head.study_uid
    ds.StudyDate = head.study_date
    ds.StudyTime = "101500"
    ds.ReferringPhysicianName = head.referrer
    ds.StudyID = "1"
    ds.AccessionNumber = head.accession
    ds.Modality = "SR"
    ds.SeriesInstanceUID = f"{ROOT}.300000000000000000000000000000000002"
    ds.SeriesNumber = 1
    ds.ReferencedPerformedProcedureStepSequence = Sequence()
    ds.Manufacturer = "Demo"
    ds.InstitutionName = head.institution
    ds.InstanceNumber = 1
    ds.CompletionFlag = "COMPLETE"
    ds.VerificationFlag = "UNVERIFIED"
    ds.ContentDate = head.study_date
    ds.ContentTime = "103000"
    ds.PerformedProcedureCodeSequence = Sequence()
    children: list[Dataset] = [*(section_item(s) for s in sections), *extra]
    if summary is not None:
        children.insert(
            0,
            container(
                "CONTAINS", codes.DCM.Summary, [text_item("CONTAINS", codes.DCM.Comment, summary)]
            ),
        )
    root = container(None, title or codes.DCM.VascularUltrasoundProcedureReport, children)
    for key in ("ValueType", "ConceptNameCodeSequence", "ContinuityOfContent", "ContentSequence"):
        setattr(ds, key, getattr(root, key))
    template = Dataset()
    template.MappingResource = "DCMR"
    template.TemplateIdentifier = "5100"
    ds.ContentTemplateSequence = Sequence([template])
    return ds


def write(ds: Dataset, path: Path) -> Path:
    ds.save_as(path, enforce_file_format=True)
    return path


# --- a whole exam -----------------------------------------------------------------------------

P, M, D = codes.cid12116.Proximal, codes.cid12116.Middle, codes.cid12116.Distal
A = codes.cid12109


def bilateral() -> list[Section]:
    """Both legs: the right in cm/s, the left in m/s and mm/s, a repeat group and a vein."""
    right = Section(
        "right",
        (
            Group(A.CommonFemoralArtery, None, (psv("112"), edv("18"))),
            Group(A.SuperficialFemoralArtery, P, (psv("90"), edv("15"))),
            Group(A.SuperficialFemoralArtery, M, (psv("92"),)),
            Group(A.SuperficialFemoralArtery, D, (psv("88"),), modifier_as_child=False),
            Group(A.PoplitealArtery, P, (psv("70"),)),
            Group(A.PoplitealArtery, D, (psv("66"),)),
            Group(A.PosteriorTibialArtery, D, (psv("54"),)),
        ),
    )
    left = Section(
        "left",
        (
            Group(A.CommonFemoralArtery, None, (psv("1.05", "m/s"), edv("0.2", "m/s"))),
            Group(A.SuperficialFemoralArtery, P, (psv("880", "mm/s"),)),
            Group(A.SuperficialFemoralArtery, M, (psv("3.9", "m/s"), edv("0.4", "m/s"))),
            Group(A.SuperficialFemoralArtery, M, (psv("4.1", "m/s"), edv("0.45", "m/s"))),
            Group(A.SuperficialFemoralArtery, D, (psv("0.45", "m/s"),)),
            Group(codes.SCT.CommonFemoralVein, None, (psv("0.3", "m/s"),)),
        ),
        heading=codes.DCM.Findings,
    )
    return [right, left]
