"""The study's own identifiers as the leak scan looks for them, and what counts as evidence.

Independent of the scrubber (:mod:`diagram.teaching.scrub`): both the study's values and the
outputs are brought to the plain form of :mod:`diagram.teaching.plain` and compared there.
A name is looked for

- word by word (short parts as whole words only, so that "Le" is not found in "left"), with a
  plural ("the Fletchers"), digits read as letters ("E11ison") and, for long parts, by its
  consonants (Muhammad, Mohamed); common nicknames of a given name too ("Bobby" for Robert);
- run together with everything between the letters removed, forwards and backwards ("B l a c k
  w o o d", "OSullivan", "Vanderberg", a name behind a right-to-left override), and written
  letter by letter in part ("B.L.A.C.K");

ids by their letters and digits (an MRN split over two fields is found in the digits of the
whole output), the site by its distinctive words, a birth year from age 90 on. Every finding is
a key ``(category, form)`` counted per output (:func:`evidence`); the scan compares the counts
with those of the same case drawn with a dummy identity, so that what both share (the sheet's
own words, citations, markup) is not taken for a leak.
"""

from __future__ import annotations

import datetime as dt
import re
from collections import Counter
from collections.abc import Iterable
from dataclasses import dataclass

from diagram.reading.study import Study
from diagram.teaching.categories import Category
from diagram.teaching.detect import cjk_dates, detect
from diagram.teaching.plain import deleet, ideographs, plain, skeleton, spelled_runs, squeeze, words

Key = tuple[Category, str]
Needle = tuple[Category, str]


def _set(text: str) -> frozenset[str]:
    return frozenset(text.split())


# words that say what a person is, not who
_TITLES = _set("dr mr mrs ms miss mx prof sir dame rev fr sr jr md phd rn np pa rvt rvs mbbs frcs")
# name particles: a needle alone only when they are the whole family name ("Le", "Du")
_PARTICLES = _set(
    "van von der den de da di du la le del della dos das ter ten st al el bin ibn mac o"
)
# words of a lab's name that do not identify it alone
_GENERIC_SITE = _set(
    "the of and for at lab labs laboratory vascular vein clinic clinics hospital hospitals "
    "centre center medical medicine health healthcare imaging department dept unit university "
    "general regional community radiology diagnostic diagnostics service services ultrasound "
    "heart institute trust foundation nhs saint st infirmary memorial practice surgery group "
    "associates care private noninvasive non invasive"
)
# common nicknames (common practice, English usage), in plain form
_NICKNAMES = {
    "robert": "bob bobby rob robbie bert",
    "william": "bill billy will willy liam",
    "richard": "rick ricky dick rich",
    "elizabeth": "liz lizzie beth betty eliza libby",
    "margaret": "maggie meg peggy marge greta",
    "katherine": "kate kathy katie kat",
    "catherine": "cathy kate katie cat",
    "james": "jim jimmy jamie",
    "john": "jack johnny",
    "jonathan": "jon jonny",
    "michael": "mike mick mickey",
    "thomas": "tom tommy",
    "joseph": "joe joey",
    "charles": "charlie chuck chas",
    "edward": "ed eddie ted ned",
    "alexander": "alex sandy xander",
    "alexandra": "alex sandra sasha",
    "christopher": "chris kit",
    "patricia": "pat patty trish",
    "jennifer": "jen jenny",
    "susan": "sue susie",
    "deborah": "debbie deb",
    "anthony": "tony",
    "nicholas": "nick nicky",
    "daniel": "dan danny",
    "benjamin": "ben benny",
    "samuel": "sam sammy",
    "matthew": "matt",
    "andrew": "andy drew",
    "stephen": "steve stevie",
    "steven": "steve stevie",
    "victoria": "vicky tori",
    "rebecca": "becky becca",
    "dorothy": "dot dottie",
    "henry": "harry hank",
    "frederick": "fred freddie",
    "theodore": "ted teddy theo",
    "muhammad": "mo",
    "mohamed": "mo",
}


@dataclass(frozen=True)
class Needles:
    """The identifiers of one study in the scan's forms (never printed, never written)."""

    words: tuple[Needle, ...]  # whole words (a plural allowed)
    squeezed: tuple[Needle, ...]  # inside one line with everything but letters and digits gone
    joined: tuple[Needle, ...]  # inside a whole output run together (split over fields)
    digits: tuple[Needle, ...]  # inside the digits of a whole output
    skeletons: tuple[Needle, ...]  # a word's consonants
    spelled: tuple[Needle, ...]  # name parts, against words written letter by letter
    year: int  # the exam year (or this year): a birth year 90 years before it is an age


def _name(value: str, category: Category) -> tuple[set[Needle], ...]:
    family, _, given = value.partition(",") if "," in value else ("", "", value)
    if not family:  # "Given Family": the last word is the family name
        parts = words(plain(given))
        family, given = " ".join(parts[-1:]), " ".join(parts[:-1])
    fam = [w for w in re.findall(r"[a-z]+", plain(family)) if w not in _TITLES]
    giv = [w for w in re.findall(r"[a-z]+", plain(given)) if w not in _TITLES]
    word: set[Needle] = set()
    squeezed: set[Needle] = set()
    joined: set[Needle] = set()
    skel: set[Needle] = set()
    spelled: set[Needle] = set()
    for group in (fam, giv):
        alone = [w for w in group if w not in _PARTICLES] or group
        for part in alone:
            if len(part) >= 2:
                word.add((category, part))
            if len(part) >= 4:
                spelled.add((category, part))
            if len(part) >= 5:
                squeezed.update({(category, part), (category, part[::-1])})
                if len(skeleton(part)) >= (4 if len(part) < 6 else 3):
                    skel.add((category, skeleton(part)))
            if len(part) >= 8:  # a long name split over two fields: "Kowal" … "czyk"
                word.update((category, part[:k]) for k in range(5, len(part) - 2))
                word.update((category, part[-k:]) for k in range(5, len(part) - 2))
        for i in range(len(group)):  # run together: "vanderberg", "okonkwobellamy"
            for j in range(i + 2, len(group) + 1):
                run = "".join(group[i:j])
                if len(run) >= 5:
                    squeezed.update({(category, run), (category, run[::-1])})
    for part in giv:
        word.update((category, nick) for nick in _NICKNAMES.get(part, "").split())
    for whole in ("".join(giv + fam), "".join(fam + giv)):
        if len(whole) >= 7 and fam and giv:
            joined.add((category, whole))
            squeezed.update({(category, whole), (category, whole[::-1])})
    return word, squeezed, joined, skel, spelled


def _code(value: str, category: Category) -> tuple[set[Needle], ...]:
    core = squeeze(plain(value))
    word: set[Needle] = set()
    squeezed: set[Needle] = set()
    joined: set[Needle] = set()
    digits: set[Needle] = set()
    for part in words(plain(value)):
        if len(part) >= 4 and any(c.isdigit() for c in part):
            word.add((category, part))
    if len(core) >= 4:
        word.add((category, core))
    if len(core) >= 5:
        squeezed.add((category, core))
        joined.add((category, core))
        for k in range(5, len(core)):  # an id split over two fields: "KX-482" … "913"
            for piece in (core[:k], core[-k:]):
                if sum(c.isdigit() for c in piece) >= 3:
                    squeezed.add((category, piece))
    figures = "".join(c for c in core if c.isdigit())
    if len(figures) >= 6:
        digits.add((category, figures))
    return word, squeezed, joined, digits


def _site(value: str) -> tuple[set[Needle], set[Needle]]:
    parts = words(plain(value))
    distinct = {(Category.SITE, w) for w in parts if w not in _GENERIC_SITE and len(w) >= 3}
    whole = squeeze(plain(value))
    return distinct, ({(Category.SITE, whole)} if len(whole) >= 8 else set())


def needles_of(study: Study) -> Needles:
    """Return the scan's forms of every identifier the study holds."""
    p, e = study.patient, study.exam
    word: set[Needle] = set()
    squeezed: set[Needle] = set()
    joined: set[Needle] = set()
    digits: set[Needle] = set()
    skel: set[Needle] = set()
    spelled: set[Needle] = set()
    for value, cat in ((p.name, Category.NAME), (e.operator, Category.OPERATOR)):
        if value and value.strip():
            w, s, j, k, sp = _name(value, cat)
            word, squeezed, joined, skel, spelled = (
                word | w, squeezed | s, joined | j, skel | k, spelled | sp
            )  # fmt: skip
    if e.referrer and e.referrer.strip():
        w, s, j, k, sp = _name(e.referrer, Category.REFERRER)
        word, squeezed, joined, skel, spelled = (
            word | w, squeezed | s, joined | j, skel | k, spelled | sp
        )  # fmt: skip
    for value, cat in (
        (p.id, Category.PATIENT_ID),
        (e.accession, Category.ACCESSION),
        (e.study_uid, Category.STUDY_UID),
    ):
        if value and value.strip():
            w, s, j, d = _code(value, cat)
            word, squeezed, joined, digits = word | w, squeezed | s, joined | j, digits | d
    if e.site and e.site.strip():
        w, s = _site(e.site)
        word, squeezed = word | w, squeezed | s
    year = e.date.year if e.date else dt.date.today().year
    for day, cat in ((p.birth_date, Category.BIRTH_DATE), (e.date, Category.EXAM_DATE)):
        if day is not None:
            yy, mm, dd = f"{day.year}", f"{day.month:02d}", f"{day.day:02d}"
            digits.update((cat, form) for form in (yy + mm + dd, dd + mm + yy, mm + dd + yy))
    if p.birth_date is not None and year - p.birth_date.year >= 90:  # 164.514(b)(2)(i)(C)
        word.add((Category.BIRTH_DATE, str(p.birth_date.year)))
    return Needles(
        words=tuple(sorted(word)),
        squeezed=tuple(sorted(squeezed)),
        joined=tuple(sorted(joined)),
        digits=tuple(sorted(digits)),
        skeletons=tuple(sorted(skel)),
        spelled=tuple(sorted(spelled)),
        year=year,
    )


def _word_forms(token: str) -> tuple[str, ...]:
    forms = [token, *deleet(token)]
    for suffix in ("es", "s"):
        forms += [f[: -len(suffix)] for f in list(forms) if f.endswith(suffix) and len(f) > 3]
    return tuple(dict.fromkeys(forms))


def evidence(texts: Iterable[str], needles: Needles) -> Counter[Key]:
    """Count every finding in the texts of one output: the study's own values and the kinds."""
    counts: Counter[Key] = Counter()
    by_word: dict[str, list[Category]] = {}
    for cat, w in needles.words:
        by_word.setdefault(w, []).append(cat)
    by_skeleton: dict[str, list[Category]] = {}
    for cat, s in needles.skeletons:
        by_skeleton.setdefault(s, []).append(cat)
    flat: list[str] = []
    squeezed_all: list[str] = []
    for text in texts:
        p = plain(text)
        flat.append(p.replace("\n", " | "))
        counts.update(cjk_dates(ideographs(text)))
        for token in words(p):
            for form in _word_forms(token):
                counts.update((cat, f"w:{form}") for cat in by_word.get(form, ()))
            if len(token) >= 4 and token.isalpha():
                counts.update((cat, f"k:{s}") for cat in by_skeleton.get(skeleton(token), ()))
        for line in p.splitlines() or [p]:
            line_sq = squeeze(line)
            for cat, form in needles.squeezed:
                if form in line_sq:
                    counts[(cat, f"s:{form}")] += line_sq.count(form)
        for run in spelled_runs(p):
            for cat, part in needles.spelled:
                if len(run) >= 4 and (run in part or part in run):
                    counts[(cat, f"p:{part}")] += 1
        squeezed_all.append(squeeze(p))
    counts.update(detect(" | ".join(flat), needles.year))
    whole = "".join(squeezed_all)
    figures = re.sub(r"\D", "", whole)
    for cat, form in needles.joined:
        counts[(cat, f"j:{form}")] += whole.count(form)
    for cat, form in needles.digits:
        counts[(cat, f"d:{form}")] += figures.count(form)
    return +counts  # drop zero counts
