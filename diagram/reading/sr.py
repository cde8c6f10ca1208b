"""Read a vascular ultrasound structured report (DICOM SR) into a study tree.

The scanner stores the exam's measurements as a DICOM SR made to PS3.16 TID 5100 "Vascular
Ultrasound Procedure Report" (PS3.17 Annex M explains it): sections (TID 5103, concept "Findings")
carry the side as a Laterality modifier, and hold measurement groups (TID 5104) that name a
vessel (Finding Site, CID 12109 lower extremity arteries) with a Topographical modifier (CID
12116) and hold the measurements (TID 300, CID 12119/12120/12121). :func:`read_report` turns such
a file into the plain tree a YAML study file gives (same keys, cm/s), so that the same checks and
the same builder make the Study; what it cannot place is named in :attr:`Report.notes`.

The codes and the segment each finding site maps to are in :mod:`diagram.reading.srcodes`.
Several groups for one segment are kept in order as its ``samples``; the one with the highest PSV
gives the segment's values (the highest velocity at a site grades it: common practice) and a note
says which. Editions differ, and each form is accepted: the modifier as a child of the Finding
Site item or beside it.

Header: Patient ID, Patient's Name, Birth Date, Sex, Study Date, Accession Number, Study Instance
UID (``exam.study_uid``), Referring Physician's Name and Institution Name go into the tree.

Hostile files are refused before they are parsed in full: a size limit checked on the file system,
``stop_before_pixels``, a nesting limit and a limit on content items.
"""

from __future__ import annotations

import dataclasses
import os
import warnings
from collections.abc import Callable
from dataclasses import dataclass, field
from decimal import Decimal, InvalidOperation
from io import BytesIO
from pathlib import Path
from typing import TYPE_CHECKING, Any

from diagram.errors import Problem, StudyError
from diagram.reading.formats import DICOM_MAX_BYTES
from diagram.reading.srcodes import (
    FINDING_SITE,
    FINDINGS,
    LATERALITY,
    MEASUREMENTS,
    PATIENT_SEX,
    SIDES,
    SR_CLASSES,
    SUMMARY_TEXT,
    TITLES,
    TO_CM_S,
    TOPOGRAPHICAL_MODIFIER,
    VESSELS,
    Code,
    code_of,
    concept_of,
    item_name,
    meaning_of,
    segment_of,
    value_code_of,
)

if TYPE_CHECKING:
    from pydicom.dataset import Dataset

MAX_BYTES = DICOM_MAX_BYTES  # the registry's limit for a report
MAX_DEPTH = 12  # TID 5100 nests four levels; a modifier under a finding site one more
MAX_ITEMS = 20_000


@dataclass
class Report:
    """A study tree read from an SR, with one note per item it could not place."""

    tree: dict[str, Any]
    notes: list[str] = field(default_factory=list)
    problems: list[Problem] = field(default_factory=list)


def looks_like_dicom(head: bytes) -> bool:
    """Return True when the first bytes carry the DICOM file preamble and its ``DICM`` marker."""
    return len(head) >= 132 and head[128:132] == b"DICM"


def read_report(path: str | Path) -> Report:
    """Read a vascular ultrasound SR file; refuse anything else with one problem line."""
    name = str(path)

    def refuse(rule: str) -> StudyError:
        return StudyError([Problem(name, None, "", None, rule)])

    try:
        size = os.stat(path).st_size
        if size > MAX_BYTES:
            raise refuse(f"is over the {MAX_BYTES // (1024 * 1024)} MB size limit for a report.")
        with open(path, "rb") as handle:
            data = handle.read(MAX_BYTES + 1)
    except OSError as err:
        raise refuse(f"cannot be read: {err.strerror}.") from None
    if len(data) > MAX_BYTES:  # grew while being read
        raise refuse(f"is over the {MAX_BYTES // (1024 * 1024)} MB size limit for a report.")
    report = report_from_bytes(data, refuse)
    report.notes[:] = [f"{name}: {note}" for note in report.notes]
    report.problems[:] = [dataclasses.replace(p, file=name) for p in report.problems]
    return report


def report_from_bytes(data: bytes, refuse: Callable[[str], Exception]) -> Report:
    """Read a vascular ultrasound SR held in memory; ``refuse(rule)`` makes the one-line error.

    The notes and problems name no file (the caller knows it).
    """
    if not looks_like_dicom(data[:132]):
        raise refuse("is not a DICOM file (no DICM marker after the 128-byte preamble).")
    ds = _parse(data, refuse)
    sop_class = str(ds.get("SOPClassUID", ""))
    if sop_class not in SR_CLASSES or ds.get("Modality") != "SR":
        raise refuse(
            "is a DICOM file but not a structured report (SR); give a vascular ultrasound "
            "report or a study file."
        )
    title = code_of(ds.get("ConceptNameCodeSequence"))
    if ds.get("ValueType") != "CONTAINER" or title not in TITLES:
        meaning = meaning_of(ds.get("ConceptNameCodeSequence")) or "no title"
        raise refuse(
            f"is a structured report but not a vascular ultrasound report ({meaning!r}); "
            "its title must be DCM 125100 or one of CID 12100."
        )
    try:
        return _Reader("").read(ds)
    except (ValueError, TypeError, AttributeError, RecursionError) as err:
        raise refuse(f"is a broken DICOM file ({type(err).__name__}).") from None


def _parse(data: bytes, refuse: Any) -> Dataset:
    from pydicom import dcmread
    from pydicom.errors import InvalidDicomError

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # odd values are judged below, not printed
            whole = _Whole(data)
            ds = dcmread(whole, stop_before_pixels=True)
            if whole.short:
                raise refuse("is a broken DICOM file (a value runs past the end of the file).")
            _bounded(ds, 0, [0])
    except InvalidDicomError:
        raise refuse("is not a DICOM file (no DICM marker after the preamble).") from None
    except _TooDeep as err:
        raise refuse(str(err)) from None
    except RecursionError:
        raise refuse(f"is nested deeper than {MAX_DEPTH} levels.") from None
    except (ValueError, TypeError, EOFError, KeyError, OSError, OverflowError, AttributeError):
        raise refuse("is a broken DICOM file (it cannot be parsed).") from None
    except MemoryError:
        raise refuse("is a broken DICOM file (a length larger than the file).") from None
    return ds


class _Whole(BytesIO):
    """File bytes that refuse a short read: a value longer than the file is a broken file.

    pydicom reads a declared length with ``read(n)`` and keeps whatever comes back; an empty
    read of a header-sized request is the file's normal end.
    """

    short = False

    def read(self, size: int | None = -1, /) -> bytes:
        got = super().read(size)
        if size is not None and size > 0 and len(got) < size and (got or size > 8):
            self.short = True  # pydicom turns the error into a warning: remembered here
            raise EOFError("a value runs past the end of the file")
        return got


class _TooDeep(Exception):
    """The content tree breaks a nesting or size limit."""


def _bounded(ds: Dataset, depth: int, count: list[int]) -> None:
    """Walk the content tree once, refusing deep nesting and too many items."""
    if depth > MAX_DEPTH:
        raise _TooDeep(f"is nested deeper than {MAX_DEPTH} levels.")
    for item in ds.get("ContentSequence") or ():
        count[0] += 1
        if count[0] > MAX_ITEMS:
            raise _TooDeep(f"holds more than {MAX_ITEMS} content items.")
        _bounded(item, depth + 1, count)


def _dicom_date(value: Any) -> str | None:
    text = str(value or "").strip()
    if len(text) != 8 or not text.isdigit():
        return None
    return f"{text[:4]}-{text[4:6]}-{text[6:]}"


def _person(value: Any) -> str | None:
    """Return a DICOM person name as ``Family, Given Middle`` (the study file's habit)."""
    text = str(value or "").split("=")[0]  # the alphabetic group only
    parts = [p.strip() for p in text.split("^")]
    family, given = parts[0], " ".join(p for p in parts[1:3] if p)
    if family and given:
        return f"{family}, {given}"
    return family or given or None


@dataclass
class _Group:
    """One measurement group as found: where it is and what it measured."""

    side: str
    segment: str
    values: dict[str, int | float]


class _Reader:
    """Walk the content tree of one report, collecting groups, notes and problems."""

    def __init__(self, name: str) -> None:
        self.name = name
        self.notes: list[str] = []
        self.problems: list[Problem] = []
        self.groups: list[_Group] = []
        self.summary: list[str] = []

    def note(self, where: str, what: str) -> None:
        self.notes.append(f"warning: {where}: {what}")

    def read(self, ds: Dataset) -> Report:
        for item in ds.get("ContentSequence") or ():
            relation = item.get("RelationshipType")
            if relation in ("HAS CONCEPT MOD", "HAS OBS CONTEXT"):
                continue  # language, observer and procedure context: not findings
            concept = concept_of(item)
            if item.get("ValueType") == "CONTAINER" and concept in FINDINGS:
                self.section(item)
            elif item.get("ValueType") == "CONTAINER":
                self.other_container(item)
            elif item.get("ValueType") == "TEXT" and concept in SUMMARY_TEXT:
                self.summary.append(str(item.get("TextValue", "")).strip())
            else:
                self.note(
                    "report", f"{item_name(item)} is not a finding this map draws; not imported."
                )
        tree = self.header(ds)
        limbs = self.limbs()
        if limbs:
            tree["limbs"] = limbs
        text = "\n".join(t for t in self.summary if t)
        if text:
            tree["notes"] = text
        return Report(tree=tree, notes=self.notes, problems=self.problems)

    def other_container(self, item: Dataset) -> None:
        """Keep the text of a summary or characteristics section; name everything else."""
        for child in item.get("ContentSequence") or ():
            if child.get("RelationshipType") in ("HAS CONCEPT MOD", "HAS OBS CONTEXT"):
                continue
            if child.get("ValueType") == "TEXT":
                self.summary.append(str(child.get("TextValue", "")).strip())
            else:
                where = meaning_of(item.get("ConceptNameCodeSequence")) or "a section"
                self.note(
                    where, f"{item_name(child)} is not a finding this map draws; not imported."
                )

    def section(self, item: Dataset) -> None:
        side = _side_of(item)
        for child in item.get("ContentSequence") or ():
            relation = child.get("RelationshipType")
            if relation == "HAS CONCEPT MOD" or relation == "HAS OBS CONTEXT":
                continue
            if child.get("ValueType") == "CONTAINER":
                self.group(child, side)
            else:
                self.note(
                    f"{side or 'no side'} findings",
                    f"{item_name(child)} is outside a measurement group, so it has no site; "
                    "not imported.",
                )

    def group(self, item: Dataset, section_side: str | None) -> None:
        side = _side_of(item) or section_side
        vessel, modifier = _site_of(item)
        site_name = _site_name(item, vessel)
        where = f"{side or 'no side'} {site_name}"
        segment = segment_of(vessel, modifier)
        if vessel is None or segment is None:
            why = (
                "is not a leg artery this map draws"
                if vessel not in VESSELS
                else "needs a topographical modifier this map can place (Proximal, Middle, Distal)"
            )
            self.note(where, f"{why}; its measurements are not imported.")
            return
        if side is None:
            self.note(where, "has no laterality (right or left); not imported.")
            return
        values: dict[str, int | float] = {}
        for child in item.get("ContentSequence") or ():
            if child.get("RelationshipType") in ("HAS CONCEPT MOD", "HAS OBS CONTEXT"):
                continue
            if child.get("ValueType") == "CODE" and concept_of(child) == FINDING_SITE:
                continue  # the site itself (already read)
            key = MEASUREMENTS.get(concept_of(child) or ("", ""))
            if child.get("ValueType") != "NUM" or key is None:
                self.note(
                    where, f"{item_name(child)} is not a measurement this map draws; not imported."
                )
                continue
            field_path = f"limbs.{side}.segments.{segment}.{key}"
            value = self.velocity(child, field_path, where)
            if value is not None:
                values[key] = value
        self.groups.append(_Group(side, segment, values))

    def velocity(self, item: Dataset, field_path: str, where: str) -> int | float | None:
        measured = item.get("MeasuredValueSequence")
        if not measured:
            self.note(where, f"{item_name(item)} has no value; not imported.")
            return None
        number = str(measured[0].get("NumericValue", "")).strip()
        units = measured[0].get("MeasurementUnitsCodeSequence")
        unit = code_of(units)
        factor = TO_CM_S.get(unit[1]) if unit and unit[0] == "UCUM" else None
        if factor is None:
            shown = f"{unit[0]} {unit[1]!r}" if unit else "no unit"
            self.problems.append(
                Problem(
                    self.name,
                    None,
                    field_path,
                    repr(number),
                    f"is given in {shown}: a velocity must come in UCUM cm/s, m/s or mm/s.",
                )
            )
            return None
        try:
            cm_s = Decimal(number) * factor
        except InvalidOperation:
            self.problems.append(
                Problem(self.name, None, field_path, repr(number[:40]), "is not a number.")
            )
            return None
        if not cm_s.is_finite():
            self.problems.append(
                Problem(self.name, None, field_path, repr(number[:40]), "is not a finite number.")
            )
            return None
        cm_s = cm_s.quantize(Decimal("0.01"))  # a hundredth of a cm/s: finer than any scanner
        return int(cm_s) if cm_s == cm_s.to_integral_value() else float(cm_s)

    def limbs(self) -> dict[str, Any]:
        """Return the limbs of the tree: one sample per segment, the others kept in order."""
        by_site: dict[tuple[str, str], list[dict[str, int | float]]] = {}
        for group in self.groups:
            by_site.setdefault((group.side, group.segment), []).append(group.values)
        limbs: dict[str, Any] = {}
        for side in ("right", "left"):
            segments: dict[str, Any] = {}
            for (group_side, segment), samples in by_site.items():
                if group_side != side:
                    continue
                chosen = _chosen(samples)
                entry: dict[str, Any] = dict(samples[chosen])
                if len(samples) > 1:
                    entry["samples"] = samples
                    self.note(
                        f"{side} {segment}",
                        f"{len(samples)} measurement groups, kept in order as samples; group "
                        f"{chosen + 1} (the highest PSV) gives the segment's values.",
                    )
                segments[segment] = entry
            if segments:
                limbs[side] = {"segments": segments}
        return limbs

    def header(self, ds: Dataset) -> dict[str, Any]:
        patient: dict[str, Any] = {}
        exam: dict[str, Any] = {}
        _put(patient, "name", _person(ds.get("PatientName")))
        _put(patient, "id", str(ds.get("PatientID", "") or "").strip() or None)
        _put(patient, "birth_date", self.date(ds, "PatientBirthDate", "patient.birth_date"))
        _put(patient, "sex", PATIENT_SEX.get(str(ds.get("PatientSex", "") or "").strip()))
        _put(exam, "date", self.date(ds, "StudyDate", "exam.date"))
        _put(exam, "accession", str(ds.get("AccessionNumber", "") or "").strip() or None)
        _put(exam, "site", str(ds.get("InstitutionName", "") or "").strip() or None)
        _put(exam, "referrer", _person(ds.get("ReferringPhysicianName")))
        _put(exam, "study_uid", str(ds.get("StudyInstanceUID", "") or "").strip() or None)
        tree: dict[str, Any] = {"format": 1}
        if patient:
            tree["patient"] = patient
        if exam:
            tree["exam"] = exam
        return tree

    def date(self, ds: Dataset, keyword: str, field_path: str) -> str | None:
        raw = str(ds.get(keyword, "") or "").strip()
        if not raw:
            return None
        value = _dicom_date(raw)
        if value is None:
            # the value may identify the patient: never echoed
            self.problems.append(
                Problem(self.name, None, field_path, None, "is not a DICOM date (YYYYMMDD).")
            )
        return value


def _put(out: dict[str, Any], key: str, value: Any) -> None:
    if value is not None:
        out[key] = value


def _chosen(samples: list[dict[str, int | float]]) -> int:
    """Return the index of the sample with the highest PSV (the first on a tie or none)."""
    best = 0
    for i, sample in enumerate(samples):
        if sample.get("psv", -1) > samples[best].get("psv", -1):
            best = i
    return best


def _modifiers(item: Dataset) -> list[Dataset]:
    return [
        child
        for child in item.get("ContentSequence") or ()
        if child.get("RelationshipType") == "HAS CONCEPT MOD"
    ]


def _side_of(item: Dataset) -> str | None:
    for child in _modifiers(item):
        if concept_of(child) == LATERALITY:
            return SIDES.get(value_code_of(child) or ("", ""))
    return None


def _site_of(item: Dataset) -> tuple[Code | None, Code | None]:
    """Return the group's vessel and topographical modifier, wherever this edition puts them."""
    vessel = modifier = None
    for child in item.get("ContentSequence") or ():
        concept = concept_of(child)
        if concept == FINDING_SITE and child.get("ValueType") == "CODE":
            vessel = value_code_of(child)
            for grandchild in _modifiers(child):  # the modifier as a child of the site
                if concept_of(grandchild) == TOPOGRAPHICAL_MODIFIER:
                    modifier = value_code_of(grandchild)
        elif concept == TOPOGRAPHICAL_MODIFIER and child.get("ValueType") == "CODE":
            modifier = value_code_of(child)  # the modifier beside the site
    if vessel is None and concept_of(item) in VESSELS:  # the group named after its vessel
        vessel = concept_of(item)
    return vessel, modifier


def _site_name(item: Dataset, vessel: Code | None) -> str:
    for child in item.get("ContentSequence") or ():
        if concept_of(child) == FINDING_SITE:
            meaning = meaning_of(child.get("ConceptCodeSequence"))
            if meaning:
                return repr(meaning)
    meaning = meaning_of(item.get("ConceptNameCodeSequence"))
    if vessel is not None and meaning:
        return repr(meaning)
    return "site not given"


_FILE_HEAD = """\
# A study file imported from a vascular ultrasound structured report (DICOM SR, PS3.16 TID 5100).
# The velocities are the scanner's, in cm/s. Add what the report does not hold (lesions and their
# lengths, occlusions, waveforms, pressures, comments), then check and draw it.
"""


def study_file_text(tree: dict[str, Any]) -> str:
    """Return a study tree as the text of a YAML study file that reads back to the same tree."""
    import yaml

    parts = [_FILE_HEAD]
    for key, value in tree.items():  # sections in block style, each segment on one line
        flow = None if key == "limbs" else False
        parts.append(
            yaml.safe_dump(
                {key: value},
                sort_keys=False,
                allow_unicode=True,
                default_flow_style=flow,
                width=100,
            )
        )
    return "".join(parts)
