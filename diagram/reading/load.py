"""Read a study file (DESIGN.md §3) into a validated :class:`Study`.

The reader is chosen by content and suffix (:mod:`diagram.reading.formats`; YAML and JSON are in
:mod:`diagram.reading.text`). Every problem found is collected with its file and place (the
checks are in :mod:`diagram.reading.checks`), then raised once as a :class:`StudyError`; nothing
is returned unless the whole file is sound. Files over a format's size limit (2 MB for text)
are refused before they are parsed. The only value changed on the way in is a segment alias,
resolved to its canonical id.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import os
from pathlib import Path
from typing import Any

from diagram import anatomy
from diagram.anatomy import Side
from diagram.errors import Problem, StudyError
from diagram.reading import sr
from diagram.reading.checks import Checker, Key, Loc, Parsed
from diagram.reading.checks import (
    study_schema as study_schema,  # the checks' schema, importable here
)
from diagram.reading.formats import Refused, read_limit, reader_for, suffix_list
from diagram.reading.study import (
    Exam,
    Flow,
    Graft,
    Lesion,
    Limb,
    LimbPressures,
    Patient,
    Plaque,
    Presentation,
    Pressures,
    Sample,
    SegmentFinding,
    Stent,
    Study,
    Waveform,
)


def load_study(path: str | Path) -> Study:
    """Read and validate one study file."""
    name = str(path)
    try:
        with open(path, "rb") as handle:
            size = os.fstat(handle.fileno()).st_size
            limit = read_limit()
            if size > limit:  # refused unread, whatever the format
                mb = f"{limit / (1024 * 1024):g} MB"
                rule = f"is over the {mb} size limit for a study file ({limit} bytes)."
                raise StudyError([Problem(name, None, "", None, rule)])
            data = handle.read(limit + 1)
    except OSError as err:
        problem = Problem(name, None, "", None, f"cannot be read: {err.strerror}.")
        raise StudyError([problem]) from None
    return _load_bytes(data, name, Path(path).suffix)


def load_report(path: str | Path) -> tuple[Study, sr.Report]:
    """Read a vascular ultrasound structured report (DICOM SR) into a Study, and its tree.

    The tree goes through the same checks as a study file; what the report holds that cannot be
    placed on the map is listed in the study's ``import_notes``.
    """
    name = str(path)
    report = sr.read_report(path)
    parsed = Parsed(kind="dicom", tree=report.tree)
    study = _checked(parsed, name, report.problems)
    return dataclasses.replace(study, import_notes=tuple(report.notes)), report


def load_prior(study: Study, override: str | Path | None = None) -> Study | None:
    """Read the earlier exam a study names (``prior:``, relative to its file) or ``override``.

    A prior file with problems is reported as the prior's own problems; a missing one as a
    problem of the study's ``prior`` field.
    """
    if override is not None:
        path = Path(override)
    elif study.prior:
        path = Path(study.prior)
        if not path.is_absolute():
            path = Path(study.source).parent / path
    else:
        return None
    shown = repr(str(override)) if override is not None else repr(study.prior)
    field = "--prior" if override is not None else "prior"
    if not path.is_file():
        raise StudyError([Problem(study.source, None, field, shown, "names no study file.")])
    if path.resolve() == Path(study.source).resolve():
        rule = "names the study's own file: a prior is an earlier exam's study file."
        hint = "give the file of the earlier exam"
        raise StudyError([Problem(study.source, None, field, shown, rule, hint)])
    return load_study(path)


def load_study_text(text: str, name: str, suffix: str) -> Study:
    """Validate a study held in memory; ``name`` stands for the file in messages."""
    return _load_bytes(text.encode("utf-8", "surrogatepass"), name, suffix)


def _load_bytes(data: bytes, name: str, suffix: str) -> Study:
    def refuse(
        rule: str, line: int | None = None, at: str | None = None, hint: str | None = None
    ) -> StudyError:
        return StudyError([Problem(name, line, "", None, rule, hint, at=at)])

    reader = reader_for(data, suffix)
    if reader is None:
        shown = f" {suffix!r}" if suffix else ""
        raise refuse(f"has an unknown suffix{shown}: a study file ends in {suffix_list()}.")
    if len(data) > reader.max_bytes:
        size = f"{reader.max_bytes / (1024 * 1024):g} MB"
        raise refuse(f"is over the {size} size limit for a study file ({reader.max_bytes} bytes).")
    if not data.strip():
        raise refuse("is empty.")
    try:
        parsed = reader.parse(data)
    except Refused as err:
        raise refuse(err.rule, err.line, err.at, err.hint) from None
    return _checked(parsed, name)


def _checked(parsed: Parsed, name: str, found: list[Problem] | None = None) -> Study:
    """Check a parsed tree and build its study; raise every problem found at once."""
    checker = Checker(name, parsed)
    checker.check()
    problems = [*(found or ()), *checker.problems]
    if problems:
        raise StudyError(sorted(problems, key=lambda p: p.line or 0))
    study = _build(parsed, name)
    if parsed.notes:
        notes = tuple(f"{name}: {note}" for note in parsed.notes)
        return dataclasses.replace(study, import_notes=notes)
    return study


# --- building the study -----------------------------------------------------------------------


_ENUMS: dict[str, type[Waveform | Flow | Plaque]] = {
    "waveform": Waveform,
    "flow": Flow,
    "plaque": Plaque,
}
_SEGMENT_REFS = ("at", "reconstitutes", "from", "to")


def _fields(cls: type, item: dict[str, Any], line: int | None = None) -> dict[str, Any]:
    """Return the keyword arguments of ``cls`` from a checked mapping.

    Numbers become floats and words enums; segment names become canonical ids, the only value
    changed on the way in. ``samples`` is left to the caller.
    """
    names = {f.name for f in dataclasses.fields(cls)}
    out: dict[str, Any] = {"line": line} if "line" in names else {}
    for key, value in item.items():
        name = "from_" if key == "from" else key
        if name not in names or key == "samples":
            continue
        if key in _ENUMS:
            out[name] = _ENUMS[key](value)
        elif key in _SEGMENT_REFS:
            out[name] = anatomy.resolve(value) or value
        elif isinstance(value, int | float) and not isinstance(value, bool):
            out[name] = float(value)
        else:
            out[name] = value
    return out


def _limb(side: str, limb: dict[str, Any], lines: dict[Loc, int]) -> Limb:
    def at(*loc: Key) -> int | None:
        return lines.get(("limbs", side, *loc))

    segments = {}
    for key, item in limb.get("segments", {}).items():
        seg = anatomy.resolve(key) or key
        repeats = tuple(Sample(**_fields(Sample, x)) for x in item.get("samples", ()))
        segments[seg] = SegmentFinding(
            **_fields(SegmentFinding, item, at("segments", key)), id=seg, samples=repeats
        )
    grafts = []
    for i, item in enumerate(limb.get("grafts", [])):
        samples = {
            site: Sample(**_fields(Sample, sample, at("grafts", i, "samples", site)))
            for site, sample in item.get("samples", {}).items()
        }
        grafts.append(Graft(**_fields(Graft, item, at("grafts", i)), samples=samples))
    return Limb(
        side=Side(side),
        segments=segments,
        lesions=tuple(
            Lesion(**_fields(Lesion, item, at("lesions", i)))
            for i, item in enumerate(limb.get("lesions", []))
        ),
        stents=tuple(
            Stent(**_fields(Stent, item, at("stents", i)))
            for i, item in enumerate(limb.get("stents", []))
        ),
        grafts=tuple(grafts),
        presentation=Presentation(limb["presentation"]) if "presentation" in limb else None,
    )


def _date(value: Any) -> dt.date | None:
    return None if value is None else dt.date.fromisoformat(value)


def _float(value: Any) -> float | None:
    return None if value is None else float(value)


def _build(parsed: Parsed, name: str) -> Study:
    """Turn a checked tree into the study's values; every check has passed."""
    tree: dict[str, Any] = parsed.tree  # type: ignore[assignment]
    patient, exam = tree.get("patient", {}), tree.get("exam", {})
    pressures = tree.get("pressures", {})
    brachial = pressures.get("brachial", {})

    def limb_pressures(side: str) -> LimbPressures:
        item = pressures.get(side, {})
        found = _fields(LimbPressures, item)
        found["noncompressible"] = tuple(item.get("noncompressible", ()))
        return LimbPressures(**found)

    return Study(
        source=name,
        # the file's keys are the field names (the schema admits no others)
        patient=Patient(**{**patient, "birth_date": _date(patient.get("birth_date"))}),
        exam=Exam(**{**exam, "date": _date(exam.get("date"))}),
        pressures=Pressures(
            brachial_right=_float(brachial.get("right")),
            brachial_left=_float(brachial.get("left")),
            right=limb_pressures("right"),
            left=limb_pressures("left"),
        ),
        limbs={
            Side(side): _limb(side, limb, parsed.lines)
            for side, limb in tree.get("limbs", {}).items()
        },
        prior=tree.get("prior"),
        notes=tree.get("notes"),
        format=int(tree["format"]),
    )
