"""Teaching cases: a study with every identifier removed, drawn, cleaned and checked.

::

    study ─deidentify─▶ TeachCase ─render_case─▶ CaseOutputs ─write_case─▶ files (all or none)
                        (random case id,          (SVG from an allow-list,   (only when the scan
                         year and age at most,      PDF/PNG/DICOM/YAML,       found nothing)
                         free text scrubbed)        every output scanned)

What is removed follows HIPAA Safe Harbor (45 CFR 164.514(b)(2)): names, ids, dates but the
year, ages over 89, site and staff, and free-text mentions of them or of dates, phone numbers,
e-mail, URLs, IP addresses and long numbers. The case id is random (:mod:`secrets`): a code
derived from an identifier, even a keyed hash, is not allowed (164.514(c)). The de-identified
study is built with :func:`dataclasses.replace`, so every finding, pressure and length is the
same object as in the source: the grading cannot change.
"""

from __future__ import annotations

import secrets
from collections import Counter
from collections.abc import Mapping
from dataclasses import dataclass, replace
from pathlib import Path
from typing import TYPE_CHECKING

from diagram._version import __version__
from diagram.drawing.scene import CaseHeader
from diagram.errors import DiagramError, ExportError
from diagram.reading.study import Graft, Lesion, Limb, Patient, Sample, SegmentFinding, Study
from diagram.teaching.patterns import Category
from diagram.teaching.scan import Hit, scan_outputs
from diagram.teaching.scrub import Identifiers, age_at_exam, identifiers_of, scrub

if TYPE_CHECKING:
    from diagram.output.export import Drawing

TEACH_FORMATS: tuple[str, ...] = ("pdf", "svg", "png", "dcm", "yaml")
DEFAULT_FORMATS: tuple[str, ...] = ("pdf", "yaml")
# consonants only: a case id spells no word and no name, and reads unambiguously (no l, no o)
_CASE_ALPHABET = "bcdfghjkmnpqrstvwxz"
_CASE_GROUPS = (5, 5)  # 19**10 ≈ 6e12 ids, about 42 bits of randomness


class TeachError(DiagramError):
    """A study that cannot become a teaching case (the message names no identifier)."""


def new_case_id() -> str:
    """Return a fresh random case id such as ``tc-kqzbm-rwhxd`` (never derived from data)."""
    groups = ("".join(secrets.choice(_CASE_ALPHABET) for _ in range(n)) for n in _CASE_GROUPS)
    return "tc-" + "-".join(groups)


def age_text(age: int | None) -> str | None:
    """Return the age for a teaching sheet: whole years, or "90+" from 90 on.

    45 CFR 164.514(b)(2)(i)(C): ages over 89 are aggregated into one category.
    """
    if age is None:
        return None
    return "90+" if age >= 90 else str(age)


@dataclass(frozen=True)
class TeachCase:
    """A de-identified study and what was taken out of it (categories and counts, no values)."""

    case_id: str
    study: Study
    header: CaseHeader
    removed: tuple[Category, ...]  # fields emptied or replaced
    scrubs: Mapping[Category, int]  # free-text replacements by category

    @property
    def scrub_count(self) -> int:
        """Return the number of free-text replacements made."""
        return sum(self.scrubs.values())


def _check_criteria(study: Study) -> None:
    from diagram.criteria import shipped_names

    shipped = shipped_names()
    for field in ("criteria", "stent_criteria", "graft_criteria"):
        if getattr(study.exam, field) not in shipped:
            raise TeachError(
                f"{field.replace('_', ' ')}: a lab's own criteria file cannot travel with a "
                f"teaching case (its path and title may name the lab); grade with a shipped "
                f"set ({', '.join(shipped)})."
            )


def deidentify(
    study: Study, case_id: str, *, keep_year: bool = True, ids: Identifiers | None = None
) -> TeachCase:
    """Return the study with identifiers removed and free text scrubbed, as a teaching case."""
    _check_criteria(study)
    ids = ids or identifiers_of(study)
    counts: Counter[Category] = Counter()

    def clean(text: str | None) -> str | None:
        if text is None:
            return None
        out, found = scrub(text, ids)
        counts.update(found)
        return out

    def sample(s: Sample) -> Sample:
        return s if s.comment is None else replace(s, comment=clean(s.comment))

    def segment(s: SegmentFinding) -> SegmentFinding:
        return s if s.comment is None else replace(s, comment=clean(s.comment))

    def lesion(s: Lesion) -> Lesion:
        return s if s.comment is None else replace(s, comment=clean(s.comment))

    def graft(g: Graft) -> Graft:
        return replace(g, samples={site: sample(s) for site, s in g.samples.items()})

    def limb(lb: Limb) -> Limb:
        return replace(
            lb,
            segments={seg: segment(f) for seg, f in lb.segments.items()},
            lesions=tuple(lesion(les) for les in lb.lesions),
            grafts=tuple(graft(g) for g in lb.grafts),
        )

    p, e = study.patient, study.exam
    removed = [
        cat
        for cat, value in (
            (Category.NAME, p.name),
            (Category.PATIENT_ID, p.id),
            (Category.BIRTH_DATE, p.birth_date),
            (Category.EXAM_DATE, e.date),
            (Category.ACCESSION, e.accession),
            (Category.SITE, e.site),
            (Category.OPERATOR, e.operator),
            (Category.REFERRER, e.referrer),
            (Category.STUDY_UID, e.study_uid),
            (Category.PRIOR, study.prior),
        )
        if value
    ]
    clean_study = replace(
        study,
        source=f"{case_id}.yaml",
        patient=Patient(id=case_id, sex=p.sex),
        exam=replace(
            e,
            date=None,
            accession=None,
            site=None,
            operator=None,
            referrer=None,
            study_uid=None,
            indication=clean(e.indication),
        ),
        limbs={side: limb(lb) for side, lb in study.limbs.items()},
        prior=None,
        notes=clean(study.notes),
    )
    header = CaseHeader(
        case_id=case_id,
        year=e.date.year if keep_year and e.date else None,
        age=age_text(age_at_exam(p.birth_date, e.date)),
        sex=p.sex,
    )
    return TeachCase(case_id, clean_study, header, tuple(removed), dict(sorted(counts.items())))


def case_pages(
    case: TeachCase, *, page: str = "a4", template: str | Path | None = None
) -> tuple[str, ...]:
    """Draw the teaching case (header: the case only); return each page's SVG, allow-listed."""
    from diagram.assess import assess
    from diagram.drawing.layout import layout
    from diagram.drawing.template.mapfile import load_template
    from diagram.output.svg import render_pages
    from diagram.teaching.clean import clean_svg

    assessment = assess(case.study)  # a teaching case names shipped criteria sets only
    tpl = load_template(template)
    scene = layout(assessment, tpl, page=page, version=__version__, case=case.header)
    svgs = render_pages(scene)
    return tuple(clean_svg(svg) for svg in svgs)


def _drawing(pages: tuple[str, ...]) -> Drawing:
    """Return the pages as a Drawing for the export writers (no study: nothing to identify)."""
    from diagram.output.export import Drawing

    return Drawing(results={}, svg_pages=pages)


def _yaml_text(case: TeachCase) -> str:
    from diagram.teaching.study_yaml import study_yaml

    h = case.header
    facts = [f"teaching case {case.case_id}"]
    if h.year is not None:
        facts.append(f"exam year {h.year}")
    if h.age is not None:
        facts.append(f"age at exam {h.age}")
    lines = (
        "; ".join(facts),
        "identifiers removed by limbchart teach",
    )
    return study_yaml(case.study, comments=lines)


def _check_reload(case: TeachCase, text: str) -> None:
    """Refuse a study file that does not read back to the same results (a bug, stated plainly)."""
    from diagram.assess import assess
    from diagram.output.results import results_document
    from diagram.reading.load import load_study_text

    again = load_study_text(text, f"{case.case_id}.yaml", ".yaml")
    before = results_document(assess(case.study), version=__version__, identified=False)
    after = results_document(assess(again), version=__version__, identified=False)
    if before != after:
        raise ExportError(
            f"{case.case_id}.yaml: the study file does not read back to the same grading."
        )


@dataclass(frozen=True)
class CaseOutputs:
    """Every output of one case, in memory, with what the scan found in them."""

    case: TeachCase
    files: Mapping[str, bytes]  # file name ➜ content
    hits: tuple[Hit, ...]

    @property
    def clean(self) -> bool:
        """Return True when the scan found nothing: the case may be written."""
        return not self.hits


def render_case(
    study: Study,
    case_id: str,
    formats: tuple[str, ...] = DEFAULT_FORMATS,
    *,
    keep_year: bool = True,
    page: str = "a4",
    template: str | Path | None = None,
    png_dpi: float = 150.0,
) -> CaseOutputs:
    """De-identify, draw and encode one study in every format asked for, then scan it all."""
    from diagram.output.export import ExportOptions, render_bytes
    from diagram.teaching.clean import clean_png, clean_svg, strip_pdf_info, teaching_dicom

    unknown = [f for f in formats if f not in TEACH_FORMATS]
    if unknown:
        raise ValueError(f"not a teaching format: {', '.join(unknown)}")  # the CLI checks first
    ids = identifiers_of(study)
    case = deidentify(study, case_id, keep_year=keep_year, ids=ids)
    data: dict[str, bytes] = {}
    if set(formats) - {"yaml"}:
        drawing = _drawing(case_pages(case, page=page, template=template))
        pdf = b""
        if {"pdf", "dcm"} & set(formats):
            pdf = strip_pdf_info(render_bytes(drawing, "pdf"))
        for fmt in formats:
            if fmt == "svg":  # several pages are stacked into one picture: allow-listed again
                data[fmt] = clean_svg(render_bytes(drawing, "svg").decode("utf-8")).encode("utf-8")
            elif fmt == "pdf":
                data[fmt] = pdf
            elif fmt == "png":
                data[fmt] = clean_png(render_bytes(drawing, "png", ExportOptions(png_dpi=png_dpi)))
            elif fmt == "dcm":
                data[fmt] = teaching_dicom(pdf, case_id, case.header.sex, version=__version__)
    if "yaml" in formats:
        text = _yaml_text(case)
        _check_reload(case, text)
        data["yaml"] = text.encode("utf-8")
    names = {fmt: f"{case_id}.{fmt}" for fmt in data}
    hits = scan_outputs(data, names.values(), ids, source_uid=study.exam.study_uid)
    return CaseOutputs(case, {names[f]: data[f] for f in formats}, hits)


def write_case(outputs: CaseOutputs, out_dir: Path) -> tuple[Path, ...]:
    """Write a clean case's files atomically; all of them or, on any failure, none."""
    from diagram.output.export import write_all

    if not outputs.clean:
        raise TeachError(f"{outputs.case.case_id}: the scan found identifiers; nothing written.")
    targets = [out_dir / name for name in outputs.files]
    taken = [t.name for t in targets if t.exists()]
    if taken:
        raise ExportError(f"{out_dir}: {', '.join(taken)} exist already; nothing written.")
    return write_all([(t, outputs.files[t.name]) for t in targets], overwrite=False)
