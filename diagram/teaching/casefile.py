"""The teaching study file (an allow-list of the study's keys) and the dummy identity.

The file is rebuilt from an allow-list, not cleaned by deleting known fields: a key the list does
not name (a free-text field added to the study format later, say) is left out. Free text
(``notes``, ``exam.indication``, every ``comment``) is on the list only when it is kept for
review.

The dummy identity is the scan's baseline (:mod:`diagram.teaching.scan`): the same study with a
neutral name, ids, site and staff, dates in the same years with the same age at the exam, and no
free text. Drawn like the real case, it shows what the sheet prints whoever the patient is.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import replace
from typing import Any

from diagram.reading.study import Study

Spec = dict[str, Any]  # a key ➜ True (kept whole) or the spec of its value; "*": any key

_SAMPLE: Spec = dict.fromkeys(
    (
        "psv",
        "edv",
        "vr",
        "proximal_psv",
        "angle",
        "prf_hz",
        "f0_mhz",
        "shift_hz",
        "waveform",
        "flow",
        "plaque",
        "occluded",
        "band",
        "not_assessed",
    ),
    True,
)
_LESION: Spec = {**_SAMPLE, **dict.fromkeys(("at", "from_cm", "length_cm", "reconstitutes"), True)}
_LIMB: Spec = {
    "segments": {"*": _SAMPLE},
    "lesions": [_LESION],
    "stents": [dict.fromkeys(("from", "to", "from_cm", "length_cm"), True)],
    "grafts": [{"conduit": True, "from": True, "to": True, "samples": {"*": _SAMPLE}}],
    "presentation": True,
}
_NUMBERS: Spec = dict.fromkeys(("pt", "dp", "toe", "tcpo2"), True)
ALLOWED: Spec = {
    "format": True,
    "patient": {"id": True, "sex": True},  # the id is the case id
    "exam": dict.fromkeys(("criteria", "stent_criteria", "graft_criteria"), True),
    "pressures": {"brachial": {"right": True, "left": True}, "right": _NUMBERS, "left": _NUMBERS},
    "limbs": {"right": _LIMB, "left": _LIMB},
}
FREE_TEXT_KEYS = ("comment", "notes", "indication")


def _with_text(spec: Spec) -> Spec:
    """Return ``spec`` with the free-text keys allowed wherever samples and notes are."""
    out: Spec = {}
    for key, value in spec.items():
        if isinstance(value, dict):
            out[key] = _with_text(value)
        elif isinstance(value, list):
            out[key] = [_with_text(value[0])]
        else:
            out[key] = value
    if "psv" in spec:
        out["comment"] = True
    if "criteria" in spec:
        out["indication"] = True
    if "limbs" in spec:
        out["notes"] = True
    return out


def allowed(data: object, spec: Any) -> Any:
    """Return ``data`` with only what ``spec`` allows (a key not named is left out)."""
    if spec is True:
        return data
    if isinstance(spec, list) and isinstance(data, list):
        return [allowed(item, spec[0]) for item in data]
    if isinstance(spec, dict) and isinstance(data, dict):
        out = {}
        for key, value in data.items():
            rule = spec.get(key, spec.get("*"))
            if rule is not None:
                out[key] = allowed(value, rule)
        return out
    raise ValueError(f"study data not of the allow-list's shape at {data!r:.40}")  # a bug


def teaching_data(study: Study, *, keep_text: bool) -> dict[str, Any]:
    """Return the study file's data for a teaching case, through the allow-list."""
    from diagram.reading.plain import study_data

    spec = _with_text(ALLOWED) if keep_text else ALLOWED
    data: dict[str, Any] = allowed(study_data(study), spec)
    return data


_DUMMY_NAMES = (
    ("Qvx, Zyw", "Wyq Jvx", "QVX-0", "Jyxwq"),
    ("Zkw, Xqv", "Vqz Kwx", "ZKW-0", "Xvqzk"),
)


def _same_age_dates(
    birth: dt.date | None, exam: dt.date | None
) -> tuple[dt.date | None, dt.date | None]:
    """Return other dates in the same years that give the same age at the exam."""

    def other(year: int, month: int, days: tuple[int, int], real: dt.date | None) -> dt.date:
        first = dt.date(year, month, days[0])
        return first if first != real else dt.date(year, month, days[1])

    if birth is None or exam is None:
        return (
            None if birth is None else other(birth.year, 6, (15, 16), birth),
            None if exam is None else other(exam.year, 6, (15, 16), exam),
        )
    if (exam.month, exam.day) >= (birth.month, birth.day):  # the birthday has been
        return other(birth.year, 1, (1, 2), birth), other(exam.year, 12, (31, 30), exam)
    return other(birth.year, 12, (31, 30), birth), other(exam.year, 1, (1, 2), exam)


def dummy_identity(study: Study, taken: frozenset[str]) -> Study:
    """Return the study with a neutral identity and no free text (``taken``: words to avoid)."""
    from diagram.teaching.plain import plain, words

    name, staff, code, site = next(
        (n for n in _DUMMY_NAMES if not set(words(plain(" ".join(n)))) & taken), _DUMMY_NAMES[-1]
    )
    p, e = study.patient, study.exam
    birth, exam = _same_age_dates(p.birth_date, e.date)

    def no_text(sample: Any) -> Any:
        return replace(sample, comment=None)

    limbs = {
        side: replace(
            lb,
            segments={k: no_text(v) for k, v in lb.segments.items()},
            lesions=tuple(no_text(les) for les in lb.lesions),
            grafts=tuple(
                replace(g, samples={k: no_text(v) for k, v in g.samples.items()}) for g in lb.grafts
            ),
        )
        for side, lb in study.limbs.items()
    }

    def given(value: str | None, dummy: str) -> str | None:
        return None if value is None else dummy

    return replace(
        study,
        source="dummy.yaml",
        patient=replace(p, name=given(p.name, name), id=given(p.id, code), birth_date=birth),
        exam=replace(
            e,
            date=exam,
            accession=given(e.accession, code[:-1] + "1"),
            site=given(e.site, site),
            operator=given(e.operator, staff),
            referrer=given(e.referrer, staff),
            study_uid=given(e.study_uid, "1.2.3.4" if e.study_uid != "1.2.3.4" else "1.2.3.5"),
            indication=None,
        ),
        limbs=limbs,
        prior=None if study.prior is None else "dummy-prior.yaml",
        notes=None,
    )
