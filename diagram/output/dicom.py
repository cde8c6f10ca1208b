"""DICOM Encapsulated PDF (PS3.3 A.45.1) for the image archive, built with pydicom.

The sheet's PDF bytes go in Encapsulated Document (0042,0011) unchanged. Patient and study
attributes come from the study file; the exam's Study Instance UID is reused when the study file
gives one (``exam.study_uid``) so the archive files the sheet beside the images, otherwise a new
one is made. Series and SOP Instance UIDs are always new. pydicom is imported only here.
"""

from __future__ import annotations

import datetime as dt
import io
from dataclasses import dataclass

from diagram.reading.study import Study

DOCUMENT_TITLE = "Leg arterial duplex map"  # generic: no identifier in the title
MANUFACTURER = "limbchart"
_SEX = {"female": "F", "male": "M", "other": "O", "unknown": ""}


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


def encapsulated_pdf(
    pdf: bytes, ident: DicomIdentity, *, now: dt.datetime | None = None, version: str = ""
) -> bytes:
    """Return a DICOM Part 10 file holding ``pdf`` as an Encapsulated PDF instance."""
    from pydicom.dataset import Dataset, FileMetaDataset
    from pydicom.uid import EncapsulatedPDFStorage, ExplicitVRLittleEndian, generate_uid

    moment = now or dt.datetime.now()
    sop_uid = generate_uid()
    meta = FileMetaDataset()
    meta.MediaStorageSOPClassUID = EncapsulatedPDFStorage
    meta.MediaStorageSOPInstanceUID = sop_uid
    meta.TransferSyntaxUID = ExplicitVRLittleEndian
    meta.ImplementationVersionName = f"LIMBCHART{version.replace('.', '')}"[:16]

    ds = Dataset()
    ds.file_meta = meta
    ds.SpecificCharacterSet = "ISO_IR 192"  # UTF-8
    ds.SOPClassUID = EncapsulatedPDFStorage
    ds.SOPInstanceUID = sop_uid
    # Patient module
    ds.PatientName = ident.patient_name
    ds.PatientID = ident.patient_id
    ds.PatientBirthDate = ident.birth_date
    ds.PatientSex = ident.sex
    # General Study module
    ds.StudyInstanceUID = ident.study_uid or generate_uid()
    ds.StudyDate = ident.study_date
    ds.StudyTime = ""
    ds.ReferringPhysicianName = ident.referrer
    ds.StudyID = ""
    ds.AccessionNumber = ident.accession
    # Encapsulated Document Series module
    ds.Modality = "DOC"
    ds.SeriesInstanceUID = generate_uid()
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
