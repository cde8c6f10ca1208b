"""The results document: every example validates against the shipped results schema."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from diagram._version import __version__
from diagram.assess import assess
from diagram.output.results import results_document, results_schema
from diagram.reading.load import load_study

ROOT = Path(__file__).resolve().parents[1]
STUDIES = sorted((ROOT / "examples").glob("*.yaml")) + sorted(
    (ROOT / "tests" / "data" / "valid").glob("*.*")
)


def validator():  # type: ignore[no-untyped-def]
    import jsonschema

    schema = results_schema()
    jsonschema.Draft202012Validator.check_schema(schema)
    return jsonschema.Draft202012Validator(schema)


@pytest.mark.parametrize("path", STUDIES, ids=lambda p: p.name)
def test_results_of_every_study_validate(path: Path) -> None:
    from diagram.reading.load import load_prior

    study = load_study(path)
    prior = load_prior(study) if path.parent.name == "examples" else None
    doc = results_document(assess(study, prior=prior), version=__version__)
    doc = json.loads(json.dumps(doc))  # exactly what the JSON file holds
    errors = [e.message for e in validator().iter_errors(doc)]
    assert errors == []


def test_the_schema_rejects_a_damaged_document() -> None:
    doc = results_document(assess(load_study(STUDIES[0])), version=__version__)
    doc = json.loads(json.dumps(doc))
    doc["limbs"]["left"]["segments"]["SFA-M"]["vr"] = "high"
    del doc["limbs"]["right"]["segments"]["CFA"]
    assert len(list(validator().iter_errors(doc))) == 2


def test_unidentified_results_carry_no_study_echo() -> None:
    a = assess(load_study(ROOT / "examples" / "claudicant-sfa.yaml"))
    doc = results_document(a, version=__version__, identified=False)
    assert "study" not in doc
    text = json.dumps(doc)
    for ident in ("Testcase", "DEMO-0101", "DEMO-ACC-0101", "1957", "Demo Vascular Lab"):
        assert ident not in text


def test_planning_and_comparison_are_in_the_results() -> None:
    from diagram.reading.load import load_prior

    study = load_study(ROOT / "examples" / "followup-current.yaml")
    doc = results_document(assess(study, prior=load_prior(study)), version=__version__)
    left = doc["limbs"]["left"]["planning"]
    assert set(left) >= {
        "fp_grade",
        "ip_grade",
        "stage",
        "target",
        "runoff_vessels",
        "runoff_score",
        "tasc_fp",
    }
    # GLASS 2019 limb stage table (from memory): FP4 is stage III whatever the IP grade
    assert (left["fp_grade"], left["stage"]) == (4, "III")
    comparison = doc["comparison"]
    assert comparison["interval_days"] == 203  # 2026-05-04 -> 2026-11-23, own arithmetic
    fall = next(a for a in comparison["abi"] if a["side"] == "left")
    # a fall of more than 0.15 is significant (SVS 2018 graft table; Westerband 1997)
    assert (fall["before"], fall["after"], fall["significant"]) == (0.95, 0.63, True)
