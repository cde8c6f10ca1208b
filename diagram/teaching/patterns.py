"""Identifier patterns that need no study: dates, phone numbers, e-mail, URLs, IP addresses.

The HIPAA Safe Harbor list (45 CFR 164.514(b)(2)) names these kinds of identifier; a teaching
case removes them from free text whoever they belong to. Every pattern runs on folded text
(lower case, accents dropped: :func:`diagram.teaching.scrub.fold`). A pattern's ``check`` refines a
match where a regular expression alone would be too loose (a calendar date must exist, an IPv4
octet is at most 255, a phone number has enough digits).
"""

from __future__ import annotations

import datetime as dt
import re
from collections.abc import Callable
from dataclasses import dataclass

from diagram.teaching.categories import Category


@dataclass(frozen=True)
class Rule:
    """One searchable form of an identifier."""

    category: Category
    regex: re.Pattern[str]
    check: Callable[[re.Match[str]], bool] | None = None


def boundary(pattern: str) -> str:
    """Return ``pattern`` bound to whole words: no letter or digit just before or after."""
    return rf"(?<![^\W_])(?:{pattern})(?![^\W_])"


# Month names and common abbreviations, folded (English, French, German, Spanish, Italian, Dutch).
MONTH_NUMBERS: dict[str, int] = {}
for _month, _names in enumerate(
    (
        "january jan janvier janv januar enero gennaio januari",
        "february feb fevrier fevr fev februar febrero febbraio februari",
        "march mar mars marz maerz marzo maart",
        "april apr avril avr abril aprile",
        "may mai mayo maggio mei",
        "june jun juin juni junio giugno",
        "july jul juillet juil juli julio luglio",
        "august aug aout agosto augustus",
        "september sep sept septembre septiembre setiembre settembre",
        "october oct octobre oktober okt octubre ottobre",
        "november nov novembre noviembre",
        "december dec decembre dezember dez diciembre dicembre",
    ),
    start=1,
):
    for _name in _names.split():
        MONTH_NUMBERS.setdefault(_name, _month)

_MONTHS = "|".join(sorted(MONTH_NUMBERS, key=lambda n: (-len(n), n)))
# whole month names that stand for a date even without a day or year ("seen in March")
_ENGLISH = "january february march april june july august september october november december"
_MONTH_WORDS = sorted(
    set(_ENGLISH.split()) | {n for n in MONTH_NUMBERS if len(n) >= 5},
    key=lambda n: (-len(n), n),
)


def _valid(year: int, month: int, day: int) -> bool:
    try:
        dt.date(year, month, day)
    except ValueError:
        return False
    return True


def _numeric_date(m: re.Match[str]) -> bool:
    """Return True when a figure triple such as 14.03.1948 or 1948/3/14 is a real date."""
    a, b, c = m.group("a"), m.group("b"), m.group("c")
    if len(a) == 4:
        return len(c) <= 2 and _valid(int(a), int(b), int(c))
    if len(a) > 2 or len(c) not in (2, 4):
        return False
    years = [int(c)] if len(c) == 4 else [1900 + int(c), 2000 + int(c)]
    return any(_valid(y, int(b), int(a)) or _valid(y, int(a), int(b)) for y in years)


def _named_date(m: re.Match[str]) -> bool:
    """Return True when a month name comes with a day or a year ("may" needs a year or a day
    written before it, so that "may 2" stays a word)."""
    if not (m.group("d1") or m.group("d2") or m.group("y")):
        return False
    return m.group("mon") != "may" or bool(m.group("y") or m.group("d1"))


def _ipv4(m: re.Match[str]) -> bool:
    return all(int(part) <= 255 for part in m.group(0).split("."))


def _phone(m: re.Match[str]) -> bool:
    """Return True for a run of digit groups long enough to be a telephone or fax number."""
    text = m.group(0)
    digits = sum(ch.isdigit() for ch in text)
    if digits >= 9 and "." not in text:
        return True
    return digits >= 7 and any(mark in text for mark in "-()+")


_D = r"[0-3]?\d(?:st|nd|rd|th|er)?"
_Y = r"(?:1[89]\d\d|20\d\d|'\d\d)"
_S = r"[\s,./\-]{0,3}"
_NOT_NUM_BEFORE = r"(?<![\d.,/\-])"
_NOT_NUM_AFTER = r"(?![\d]|[./\-]\d)"

GENERIC_RULES: tuple[Rule, ...] = (
    Rule(
        Category.DATE,
        re.compile(
            rf"{_NOT_NUM_BEFORE}(?P<a>\d{{1,4}})(?P<s>[./\-])(?P<b>\d{{1,2}})(?P=s)"
            rf"(?P<c>\d{{2,4}}){_NOT_NUM_AFTER}"
        ),
        check=_numeric_date,
    ),
    Rule(  # month and year in figures: 03/1948, 1948-03
        Category.DATE,
        re.compile(
            rf"{_NOT_NUM_BEFORE}(?:(?:0?[1-9]|1[0-2])[./\-](?:19|20)\d\d"
            rf"|(?:19|20)\d\d[./\-](?:0[1-9]|1[0-2])){_NOT_NUM_AFTER}"
        ),
    ),
    Rule(
        Category.DATE,
        re.compile(
            r"(?<!\d[.,])"  # not the decimals of a number: "Vr 4.18, may 2"
            + boundary(
                rf"(?:(?P<d1>{_D}){_S}(?:of\s+)?)?(?P<mon>{_MONTHS})\.?"
                rf"(?:{_S}(?P<d2>{_D})(?![\d:/]))?(?:{_S}(?P<y>{_Y}))?"
            )
        ),
        check=_named_date,
    ),
    Rule(Category.EMAIL, re.compile(r"[\w.+\-]+@[\w\-]+(?:\.[\w\-]+)+")),
    Rule(
        Category.URL,
        re.compile(
            r"(?:https?|ftp)://[^\s<>\"]+|(?<![\w.\-])www\.[^\s<>\"]+"
            r"|(?<![\w.@\-])(?:[a-z0-9\-]+\.)+(?:com|org|net|edu|gov|mil|int|info|io|uk|de|fr|nl"
            r"|es|it|ch|at|be|se|no|dk|fi|ie|au|nz|ca|us|eu|jp|cn|in|br|za)(?:/[^\s<>\"]*)?"
            r"(?![\w\-])"
        ),
    ),
    Rule(
        Category.IP_ADDRESS,
        re.compile(r"(?<![\d.])(?:\d{1,3}\.){3}\d{1,3}(?![\d]|\.\d)"),
        check=_ipv4,
    ),
    Rule(
        Category.IP_ADDRESS,
        re.compile(
            r"(?<![\w:])(?:(?:[0-9a-f]{1,4}:){7}[0-9a-f]{1,4}"
            r"|(?:[0-9a-f]{1,4}:){1,6}:(?:[0-9a-f]{1,4}(?::[0-9a-f]{1,4}){0,5})?)(?![\w:])"
        ),
    ),
    Rule(
        Category.PHONE,
        re.compile(
            r"(?<![\w+.\-])(?:\+|00)?(?:\(\d{1,4}\)[ .\-]?)?\d{2,4}(?:[ .\-]\(?\d{2,5}\)?){1,4}"
            r"(?![\w]|[.\-]\d)"
        ),
        check=_phone,
    ),
    Rule(Category.LONG_NUMBER, re.compile(r"(?<!\d)\d{5,}(?!\d)")),
    Rule(  # an age past 89 is an identifier: "92-year-old", "93 yo", "aged 91"
        Category.AGE,
        re.compile(
            r"(?<!\d)(?:9\d|1[0-4]\d)(?!\d)(?!\s*\+)\s*-?\s*"
            r"(?:years?|yrs?|y/o|y\.o\.|yo|jahre|ans|anos)(?:[\s\-]?old)?(?![^\W_])"
            r"|(?<![^\W_])(?:aged?|age:)\s*(?:9\d|1[0-4]\d)(?!\d)(?!\s*\+)"
        ),
    ),
)

# further free-text rules: a month named alone, a short phone number after its label
SCRUB_ONLY_RULES: tuple[Rule, ...] = (
    Rule(
        Category.DATE,
        re.compile(boundary("|".join(_MONTH_WORDS))),
    ),
    Rule(  # a telephone or fax number after its label, however short
        Category.PHONE,
        re.compile(
            boundary(r"tel|telephone|phone|fax|ph|mobile|cell") + r"\.?:?\s*\+?\d[\d ().\-]{4,}\d"
        ),
    ),
)
