"""DICOM Encapsulated PDF (PS3.3 A.45.1) for the image archive, built with pydicom.

The sheet's PDF bytes go in Encapsulated Document (0042,0011) unchanged. Patient and study
attributes come from the study file; the exam's Study Instance UID is reused when the study file
gives one (``exam.study_uid``) so the archive files the sheet beside the images, otherwise a new
one is made (and the command line warns that the map will form a study of its own). Series and
SOP Instance UIDs are always new.

Every UID this tool makes comes from one root: ``2.25``, the UUID-derived root of PS3.5 B.2
(``2.25.`` followed by a random UUID as one integer), never a library's example root. The
Implementation Class UID is fixed: ``2.25.`` and the integer of the name-based UUID (RFC 4122
version 5, URL namespace) of ``IMPLEMENTATION_NAME``. Study Time is the time the map is made (the
study file holds no time of day; empty in a de-identified file); Study ID is the accession number
(at most 16 characters, PS3.5 SH) or ``1`` without one. pydicom is imported only here.
"""

from __future__ import annotations

import datetime as dt
import io
import uuid
from dataclasses import dataclass
from typing import TYPE_CHECKING

from diagram.reading.study import Study

if TYPE_CHECKING:
    from pydicom.dataset import Dataset

DOCUMENT_TITLE = "Leg arterial duplex map"  # generic: no identifier in the title
MANUFACTURER = "limbchart"
_SEX = {"female": "F", "male": "M", "other": "O", "unknown": ""}
UID_ROOT = "2.25"  # PS3.5 B.2: a UUID written as one decimal integer
IMPLEMENTATION_NAME = "https://limbchart.invalid/dicom-implementation"
IMPLEMENTATION_CLASS_UID = f"{UID_ROOT}.{uuid.uuid5(uuid.NAMESPACE_URL, IMPLEMENTATION_NAME).int}"
NO_STUDY_UID = (
    "exam.study_uid: not given: the map will form a study of its own in the archive; give the "
    "exam's Study Instance UID to file it beside the images."
)


def new_uid() -> str:
    """Return a new UID under the tool's one root (2.25, UUID-derived; at most 64 characters)."""
    return f"{UID_ROOT}.{uuid.uuid4().int}"


def study_id(accession: str) -> str:
    """Return the Study ID (SH, 16 characters): the accession number, or 1 without one."""
    return accession.strip()[:16] or "1"


@dataclass(frozen=True)
class DicomIdentity:
    """What the DICOM header says about the patient and the exam.

    ``burned_in`` is True when the sheet shows a name or a date (a normal report), False for a
    de-identified teaching sheet.
    """

    patient_name: str = ""
    patient_id: str = ""
    birth_date: str = ""  # YYYYMMDD or empty
    sex: str = ""
    study_date: str = ""
    accession: str = ""
    institution: str = ""
    referrer: str = ""
    study_uid: str | None = None
    burned_in: bool = True
    deidentified: bool = False
    deidentification_method: str = ""


def _da(value: dt.date | None) -> str:
    return value.strftime("%Y%m%d") if value else ""


def _pn(name: str | None) -> str:
    """Return a person name in DICOM form (family^given) from "Family, Given"."""
    if not name:
        return ""
    if "," in name:
        family, _, given = name.partition(",")
        return f"{family.strip()}^{given.strip()}"
    return name.strip()


def identity_from_study(study: Study) -> DicomIdentity:
    """Return the header values of a normal (identified) report for this study."""
    p, e = study.patient, study.exam
    return DicomIdentity(
        patient_name=_pn(p.name),
        patient_id=p.id or "",
        birth_date=_da(p.birth_date),
        sex=_SEX.get(p.sex or "", ""),
        study_date=_da(e.date),
        accession=e.accession or "",
        institution=e.site or "",
        referrer=_pn(e.referrer),
        study_uid=e.study_uid,
        burned_in=True,
    )


def _patient_and_study(ds: Dataset, ident: DicomIdentity, moment: dt.datetime) -> None:
    """Set the Patient and General Study modules of the instance."""
    # Patient module
    ds.PatientName = ident.patient_name
    ds.PatientID = ident.patient_id
    ds.PatientBirthDate = ident.birth_date
    ds.PatientSex = ident.sex
    # General Study module
    ds.StudyInstanceUID = ident.study_uid or new_uid()
    ds.StudyDate = ident.study_date
    # the moment of making the map; a de-identified file holds no time (PS3.15 E: Z)
    ds.StudyTime = "" if ident.deidentified else moment.strftime("%H%M%S")
    ds.ReferringPhysicianName = ident.referrer
    ds.StudyID = study_id(ident.accession)
    ds.AccessionNumber = ident.accession


def encapsulated_pdf(
    pdf: bytes, ident: DicomIdentity, *, now: dt.datetime | None = None, version: str = ""
) -> bytes:
    """Return a DICOM Part 10 file holding ``pdf`` as an Encapsulated PDF instance."""
    from pydicom.dataset import Dataset, FileMetaDataset
    from pydicom.uid import UID, EncapsulatedPDFStorage, ExplicitVRLittleEndian

    moment = now or dt.datetime.now()
    sop_uid = UID(new_uid())
    meta = FileMetaDataset()
    meta.MediaStorageSOPClassUID = EncapsulatedPDFStorage
    meta.MediaStorageSOPInstanceUID = sop_uid
    meta.TransferSyntaxUID = ExplicitVRLittleEndian
    meta.ImplementationClassUID = UID(IMPLEMENTATION_CLASS_UID)
    meta.ImplementationVersionName = f"LIMBCHART{version.replace('.', '')}"[:16]

    ds = Dataset()
    ds.file_meta = meta
    ds.SpecificCharacterSet = "ISO_IR 192"  # UTF-8
    ds.SOPClassUID = EncapsulatedPDFStorage
    ds.SOPInstanceUID = sop_uid
    _patient_and_study(ds, ident, moment)
    # Encapsulated Document Series module
    ds.Modality = "DOC"
    ds.SeriesInstanceUID = new_uid()
    ds.SeriesNumber = 1
    # General Equipment and SC Equipment modules
    ds.Manufacturer = MANUFACTURER
    ds.SoftwareVersions = version or "0"
    ds.ConversionType = "WSD"  # workstation
    if ident.institution:
        ds.InstitutionName = ident.institution
    # Encapsulated Document module
    ds.InstanceNumber = 1
    ds.ContentDate = moment.strftime("%Y%m%d")
    ds.ContentTime = moment.strftime("%H%M%S")
    ds.AcquisitionDateTime = moment.strftime("%Y%m%d%H%M%S")
    ds.BurnedInAnnotation = "YES" if ident.burned_in else "NO"
    ds.DocumentTitle = DOCUMENT_TITLE
    ds.ConceptNameCodeSequence = []
    ds.MIMETypeOfEncapsulatedDocument = "application/pdf"
    data = pdf if len(pdf) % 2 == 0 else pdf + b"\x00"  # OB values have even length
    ds.EncapsulatedDocument = data
    ds.EncapsulatedDocumentLength = len(pdf)
    if ident.deidentified:
        ds.PatientIdentityRemoved = "YES"
        ds.DeidentificationMethod = ident.deidentification_method
    out = io.BytesIO()
    ds.save_as(out, enforce_file_format=True)
    return out.getvalue()
