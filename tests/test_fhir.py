"""HL7 FHIR R4 out: the Bundle validated with the fhir.resources models, value by value.

fhir.resources ships the R4B models (FHIR 4.3, the R4 line); Bundle, Patient, DiagnosticReport
and Observation are the same there for every element written here.
"""

from __future__ import annotations

import base64
import json
from pathlib import Path

import pytest

from diagram.cli.main import main

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted(p for p in (ROOT / "examples").glob("*.yaml"))


def _bundle(study: Path, out: Path, capsys: pytest.CaptureFixture[str], *extra: str) -> dict:
    with pytest.raises(SystemExit) as done:
        main(["draw", str(study), "-o", str(out), *extra])
    assert done.value.code == 0, capsys.readouterr().err
    data: dict = json.loads(out.read_text(encoding="utf-8"))
    return data


@pytest.mark.parametrize("example", EXAMPLES, ids=lambda p: p.stem)
def test_every_example_gives_a_valid_bundle(
    example: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    bundle_model = pytest.importorskip("fhir.resources.R4B.bundle")
    data = _bundle(example, tmp_path / "report.fhir.json", capsys)
    bundle = bundle_model.Bundle.model_validate(data)  # raises on any violation
    kinds = [e.resource.get_resource_type() for e in bundle.entry]
    assert kinds[:2] == ["Patient", "DiagnosticReport"]
    assert set(kinds[2:]) <= {"Observation"}


def test_report_and_indices_value_by_value(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    pytest.importorskip("fhir.resources.R4B.bundle")
    data = _bundle(
        ROOT / "examples" / "clti-multilevel.yaml", tmp_path / "r.json", capsys, "--format", "fhir"
    )
    resources = [e["resource"] for e in data["entry"]]
    patient, report, *observations = resources
    assert patient["gender"] in ("female", "male", "other", "unknown")
    assert report["status"] == "preliminary"
    assert report["code"]["coding"][0] == {
        "system": "http://loinc.org",
        "code": "44174-1",  # DICOM PS3.16 CID 12100
        "display": "US Doppler Lower Extremity Vessels Report",
    }
    assert report["subject"]["reference"] == data["entry"][0]["fullUrl"]
    assert report["effectiveDateTime"] == "2026-11-27"  # the exam date of the study file
    assert "Right leg: limb stage III" in report["conclusion"]
    assert "ABI 0.29 abnormal, severe (PT 44 / brachial 152 mmHg)" in report["conclusion"]
    assert "not a substitute" in report["conclusion"]
    form = report["presentedForm"][0]
    assert form["contentType"] == "application/pdf"
    assert base64.b64decode(form["data"]).startswith(b"%PDF-")
    assert [r["reference"] for r in report["result"]] == [e["fullUrl"] for e in data["entry"][2:]]
    right_abi = observations[0]
    assert right_abi["code"]["coding"][0]["code"] == "8581-1"  # DICOM PS3.16 CID 3620
    assert right_abi["valueQuantity"] == {
        "value": 0.29,
        "unit": "ratio",
        "system": "http://unitsofmeasure.org",
        "code": "1",
    }
    assert right_abi["interpretation"][0]["coding"][0]["code"] == "L"
    assert right_abi["bodySite"]["coding"][0]["code"] == "61685007:272741003=24028007"
    right_tbi = observations[1]
    assert right_tbi["code"] == {"text": "Toe-brachial index"}  # no published code found
    assert right_tbi["valueQuantity"]["value"] == 0.12
    sides = [o["bodySite"]["text"] for o in observations]
    assert sides == ["right lower limb", "right lower limb", "left lower limb", "left lower limb"]


def test_teaching_never_writes_fhir() -> None:
    from diagram.cli.teach import FORMAT_CHOICES
    from diagram.teaching.case import TEACH_FORMATS

    assert "fhir" not in FORMAT_CHOICES and "fhir" not in TEACH_FORMATS
