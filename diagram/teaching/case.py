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
from typing import TYPE_CHECKING, TypeVar

from diagram._version import __version__
from diagram.drawing.scene import CaseHeader
from diagram.errors import DiagramError, ExportError
from diagram.reading.study import Limb, Patient, Sample, Study
from diagram.teaching.categories import Category
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


FREE_TEXT_WITHHELD = "withheld"
FREE_TEXT_KEPT = "kept, to be reviewed"


@dataclass(frozen=True)
class TeachCase:
    """A de-identified study and what was taken out of it (categories and counts, no values)."""

    case_id: str
    study: Study
    header: CaseHeader
    removed: tuple[Category, ...]  # fields emptied or replaced
    scrubs: Mapping[Category, int]  # free-text replacements by category
    texts: tuple[tuple[str, str], ...] = ()  # (field, scrubbed text) kept for the review list
    withheld: int = 0  # free texts left out (the default)

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


_S = TypeVar("_S", bound=Sample)


class _FreeText:
    """What becomes of each free text: withheld, or scrubbed and listed for review."""

    def __init__(self, ids: Identifiers, keep: bool) -> None:
        self.ids, self.keep = ids, keep
        self.counts: Counter[Category] = Counter()
        self.texts: list[tuple[str, str]] = []
        self.withheld = 0

    def __call__(self, text: str | None, where: str) -> str | None:
        if text is None:
            return None
        if not self.keep:
            self.withheld += 1
            return None
        out, found = scrub(text, self.ids)
        self.counts.update(found)
        self.texts.append((where, out))
        return out

    def sample(self, s: _S, where: str) -> _S:
        return s if s.comment is None else replace(s, comment=self(s.comment, f"{where}.comment"))

    def limb(self, lb: Limb) -> Limb:
        base = f"limbs.{lb.side.value}"
        grafts = tuple(
            replace(
                g,
                samples={
                    site: self.sample(s, f"{base}.grafts[{i}].samples.{site}")
                    for site, s in g.samples.items()
                },
            )
            for i, g in enumerate(lb.grafts)
        )
        return replace(
            lb,
            segments={
                seg: self.sample(f, f"{base}.segments.{seg}") for seg, f in lb.segments.items()
            },
            lesions=tuple(
                self.sample(les, f"{base}.lesions[{i}]") for i, les in enumerate(lb.lesions)
            ),
            grafts=grafts,
        )


def _removed(study: Study) -> list[Category]:
    """Return the kinds of identifier the study holds (each is removed from the case)."""
    p, e = study.patient, study.exam
    return [
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


def deidentify(
    study: Study,
    case_id: str,
    *,
    keep_year: bool = True,
    keep_text: bool = False,
    ids: Identifiers | None = None,
) -> TeachCase:
    """Return the study with identifiers removed, as a teaching case.

    Free text (indication, notes, comments) is withheld; with ``keep_text`` it is scrubbed and
    kept, and every kept text is listed (``TeachCase.texts``) for a person to review.
    """
    _check_criteria(study)
    text = _FreeText(ids or identifiers_of(study), keep_text)
    p, e = study.patient, study.exam
    removed = _removed(study)
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
            indication=text(e.indication, "exam.indication"),
        ),
        limbs={side: text.limb(lb) for side, lb in study.limbs.items()},
        prior=None,
        notes=text(study.notes, "notes"),
    )
    if text.withheld:
        removed.append(Category.FREE_TEXT)
    header = CaseHeader(
        case_id=case_id,
        year=e.date.year if keep_year and e.date else None,
        age=age_text(age_at_exam(p.birth_date, e.date)),
        sex=p.sex,
        free_text=FREE_TEXT_KEPT if keep_text else FREE_TEXT_WITHHELD,
    )
    scrubs = dict(sorted(text.counts.items()))
    return TeachCase(
        case_id, clean_study, header, tuple(removed), scrubs, tuple(text.texts), text.withheld
    )


def case_pages(
    case: TeachCase, *, page: str = "a4", template: str | Path | None = None
) -> tuple[str, ...]:
    """Draw the teaching case (header: the case only); return each page's SVG, allow-listed."""
    return _case_drawing(case, page=page, template=template).pages


def _case_drawing(
    case: TeachCase, *, page: str = "a4", template: str | Path | None = None
) -> Drawing:
    """Return the case's sheet for the export writers: its Scene (laid out from the cleaned
    study with the case header, so nothing identifying is in it) and its allow-listed SVG pages.
    No study is attached: the DICOM identity comes from the case."""
    from diagram.assess import assess
    from diagram.drawing.layout import layout
    from diagram.drawing.template.mapfile import load_template
    from diagram.output.export import Drawing
    from diagram.output.svg import render_pages
    from diagram.teaching.clean import clean_svg

    assessment = assess(case.study)  # a teaching case names shipped criteria sets only
    tpl = load_template(template)
    scene = layout(assessment, tpl, page=page, version=__version__, case=case.header)
    pages = tuple(clean_svg(svg) for svg in render_pages(scene))
    return Drawing(results={}, scene=scene, svg_pages=pages)


def _yaml_text(case: TeachCase) -> str:
    from diagram.reading.plain import dump_study
    from diagram.teaching.casefile import teaching_data

    h = case.header
    facts = [f"teaching case {case.case_id}"]
    if h.year is not None:
        facts.append(f"exam year {h.year}")
    if h.age is not None:
        facts.append(f"age at exam {h.age}")
    kept = h.free_text == FREE_TEXT_KEPT
    lines = (
        "; ".join(facts),
        "identifiers removed by limbchart teach",
        "free text (notes, indication, comments) scrubbed and kept: to be reviewed before release"
        if kept
        else "free text (notes, indication, comments) withheld",
    )
    return dump_study(teaching_data(case.study, keep_text=kept), comments=lines)


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


@dataclass(frozen=True)
class CaseSettings:
    """How every case of an export is made."""

    formats: tuple[str, ...] = DEFAULT_FORMATS
    keep_year: bool = True
    keep_text: bool = False
    page: str = "a4"
    template: str | Path | None = None
    png_dpi: float = 150.0


def _encode(
    case: TeachCase,
    cfg: CaseSettings,
    same_as: tuple[tuple[str, ...], dict[str, bytes]] | None = None,
) -> tuple[tuple[str, ...], dict[str, bytes]]:
    """Return the case's pages and its outputs by format.

    ``same_as`` (pages, outputs) of another case: where this case's pages are the same SVG
    text, its PDF, PNG and DICOM are the same bytes (each is made from the pages alone), so
    they are taken from there instead of being rendered again.
    """
    from diagram.drawing.sheet.header import TEACHING_TITLE
    from diagram.output.export import ExportOptions, render_bytes
    from diagram.teaching.clean import clean_png, clean_svg, strip_pdf_info, teaching_dicom

    data: dict[str, bytes] = {}
    pages: tuple[str, ...] = ()
    drawn = [f for f in cfg.formats if f != "yaml"]
    drawing = None
    if drawn:
        drawing = _case_drawing(case, page=cfg.page, template=cfg.template)
        pages = drawing.pages
    if same_as is not None and same_as[0] == pages:
        data.update((f, same_as[1][f]) for f in drawn if f != "svg")
    todo = [f for f in drawn if f not in data]
    if todo:
        assert drawing is not None  # todo lists drawn formats only
        pdf = b""
        if {"pdf", "dcm"} & set(todo):
            pdf = strip_pdf_info(render_bytes(drawing, "pdf"), title=TEACHING_TITLE)
        for fmt in todo:
            if fmt == "svg":  # several pages are stacked into one picture: allow-listed again
                data[fmt] = clean_svg(render_bytes(drawing, "svg").decode("utf-8")).encode("utf-8")
            elif fmt == "pdf":
                data[fmt] = pdf
            elif fmt == "png":
                options = ExportOptions(png_dpi=cfg.png_dpi)
                data[fmt] = clean_png(render_bytes(drawing, "png", options))
            elif fmt == "dcm":
                data[fmt] = teaching_dicom(pdf, case.case_id, case.header.sex, version=__version__)
    if "yaml" in cfg.formats:
        text = _yaml_text(case)
        _check_reload(case, text)
        data["yaml"] = text.encode("utf-8")
    return pages, {f: data[f] for f in cfg.formats}


def render_case(study: Study, case_id: str, cfg: CaseSettings | None = None) -> CaseOutputs:
    """De-identify, draw and encode one study in every format asked for, then scan it all.

    The same study with a dummy identity is drawn too, as the scan's baseline.
    """
    from diagram.teaching.casefile import dummy_identity
    from diagram.teaching.evidence import needles_of

    cfg = cfg or CaseSettings()
    unknown = [f for f in cfg.formats if f not in TEACH_FORMATS]
    if unknown:
        raise ValueError(f"not a teaching format: {', '.join(unknown)}")  # the CLI checks first
    case = deidentify(study, case_id, keep_year=cfg.keep_year, keep_text=cfg.keep_text)
    pages, data = _encode(case, cfg)
    needles = needles_of(study)
    dummy_study = dummy_identity(study, frozenset(w for _, w in needles.words))
    dummy = deidentify(dummy_study, case_id, keep_year=cfg.keep_year, keep_text=cfg.keep_text)
    _, baseline = _encode(dummy, cfg, same_as=(pages, data))
    names = {fmt: f"{case_id}.{fmt}" for fmt in data}
    hits = scan_outputs(data, baseline, names.values(), needles, source_uid=study.exam.study_uid)
    return CaseOutputs(case, {names[f]: data[f] for f in cfg.formats}, hits)


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
