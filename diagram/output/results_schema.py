"""The JSON Schema of the results document, built from the same names the document is made of.

Every object is closed (``additionalProperties: false``), every field typed and described, with
its unit where it has one. The enumerations come from the code that produces the values
(segment ids, house looks, kinds of change, planning levels), so the two cannot drift apart.
``limbchart schema --results`` prints it; the tests validate every example's results against it
and check that it rejects a damaged copy at every position.
"""

from __future__ import annotations

from typing import Any

from diagram import anatomy
from diagram.assess.compare_results import Change
from diagram.assess.plan_results import PlanLevel
from diagram.criteria.model import LOOKS

Schema = dict[str, Any]

SIDES = ("right", "left")


def _obj(description: str, props: dict[str, Schema], optional: tuple[str, ...] = ()) -> Schema:
    """Return a closed object: every property required unless named in ``optional``."""
    return {
        "type": "object",
        "description": description,
        "additionalProperties": False,
        "required": [k for k in props if k not in optional],
        "properties": props,
    }


def _str(description: str, *, null: bool = False, **extra: Any) -> Schema:
    return {"type": ["string", "null"] if null else "string", "description": description, **extra}


def _num(description: str, unit: str = "", *, null: bool = False, **extra: Any) -> Schema:
    text = f"{description} ({unit})" if unit else description
    return {"type": ["number", "null"] if null else "number", "description": text, **extra}


def _int(description: str, *, null: bool = False, **extra: Any) -> Schema:
    return {"type": ["integer", "null"] if null else "integer", "description": description, **extra}


def _bool(description: str, *, null: bool = False) -> Schema:
    return {"type": ["boolean", "null"] if null else "boolean", "description": description}


def _enum(description: str, values: tuple[Any, ...], *, null: bool = False) -> Schema:
    return {"enum": [None, *values] if null else list(values), "description": description}


def _array(description: str, items: Schema) -> Schema:
    return {"type": "array", "description": description, "items": items}


def _ref(name: str, description: str) -> Schema:
    return {"$ref": f"#/$defs/{name}", "description": description}


def _segment_id(description: str, *, null: bool = False) -> Schema:
    return _enum(description, anatomy.SEGMENT_IDS, null=null)


def _texts(description: str) -> Schema:
    return _array(description, {"type": "string", "description": "one line of text"})


BAND = "band id of the criteria set (see bands)"
PSV = "peak systolic velocity"


def _reference() -> Schema:
    return {
        "description": "the velocity the ratio was taken against; null when there is none",
        "anyOf": [
            {"type": "null"},
            _obj(
                "the reference velocity of a velocity ratio",
                {
                    "psv": _num(f"reference {PSV}", "cm/s"),
                    "source": _enum(
                        "where the reference came from",
                        ("proximal_psv", "segment", "graft"),
                    ),
                    "segment": _str("the segment it was measured in", null=True),
                    "diseased": _bool("the reference segment is itself diseased"),
                    "basis": _str("the reference in words"),
                },
            ),
        ],
    }


def _span() -> Schema:
    return _obj(
        "the part of one segment a lesion or device covers",
        {
            "segment": _segment_id("segment id"),
            "start_cm": _num("start, from the segment's proximal end", "cm"),
            "end_cm": _num("end, from the segment's proximal end", "cm"),
        },
    )


def _segment() -> Schema:
    return _obj(
        "the grading of one segment",
        {
            "band": _str(BAND),
            "psv": _num(PSV, "cm/s", null=True),
            "edv": _num("end diastolic velocity", "cm/s", null=True),
            "vr": _num("velocity ratio, PSV over the reference PSV", "ratio", null=True),
            "reference": _ref("reference", "the reference of the velocity ratio"),
            "waveform": _str("Doppler waveform as recorded", null=True),
            "basis": _str("what set the band, in words"),
            "assessed": _bool("the segment was examined"),
            "lesions": _array(
                "indexes (from 0) of this limb's lesions that start in the segment",
                {"type": "integer", "minimum": 0, "description": "lesion index"},
            ),
        },
    )


def _lesion() -> Schema:
    return _obj(
        "one recorded lesion and its grading",
        {
            "at": _segment_id("segment the lesion starts in"),
            "band": _str(BAND),
            "psv": _num(f"{PSV} at the lesion", "cm/s", null=True),
            "edv": _num("end diastolic velocity at the lesion", "cm/s", null=True),
            "vr": _num("velocity ratio", "ratio", null=True),
            "vr_source": _enum(
                "computed from the reference, measured (given), or none",
                ("computed", "measured", "none"),
            ),
            "reference": _ref("reference", "the reference of the velocity ratio"),
            "from_cm": _num("start, from the proximal end of its segment", "cm"),
            "length_cm": _num("length", "cm", null=True),
            "occluded": _bool("the lesion is an occlusion"),
            "reconstitutes": _segment_id("segment where flow returns", null=True),
            "reconstitution": {
                "description": "where flow returns below an occlusion; null when not recorded",
                "anyOf": [{"type": "null"}, {"$ref": "#/$defs/span"}],
            },
            "extent": _array("the segments the lesion covers", {"$ref": "#/$defs/span"}),
            "basis": _str("what set the band, in words"),
        },
    )


def _devices() -> dict[str, Schema]:
    stent = _obj(
        "one stent",
        {
            "from": _segment_id("first stented segment"),
            "to": _segment_id("last stented segment"),
            "extent": _array("the segments the stent covers", {"$ref": "#/$defs/span"}),
        },
    )
    site = _obj(
        "one graded site of a bypass graft",
        {
            "site": _enum(
                "site along the graft",
                ("proximal_anastomosis", "proximal", "mid", "distal", "distal_anastomosis"),
            ),
            "band": _str(BAND),
            "psv": _num(PSV, "cm/s", null=True),
            "vr": _num("velocity ratio", "ratio", null=True),
            "reference": _ref("reference", "the reference of the velocity ratio"),
            "basis": _str("what set the band, in words"),
        },
    )
    graft = _obj(
        "one bypass graft and its surveillance grading",
        {
            "conduit": _enum("graft material", ("vein", "prosthetic")),
            "from": _segment_id("inflow segment"),
            "to": _segment_id("outflow segment"),
            "band": _str(f"worst {BAND}"),
            "flow_velocity": _num(
                "graft flow velocity (lowest PSV in the graft)", "cm/s", null=True
            ),
            "basis": _str("what set the band, in words"),
            "sites": _array("the graded sites", {"$ref": "#/$defs/graft_site"}),
        },
    )
    return {"stent": stent, "graft_site": site, "graft": graft}


def _planning_parts() -> dict[str, Schema]:
    level = _obj(
        "disease at one level",
        {
            "level": _enum("the level", tuple(v.value for v in PlanLevel)),
            "worst_band": _str(f"worst {BAND} at the level"),
            "diseased_cm": _num("length with disease of 50% or more", "cm"),
            "occluded_cm": _num("occluded length", "cm"),
            "lesion_count": _int("lesions of 50% or more touching the level", minimum=0),
            "not_assessed": _array("segments of the level not examined", _segment_id("segment")),
            "segment_count": _int("segments of the level", minimum=0),
        },
    )
    occlusion = _obj(
        "one occlusion",
        {
            "segment": _segment_id("segment it starts in"),
            "start_cm": _num("start, from the proximal end of the segment", "cm"),
            "length_cm": _num("length", "cm"),
            "reconstitutes": _segment_id("segment where flow returns", null=True),
            "source": _str("the finding it comes from, in words"),
        },
    )
    runoff = _obj(
        "runoff of one tibial artery",
        {
            "vessel": _enum("tibial artery", ("ATA", "PTA", "PER")),
            "state": _enum("state to the ankle", ("patent", "occluded", "not-assessed")),
            "scale": _num("runoff vessel score of the artery (SVS runoff scale)", null=True),
            "basis": _str("what set the score, in words"),
        },
    )
    vessel = _obj(
        "the infrapopliteal grade the artery would have as the target",
        {
            "vessel": _enum("tibial artery", ("ATA", "PTA", "PER")),
            "grade": _int("infrapopliteal grade 0-4", null=True, minimum=0, maximum=4),
            "diseased_cm": _num("length with disease of 50% or more in its path", "cm"),
            "occluded_cm": _num("occluded length in its path", "cm"),
            "drivers": _texts("what set the grade"),
        },
    )
    return {"level": level, "occlusion": occlusion, "runoff": runoff, "vessel_grade": vessel}


def _planning() -> Schema:
    return _obj(
        "the planning summary of the leg; every grade carries what set it",
        {
            "side": _enum("leg", SIDES),
            "levels": _array("disease per level", {"$ref": "#/$defs/level"}),
            "occlusions": _array("occlusions of the leg", {"$ref": "#/$defs/occlusion"}),
            "runoff": _array("runoff per tibial artery", {"$ref": "#/$defs/runoff"}),
            "runoff_vessels": _int("tibial arteries patent to the ankle", minimum=0, maximum=3),
            "runoff_unassessed": _array("tibial arteries not examined", _str("tibial artery")),
            "runoff_score": _num("runoff score, 1 to 10 (SVS)", null=True, minimum=1, maximum=10),
            "runoff_basis": _str("the sum that gives the runoff score"),
            "inflow_band": _str(f"worst inflow {BAND}"),
            "inflow_significant": _bool("inflow disease of 50% or more", null=True),
            "inflow_drivers": _texts("what set the inflow verdict"),
            "fp_grade": _int("femoropopliteal grade 0-4", null=True, minimum=0, maximum=4),
            "fp_drivers": _texts("what set the femoropopliteal grade"),
            "target": _enum("tibial artery of the planning path", ("ATA", "PTA", "PER"), null=True),
            "target_basis": _str("why that artery"),
            "ip_grade": _int(
                "infrapopliteal grade 0-4 of the target path", null=True, minimum=0, maximum=4
            ),
            "ip_drivers": _texts("what set the infrapopliteal grade"),
            "ip_by_vessel": _array(
                "the grade of each tibial artery", {"$ref": "#/$defs/vessel_grade"}
            ),
            "stage": _enum("anatomic limb stage", ("I", "II", "III"), null=True),
            "stage_basis": _str("the table lookup that gives the stage"),
            "tasc_fp": _enum("femoropopliteal lesion class", ("A", "B", "C", "D"), null=True),
            "tasc_drivers": _texts("what set the lesion class"),
            "assumptions": _texts("assumptions made"),
            "fp_provisional": _bool("unexamined segments may raise the femoropopliteal grade"),
            "ip_provisional": _bool("unexamined segments may raise the infrapopliteal grade"),
            "stage_provisional": _bool("unexamined segments may raise the stage"),
            "tasc_provisional": _bool("unexamined segments may change the lesion class"),
        },
    )


def _limb() -> Schema:
    segments = _obj(
        "the grading of every segment of the map, by segment id",
        {seg: _ref("segment", f"segment {seg}") for seg in anatomy.SEGMENT_IDS},
    )
    return _obj(
        "one leg",
        {
            "segments": segments,
            "lesions": _array("recorded lesions, in the file's order", {"$ref": "#/$defs/lesion"}),
            "stents": _array("stents", {"$ref": "#/$defs/stent"}),
            "grafts": _array("bypass grafts", {"$ref": "#/$defs/graft"}),
            "planning": _ref("planning", "the planning summary"),
            "abi": _num("ankle-brachial index", "ratio", null=True),
            "abi_category": _enum(
                "ABI category",
                ("abnormal", "borderline", "normal", "noncompressible"),
                null=True,
            ),
            "abi_severity": _enum(
                "severity within abnormal ABI", ("severe", "mild-moderate"), null=True
            ),
            "abi_basis": _str("the pressures and thresholds behind the ABI"),
            "tbi": _num("toe-brachial index", "ratio", null=True),
            "tbi_category": _enum("TBI category", ("abnormal", "normal"), null=True),
            "tbi_basis": _str("the pressures and thresholds behind the TBI"),
            "ischaemia_grade": _enum("ischaemia grade 0-3 (WIfI)", (0, 1, 2, 3), null=True),
            "ischaemia_basis": _str("what set the ischaemia grade"),
        },
    )


def _study() -> Schema:
    patient = _obj(
        "the patient as the study file names them",
        {
            "name": _str("patient name", null=True),
            "id": _str("patient id (medical record number)", null=True),
            "birth_date": _str("birth date, YYYY-MM-DD", null=True, format="date"),
            "sex": _enum("sex", ("female", "male", "other", "unknown"), null=True),
        },
    )
    exam = _obj(
        "the exam as the study file names it",
        {
            "date": _str("exam date, YYYY-MM-DD", null=True, format="date"),
            "accession": _str("accession number", null=True),
            "site": _str("the lab", null=True),
            "operator": _str("who scanned", null=True),
            "referrer": _str("who asked for the exam", null=True),
            "indication": _str("why the exam was done", null=True),
            "study_uid": _str("DICOM Study Instance UID", null=True, pattern=r"^[0-9.]+$"),
        },
    )
    return _obj(
        "the study's identifiers (present only in an identified export)",
        {"patient": patient, "exam": exam},
    )


def _criteria() -> Schema:
    used = _obj(
        "one criteria set used",
        {
            "name": _str("set name"),
            "title": _str("set title"),
            "origin": _str('"shipped" or the path of the lab\'s file'),
        },
    )
    return _obj(
        "the native-artery criteria set and every set used",
        {
            "name": _str("set name"),
            "title": _str("set title"),
            "source": _str("the published source of the thresholds"),
            "used": _array("every criteria set the grading used", used),
        },
    )


def _band() -> Schema:
    return _obj(
        "one band of the criteria sets used, as the legend names it",
        {
            "id": _str("band id"),
            "label": _str("label on the sheet"),
            "look": _enum("house look it is drawn with", LOOKS, null=True),
        },
    )


def _comparison() -> Schema:
    both = {"side": _enum("leg", SIDES)}
    segment = _obj(
        "one segment in both exams (the aorta once, under the right leg)",
        {
            **both,
            "segment": _segment_id("segment id"),
            "band_before": _str(f"{BAND} in the prior exam"),
            "band_after": _str(f"{BAND} in the current exam"),
            "change": _enum("kind of change", tuple(c.value for c in Change)),
            "psv_before": _num(f"{PSV} in the prior exam", "cm/s", null=True),
            "psv_after": _num(f"{PSV} in the current exam", "cm/s", null=True),
            "psv_change_pct": _num("(after - before) / before x 100", "%", null=True),
        },
    )
    lesion = _obj(
        "a lesion starting in the same segment in both exams",
        {
            **both,
            "segment": _segment_id("segment it starts in"),
            "from_cm_before": _num("start in the prior exam", "cm"),
            "from_cm_after": _num("start in the current exam", "cm"),
            "band_before": _str(f"{BAND} in the prior exam"),
            "band_after": _str(f"{BAND} in the current exam"),
            "psv_before": _num(f"{PSV} in the prior exam", "cm/s", null=True),
            "psv_after": _num(f"{PSV} in the current exam", "cm/s", null=True),
            "psv_change_pct": _num("(after - before) / before x 100", "%", null=True),
        },
    )
    device = _obj(
        "a stent or graft recorded in one exam only",
        {
            **both,
            "kind": _enum("device", ("stent", "graft")),
            "from": _segment_id("first segment"),
            "to": _segment_id("last segment"),
            "change": _enum("what changed", ("new", "no-longer-recorded")),
        },
    )
    abi = _obj(
        "the ABI of one leg in both exams",
        {
            **both,
            "before": _num("ABI in the prior exam", "ratio", null=True),
            "after": _num("ABI in the current exam", "ratio", null=True),
            "change": _num("after - before, two decimals", "ratio", null=True),
            "significant": _bool("a fall of more than 0.15; null when not judged", null=True),
            "basis": _str("the figures and the rule, in words"),
        },
    )
    body = _obj(
        "what changed since the prior exam",
        {
            "interval_days": _int("days between the exams", null=True, minimum=0),
            "segments": _array("segments seen in both exams", segment),
            "lesions": _array("lesions matched between the exams", lesion),
            "devices": _array("devices in one exam only", device),
            "abi": _array("ABI per leg", abi),
            "notes": _texts("what the comparison could not match"),
        },
    )
    return {
        "description": "the comparison with a prior exam; null without one",
        "anyOf": [{"type": "null"}, body],
    }


def _warning() -> Schema:
    return _obj(
        "one measurement-quality or consistency warning",
        {
            "code": _str("warning code", pattern="^[a-z0-9-]+$"),
            "side": _enum("leg", SIDES, null=True),
            "segment": _segment_id("segment", null=True),
            "message": _str("the warning in words"),
        },
    )


def build_results_schema(results_format: int) -> Schema:
    """Return the JSON Schema (draft 2020-12) of the results document."""
    top = _obj(
        "What limbchart computed from one study: bands, velocity ratios and their basis, "
        "pressure indices, planning summary, change since the prior exam, warnings. The study "
        "echo (identifiers) is present only in an identified export.",
        {
            "results_format": {"const": results_format, "description": "version of this layout"},
            "tool": _obj(
                "the program that wrote the document",
                {
                    "name": {"const": "limbchart", "description": "program"},
                    "version": _str("its version"),
                },
            ),
            "caution": _str("the caution every output carries", minLength=20),
            "study": _study(),
            "criteria": _criteria(),
            "bands": _array("the bands of the criteria sets used", _band()),
            "limbs": _obj(
                "both legs",
                {side: _ref("limb", f"the {side} leg") for side in SIDES},
            ),
            "comparison": _comparison(),
            "warnings": _array("warnings, in the order found", _warning()),
        },
        optional=("study",),
    )
    defs: dict[str, Schema] = {
        "reference": _reference(),
        "span": _span(),
        "segment": _segment(),
        "lesion": _lesion(),
        **_devices(),
        **_planning_parts(),
        "planning": _planning(),
        "limb": _limb(),
    }
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": f"urn:limbchart:results:{results_format}",
        "title": "limbchart results document",
        **top,
        "$defs": defs,
    }
