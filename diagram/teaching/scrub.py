"""A study's identifiers in every form, removed from free text (kept only for review).

Text is compared in a folded form: NFKC, casefolded, accents and invisible format characters
(zero-width spaces, soft hyphens) dropped, a few letters transliterated (ø ➜ o). "Demo, Ada",
"ADA DEMO", "Zoë" written with a combining diaeresis and "DEMO" in full-width letters
all fold to the same letters. Matches are mapped back onto the original text, so what is not
an identifier keeps its exact spelling.

:func:`scrub` replaces them in free text with :data:`MARKER`. What the scrubber misses is the
leak scan's to find (:mod:`diagram.teaching.scan`), which shares no code with this module.
"""

from __future__ import annotations

import datetime as dt
import re
import unicodedata
from collections import Counter
from collections.abc import Iterable
from dataclasses import dataclass
from functools import lru_cache

from diagram.reading.study import Study
from diagram.teaching.categories import Category
from diagram.teaching.patterns import (
    GENERIC_RULES,
    MONTH_NUMBERS,
    SCRUB_ONLY_RULES,
    Rule,
    boundary,
)

MARKER = "[removed]"


def _words_of(text: str) -> frozenset[str]:
    return frozenset(text.split())


_DROP = frozenset({"Mn", "Mc", "Me", "Cf"})  # combining marks and invisible format characters
_TRANSLIT = {"ø": "o", "æ": "ae", "œ": "oe", "đ": "d", "ð": "d", "ł": "l", "þ": "th", "\u0131": "i"}
_TRANSLIT.update({"ħ": "h", "ŧ": "t", "ŋ": "n"})
# words of a name that say what a person is, not who (never removed or looked for alone)
_TITLES = _words_of(
    "dr mr mrs ms miss mx prof sir dame rev fr sr jr md phd do rn np pa rvt rvs rdms rdcs "
    "mbbs frcs facs ii iii iv von van der den de da di du la le del della dos das st"
)
# words of a lab's name that do not identify it alone (the whole name is still removed)
_GENERIC_SITE_WORDS = _words_of(
    "the of and for at lab labs laboratory vascular vein clinic clinics hospital hospitals "
    "centre center medical medicine health healthcare imaging department dept unit "
    "university general regional community radiology diagnostic diagnostics service "
    "services ultrasound heart institute trust foundation nhs saint st infirmary memorial "
    "practice surgery group associates care private noninvasive non invasive"
)
_SEP = r"[\W_]{0,3}"  # between the words of a name: spaces, commas, hyphens, dots, nothing
_ID_SEP = r"[\W_]{0,2}"  # between the characters of an id: D-0001, D 0001, D0001


@lru_cache(maxsize=8192)
def _fold_char(ch: str) -> str:
    text = unicodedata.normalize("NFKD", unicodedata.normalize("NFKC", ch).casefold())
    return "".join(_TRANSLIT.get(c, c) for c in text if unicodedata.category(c) not in _DROP)


def fold(text: str) -> str:
    """Return ``text`` in the folded form every comparison uses."""
    if text.isascii():
        return text.lower()
    return "".join(_fold_char(c) for c in text)


def _fold_with_map(text: str) -> tuple[str, list[int]]:
    """Return the folded text and, for each folded character, its index in ``text``."""
    if text.isascii():
        return text.lower(), list(range(len(text)))
    parts: list[str] = []
    where: list[int] = []
    for i, ch in enumerate(text):
        folded = _fold_char(ch)
        parts.append(folded)
        where.extend([i] * len(folded))
    return "".join(parts), where


def compact(text: str) -> str:
    """Return the folded letters and digits of ``text`` and nothing else."""
    return "".join(c for c in fold(text) if c.isalnum())


@dataclass(frozen=True)
class Identifiers:
    """The identifiers of one study as search rules (values never leave this object)."""

    rules: tuple[Rule, ...]  # word-level forms, study-specific
    initials: tuple[str, ...]  # bare capital initials ("AD"), removed only beside a removal


def _alternation(words: Iterable[str]) -> str:
    return "|".join(re.escape(w) for w in sorted(set(words), key=lambda w: (-len(w), w)))


def _words(text: str) -> list[str]:
    return re.findall(r"[^\W\d_]+", fold(text))


def _person(name: str, category: Category) -> list[Rule]:
    """Return the rules for a person's name in any order, with initials."""
    family, _, given = name.partition(",") if "," in name else ("", "", name)
    ordered = _words(given) + _words(family)  # given names first
    words = [w for w in ordered if w not in _TITLES]
    tokens = [w for w in words if len(w) >= 2]
    letters = [w[0] for w in words]
    rules: list[Rule] = []
    if tokens:
        tok = _alternation(tokens)
        ini = _alternation(letters)
        phrase = rf"(?:(?:{ini})\.\s{{0,2}}){{0,3}}(?:{tok})(?:{_SEP}(?:{tok}|(?:{ini})\.))*"
        rules.append(Rule(category, re.compile(boundary(phrase))))
    if len(letters) >= 2:
        forms = {tuple(letters), tuple(reversed(letters)), (letters[0], letters[-1])}
        forms.add((letters[-1], letters[0]))
        dotted = "|".join(r"\.\s?".join(f) + r"\.?" for f in sorted(forms))
        rules.append(Rule(category, re.compile(boundary(f"(?:{dotted})"))))
    return rules


def _code(value: str, category: Category) -> list[Rule]:
    """Return the rules for an id, accession or UID with any punctuation or none."""
    core = compact(value)
    rules: list[Rule] = []
    if len(core) >= 3:
        flexible = _ID_SEP.join(re.escape(c) for c in core)
        rules.append(Rule(category, re.compile(boundary(flexible))))
    digits = "".join(c for c in core if c.isdigit())
    if len(digits) >= 4 and digits != core:  # the number without its letters
        flexible = _ID_SEP.join(digits)
        rules.append(Rule(category, re.compile(boundary(flexible))))
    return rules


def _date(day: dt.date, category: Category) -> list[Rule]:
    """Return the rules for one date in numeric, compact and month-name forms."""
    y4, y2 = f"{day.year}", f"{day.year % 100:02d}"
    names = _alternation(n for n, m in MONTH_NUMBERS.items() if m == day.month)
    month = rf"(?:0?{day.month}|(?:{names})\.?)"
    dd = rf"0?{day.day}(?:st|nd|rd|th|er)?"
    year = rf"(?:{y4}|'?{y2})"
    sep = r"(?:[\s./,\-]{1,3}(?:of\s+)?)"
    full = [
        rf"{y4}{sep}{month}{sep}{dd}",
        rf"{dd}{sep}{month}{sep}{year}",
        rf"{month}{sep}{dd}{sep}{year}",
        rf"{y4}{day.month:02d}{day.day:02d}|{day.day:02d}{day.month:02d}{y4}"
        rf"|{day.month:02d}{day.day:02d}{y4}|{y2}{day.month:02d}{day.day:02d}"
        rf"|{day.day:02d}{day.month:02d}{y2}|{day.month:02d}{day.day:02d}{y2}",
        rf"(?:{names})\.?{sep}{dd}|{dd}{sep}(?:{names})\.?",  # day and month by name
    ]
    rules = [Rule(category, re.compile(boundary(f"(?:{p})"))) for p in full]
    # the day and month in figures, without a year, as "14/03" or "3-14": free text only
    numeric = rf"0?{day.day}[/\-]0?{day.month}|0?{day.month}[/\-]0?{day.day}"
    rules.append(Rule(category, re.compile(boundary(f"(?:{numeric})"))))
    return rules


def _site(site: str) -> list[Rule]:
    words = _words(site) + [w for w in re.findall(r"\d+", fold(site))]
    if not words:
        return []
    rules = [Rule(Category.SITE, re.compile(boundary(_SEP.join(re.escape(w) for w in words))))]
    core = [w for w in words if w not in _GENERIC_SITE_WORDS and len(w) >= 3]
    if core and core != words:
        pattern = boundary(_SEP.join(re.escape(w) for w in core))
        rules.append(Rule(Category.SITE, re.compile(pattern)))
    return rules


def age_at_exam(birth: dt.date | None, exam: dt.date | None) -> int | None:
    """Return the age in whole years on the exam day, or None when a date is missing."""
    if birth is None or exam is None or birth > exam:
        return None
    return exam.year - birth.year - ((exam.month, exam.day) < (birth.month, birth.day))


def identifiers_of(study: Study) -> Identifiers:
    """Return the search rules for every identifier the study holds."""
    p, e = study.patient, study.exam
    rules: list[Rule] = []
    initials: set[str] = set()

    for name, cat in ((p.name, Category.NAME), (e.operator, Category.OPERATOR)):
        if name and name.strip():
            rules.extend(_person(name, cat))
            caps = [w[0].upper() for w in _words(name) if w not in _TITLES]
            if len(caps) >= 2:
                initials.update(("".join(caps), "".join(reversed(caps))))
    if e.referrer and e.referrer.strip():
        rules.extend(_person(e.referrer, Category.REFERRER))
    for code, cat in (
        (p.id, Category.PATIENT_ID),
        (e.accession, Category.ACCESSION),
        (e.study_uid, Category.STUDY_UID),
    ):
        if code and code.strip():
            rules.extend(_code(code, cat))
    if e.site and e.site.strip():
        rules.extend(_site(e.site))
    for day, cat, alone in (
        (p.birth_date, Category.BIRTH_DATE, True),
        (e.date, Category.EXAM_DATE, False),
    ):
        if day is not None:
            dated = _date(day, cat)
            if alone:
                dated.append(Rule(cat, re.compile(boundary(str(day.year)))))
            rules.extend(dated)
    return Identifiers(tuple(rules), tuple(sorted(initials)))


Span = tuple[int, int, Category]


def _spans(folded: str, rules: Iterable[Rule]) -> list[Span]:
    out: list[Span] = []
    for rule in rules:
        for m in rule.regex.finditer(folded):
            if m.end() > m.start() and (rule.check is None or rule.check(m)):
                out.append((m.start(), m.end(), rule.category))
    return out


def _merge(spans: list[Span]) -> list[Span]:
    """Merge overlapping spans; a merged span keeps the category of its longest part."""
    merged: list[Span] = []
    longest: list[int] = []
    for start, end, cat in sorted(spans, key=lambda s: (s[0], -s[1])):
        if merged and start < merged[-1][1]:
            s0, e0, c0 = merged[-1]
            if end - start > longest[-1]:
                c0, longest[-1] = cat, end - start
            merged[-1] = (s0, max(e0, end), c0)
        else:
            merged.append((start, end, cat))
            longest.append(end - start)
    return merged


def scrub(text: str, ids: Identifiers) -> tuple[str, Counter[Category]]:
    """Return ``text`` with identifiers and identifier patterns replaced, and counts by category."""
    folded, where = _fold_with_map(text)
    rules = (*ids.rules, *GENERIC_RULES, *SCRUB_ONLY_RULES)
    counts: Counter[Category] = Counter()
    out: list[str] = []
    pos = 0
    for start, end, cat in _merge(_spans(folded, rules)):
        a, b = where[start], where[end - 1] + 1
        while b < len(text) and unicodedata.category(text[b]) in _DROP:
            b += 1  # a combining mark or invisible character left behind the match
        out.append(text[pos:a] + MARKER)
        pos = b
        counts[cat] += 1
    out.append(text[pos:])
    result = "".join(out)
    if ids.initials and MARKER in result:
        result = _initials_beside_removal(result, ids, counts)
    return result, counts


def _initials_beside_removal(text: str, ids: Identifiers, counts: Counter[Category]) -> str:
    """Remove bare capital initials ("AD") written next to a removed identifier."""
    caps = "|".join(re.escape(i) for i in ids.initials)
    marker = re.escape(MARKER)
    near = re.compile(
        rf"(?<![^\W_])(?:{caps})(?![^\W_])(?=[\s,;:()/\-]{{0,3}}{marker})"
        rf"|(?<={marker})([\s,;:()/\-]{{0,3}})(?:{caps})(?![^\W_])"
    )

    def replace(m: re.Match[str]) -> str:
        counts[Category.NAME] += 1
        return (m.group(1) or "") + MARKER

    return near.sub(replace, text)
