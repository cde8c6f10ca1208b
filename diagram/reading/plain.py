"""A Study back as a study file (DESIGN.md §3): its plain data, and that data as YAML text.

Only the file's own keys, in the file's order, each only when it has a value; numbers as whole
numbers where they are whole, written as plain decimals (the loader refuses YAML 1.1 exponent
forms). ``load_study`` reads the text back to an equal study, apart from the line numbers and the
source name. The teaching export and the editor write it; the results document echoes the
patient and exam fields from the same functions, so all say the same thing the same way.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from typing import Any

from diagram import anatomy
from diagram.anatomy import Side
from diagram.reading.study import (
    GRAFT_SITES,
    Exam,
    Graft,
    Lesion,
    Limb,
    Patient,
    Pressures,
    Sample,
    Stent,
    Study,
)

_SAMPLE_KEYS = tuple(
    f.name for f in dataclasses.fields(Sample) if f.name not in ("line",)
)  # psv, edv, ... comment, in the dataclass's order (the schema's order)
_LESION_KEYS = ("at", "from_cm", "length_cm", "reconstitutes", *_SAMPLE_KEYS)


def _number(value: float) -> int | float:
    if not math.isfinite(value):
        raise ValueError(f"not a finite number: {value!r}")  # the loader admits none
    return int(value) if float(value).is_integer() else float(value)


def _sample(sample: Sample, keys: tuple[str, ...]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key in keys:
        value = getattr(sample, key)
        if value is None or value is False:
            continue  # absent, or a flag left at its default
        if isinstance(value, bool):
            out[key] = value
        elif isinstance(value, int | float):
            out[key] = _number(value)
        else:
            out[key] = str(value)  # text, enums by their value
    return out


def _stent(stent: Stent) -> dict[str, Any]:
    out: dict[str, Any] = {"from": stent.from_, "to": stent.to}
    for key in ("from_cm", "length_cm"):
        value = getattr(stent, key)
        if value is not None:
            out[key] = _number(value)
    return out


def _graft(graft: Graft) -> dict[str, Any]:
    out: dict[str, Any] = {"conduit": graft.conduit, "from": graft.from_, "to": graft.to}
    samples = {
        site: _sample(graft.samples[site], _SAMPLE_KEYS)
        for site in GRAFT_SITES
        if site in graft.samples
    }
    if samples:
        out["samples"] = samples
    return out


def _limb(limb: Limb) -> dict[str, Any]:
    out: dict[str, Any] = {}
    if limb.segments:
        order = {seg: i for i, seg in enumerate(anatomy.SEGMENT_IDS)}
        out["segments"] = {
            seg: _sample(limb.segments[seg], _SAMPLE_KEYS)
            for seg in sorted(limb.segments, key=lambda s: order.get(s, len(order)))
        }
    if limb.lesions:
        out["lesions"] = [_sample_lesion(les) for les in limb.lesions]
    if limb.stents:
        out["stents"] = [_stent(s) for s in limb.stents]
    if limb.grafts:
        out["grafts"] = [_graft(g) for g in limb.grafts]
    if limb.presentation is not None:
        out["presentation"] = limb.presentation.value
    return out


def _sample_lesion(lesion: Lesion) -> dict[str, Any]:
    return _sample(lesion, _LESION_KEYS)


def _pressures(p: Pressures) -> dict[str, Any]:
    out: dict[str, Any] = {}
    brachial = {
        side: _number(v)
        for side, v in (("right", p.brachial_right), ("left", p.brachial_left))
        if v is not None
    }
    if brachial:
        out["brachial"] = brachial
    for side in ("right", "left"):
        limb = getattr(p, side)
        kept: dict[str, Any] = {
            k: _number(getattr(limb, k))
            for k in ("pt", "dp", "toe", "tcpo2")
            if getattr(limb, k) is not None
        }
        if limb.noncompressible:
            kept["noncompressible"] = list(limb.noncompressible)
        if kept:
            out[side] = kept
    return out


def _optional(pairs: Mapping[str, object]) -> dict[str, Any]:
    return {k: v for k, v in pairs.items() if v is not None}


CRITERIA_KEYS = ("criteria", "stent_criteria", "graft_criteria")


def patient_data(p: Patient) -> dict[str, Any]:
    """Return the patient's fields in the file's order, None for those not given."""
    return {
        "name": p.name,
        "id": p.id,
        "birth_date": p.birth_date.isoformat() if p.birth_date else None,
        "sex": p.sex,
    }


def exam_data(e: Exam) -> dict[str, Any]:
    """Return the exam's fields in the file's order, None for those not given."""
    return {
        "date": e.date.isoformat() if e.date else None,
        "accession": e.accession,
        "site": e.site,
        "operator": e.operator,
        "referrer": e.referrer,
        "indication": e.indication,
        "criteria": e.criteria,
        "stent_criteria": e.stent_criteria,
        "graft_criteria": e.graft_criteria,
        "study_uid": e.study_uid,
    }


def study_data(study: Study) -> dict[str, Any]:
    """Return the study as the plain data of a study file (only the values it has)."""
    data: dict[str, Any] = {"format": study.format}
    patient = _optional(patient_data(study.patient))
    if patient:
        data["patient"] = patient
    data["exam"] = _optional(exam_data(study.exam))
    pressures = _pressures(study.pressures)
    if pressures:
        data["pressures"] = pressures
    limbs = {
        side.value: _limb(study.limbs[side])
        for side in (Side.RIGHT, Side.LEFT)
        if side in study.limbs
    }
    if limbs:
        data["limbs"] = limbs
    if study.prior is not None:
        data["prior"] = study.prior
    if study.notes is not None:
        data["notes"] = study.notes
    return data


def study_yaml(study: Study, *, comments: tuple[str, ...] = ()) -> str:
    """Return the study file text; ``comments`` open it as ``#`` lines."""
    return dump_study(study_data(study), comments=comments)


def dump_study(data: Mapping[str, Any], *, comments: tuple[str, ...] = ()) -> str:
    """Return study file data (:func:`study_data`) as YAML text; ``comments`` open it."""
    import yaml

    def represent_float(dumper: yaml.SafeDumper, value: float) -> yaml.Node:
        text = repr(value)
        if "e" in text or "n" in text:  # exponent, inf, nan: the loader reads none of them
            text = f"{value:.10f}".rstrip("0").rstrip(".")
        return dumper.represent_scalar("tag:yaml.org,2002:float", text)

    class _Dumper(yaml.SafeDumper):
        """A safe dumper writing floats as plain decimals (a subclass: no global change)."""

    _Dumper.add_representer(float, represent_float)
    body = yaml.dump(
        dict(data),
        Dumper=_Dumper,
        sort_keys=False,
        allow_unicode=True,
        default_flow_style=False,
        width=100,
    )
    head = "".join(f"# {line}\n" for line in comments)
    return head + body
