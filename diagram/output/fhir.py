"""HL7 FHIR R4 out: a Bundle for the report system, built from the results and the sheet's PDF.

The Bundle (type ``collection``) holds a Patient, a DiagnosticReport and one Observation per
ankle-brachial and toe-brachial index per side. The report carries its status, its code, the
subject, the exam date, a conclusion taken from the planning summary (each figure with its basis)
and the caution, and the sheet as ``presentedForm`` (``application/pdf``, base64). Only the
standard library builds it; the tests validate it with the ``fhir.resources`` package.

Codes, each from a published source:

- DiagnosticReport.code: LOINC 44174-1 "US Doppler Lower Extremity Vessels Report", one of the
  document titles of DICOM PS3.16 CID 12100 (as pydicom's code dictionary holds it).
- ABI: LOINC 8581-1 "Tibial/brachial index", the ankle (tibial artery) over brachial systolic
  pressure ratio of DICOM PS3.16 CID 3620 (as pydicom's code dictionary holds it).
- TBI: no LOINC code was found in the sources at hand, so its code is text only (never an
  invented code).
- Interpretation: HL7 v3 ObservationInterpretation N (normal), L (low: borderline or abnormal),
  H (high: noncompressible), with the category, severity and basis as text.
- Body site: SNOMED CT 61685007 "Lower limb" refined by Laterality 272741003 = Right 24028007 or
  Left 7771000 (a post-coordinated expression).

The report's status is ``preliminary``: the map is a schematic aid that the interpreting
physician's report confirms, never the final word. Resource ids are random UUIDs (``urn:uuid:``).
"""

from __future__ import annotations

import base64
import json
import uuid
from typing import Any

from diagram.caution import CAUTION

LOINC = "http://loinc.org"
SNOMED = "http://snomed.info/sct"
UCUM = "http://unitsofmeasure.org"
INTERPRETATION = "http://terminology.hl7.org/CodeSystem/v3-ObservationInterpretation"
REPORT_CODE = {
    "coding": [
        {"system": LOINC, "code": "44174-1", "display": "US Doppler Lower Extremity Vessels Report"}
    ],
    "text": "Lower extremity arterial duplex ultrasound",
}
ABI_CODE = {
    "coding": [{"system": LOINC, "code": "8581-1", "display": "Tibial/brachial index"}],
    "text": "Ankle-brachial index",
}
TBI_CODE = {"text": "Toe-brachial index"}
_SIDE_CODE = {"right": "24028007", "left": "7771000"}
_INTERPRETATION = {
    "normal": ("N", "Normal"),
    "borderline": ("L", "Low"),
    "abnormal": ("L", "Low"),
    "noncompressible": ("H", "High"),
}
SIDES = ("right", "left")


def _urn() -> str:
    return f"urn:uuid:{uuid.uuid4()}"


def _patient(study: dict[str, Any]) -> dict[str, Any]:
    patient = study.get("patient") or {}
    out: dict[str, Any] = {"resourceType": "Patient"}
    if patient.get("id"):
        out["identifier"] = [{"value": patient["id"]}]
    name = patient.get("name")
    if name:
        family, comma, given = str(name).partition(",")
        human: dict[str, Any] = {"text": name}
        if comma:
            human["family"] = family.strip()
            human["given"] = given.split()
        out["name"] = [human]
    if patient.get("sex"):
        out["gender"] = patient["sex"]  # the study file's words are FHIR's AdministrativeGender
    if patient.get("birth_date"):
        out["birthDate"] = patient["birth_date"]
    return out


def _body_site(side: str) -> dict[str, Any]:
    return {
        "coding": [{"system": SNOMED, "code": f"61685007:272741003={_SIDE_CODE[side]}"}],
        "text": f"{side} lower limb",
    }


def _observation(
    kind: str, side: str, limb: dict[str, Any], subject: str, date: str | None
) -> dict[str, Any] | None:
    value = limb.get(kind)
    if value is None:
        return None
    category = limb.get(f"{kind}_category")
    severity = limb.get("abi_severity") if kind == "abi" else None
    basis = limb.get(f"{kind}_basis") or ""
    words = ", ".join(w for w in (category, severity) if w)
    out: dict[str, Any] = {
        "resourceType": "Observation",
        "status": "final",
        "code": ABI_CODE if kind == "abi" else TBI_CODE,
        "subject": {"reference": subject},
        "bodySite": _body_site(side),
        "valueQuantity": {"value": value, "unit": "ratio", "system": UCUM, "code": "1"},
        "note": [{"text": f"{kind.upper()} {value} = {basis}"}],
    }
    if date:
        out["effectiveDateTime"] = date
    if category in _INTERPRETATION:
        code, display = _INTERPRETATION[category]
        out["interpretation"] = [
            {
                "coding": [{"system": INTERPRETATION, "code": code, "display": display}],
                "text": f"{words} ({basis})" if basis else words,
            }
        ]
    return out


def _side_summary(side: str, limb: dict[str, Any]) -> str:
    plan = limb.get("planning") or {}
    parts = []
    if plan.get("stage"):
        parts.append(f"limb stage {plan['stage']} ({plan.get('stage_basis', '')})")
    if plan.get("inflow_band"):
        parts.append(f"worst inflow band {plan['inflow_band']}")
    if plan.get("runoff_vessels") is not None:
        parts.append(f"{plan['runoff_vessels']} patent runoff vessel(s) to the ankle")
    for kind, words in (
        ("abi", (limb.get("abi_category"), limb.get("abi_severity"))),
        ("tbi", (limb.get("tbi_category"),)),
    ):
        if limb.get(kind) is not None:
            said = ", ".join(w for w in words if w)
            parts.append(f"{kind.upper()} {limb[kind]} {said} ({limb.get(f'{kind}_basis', '')})")
    if not parts:
        return f"{side.capitalize()} leg: nothing assessed."
    return f"{side.capitalize()} leg: " + "; ".join(parts) + "."


def fhir_bundle(results: dict[str, Any], pdf: bytes, title: str) -> dict[str, Any]:
    """Return the FHIR R4 Bundle of one study's results with its sheet as PDF."""
    study = results.get("study") or {}
    exam = study.get("exam") or {}
    date = exam.get("date")
    limbs = results.get("limbs") or {}
    patient_url, report_url = _urn(), _urn()
    subject = patient_url
    observations = [
        obs
        for side in SIDES
        for kind in ("abi", "tbi")
        if (obs := _observation(kind, side, limbs.get(side) or {}, subject, date)) is not None
    ]
    entries = [(patient_url, _patient(study))]
    obs_urls = [_urn() for _ in observations]
    conclusion = " ".join(_side_summary(side, limbs.get(side) or {}) for side in SIDES)
    report: dict[str, Any] = {
        "resourceType": "DiagnosticReport",
        "status": "preliminary",
        "code": REPORT_CODE,
        "subject": {"reference": subject},
        "result": [{"reference": url} for url in obs_urls],
        "conclusion": f"{conclusion} {CAUTION}",
        "presentedForm": [
            {
                "contentType": "application/pdf",
                "data": base64.b64encode(pdf).decode("ascii"),
                "title": title,
            }
        ],
    }
    if date:
        report["effectiveDateTime"] = date
    entries.append((report_url, report))
    entries += list(zip(obs_urls, observations, strict=True))
    return {
        "resourceType": "Bundle",
        "type": "collection",
        "entry": [{"fullUrl": url, "resource": resource} for url, resource in entries],
    }


def fhir_bytes(results: dict[str, Any], pdf: bytes, title: str) -> bytes:
    """Return the Bundle as UTF-8 JSON text."""
    text = json.dumps(fhir_bundle(results, pdf, title), indent=2, ensure_ascii=False)
    return (text + "\n").encode("utf-8")
