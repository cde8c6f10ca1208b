"""Kinds of identifier the leak scan finds in any text, whoever they belong to.

Written apart from the scrubber's patterns (:mod:`diagram.teaching.patterns`), so that one
blind spot is not shared by both. Each detector reads the scan's plain text
(:func:`diagram.teaching.plain.plain`: ASCII, lower case) and returns what it found as
``(category, key)``: the key is the match in a normal form, so that the same finding in a
drawing made with a dummy identity can be told apart from a new one (the scan counts keys).

What is looked for (HIPAA Safe Harbor, 45 CFR 164.514(b)(2)): dates with a day or a month in
figures, in words of eight languages, ISO week dates, CJK dates, named days, month and
two-digit year; ages over 89 in figures, words and shorthand (``92F``, ``F/92``, ``92 anni``) and
a birth year that makes one; telephone numbers in any grouping; e-mail addresses, also spelled
("at … dot …"); URLs, host names and IP addresses; runs of five or more digits; postcodes
(UK, Canadian, US ZIP+4, Dutch); street addresses, counties and map coordinates; serial,
licence, plate, account and policy numbers.
"""

from __future__ import annotations

import datetime as dt
import re
from collections.abc import Callable, Iterator

from diagram.teaching.categories import Category

Found = tuple[Category, str]

# Month names (common abbreviations too) in English, French, German, Spanish, Italian,
# Portuguese, Dutch and the Scandinavian languages, in plain form (accents dropped, ä = a).
_MONTH_WORDS = (
    "january jan janvier janv januar enero gennaio janeiro januari",
    "february feb fevrier fevr fev februar febrero febbraio fevereiro februari",
    "march mar mars marz marzo marco maart",
    "april apr avril avr abril aprile",
    "may mai mayo maggio maio mei maj",
    "june jun juin juni junio giugno junho",
    "july jul juillet juil juli julio luglio julho",
    "august aug aout agosto augustus",
    "september sep sept septembre septiembre setiembre settembre setembro",
    "october oct octobre oktober okt octubre ottobre outubro",
    "november nov novembre noviembre novembro",
    "december dec decembre dezember dez diciembre dicembre dezembro",
)
MONTHS: dict[str, int] = {}
for _number, _names in enumerate(_MONTH_WORDS, start=1):
    for _name in _names.split():
        MONTHS.setdefault(_name, _number)
_MONTH = "|".join(sorted(MONTHS, key=lambda n: (-len(n), n)))
_ALONE = sorted({n for n in MONTHS if len(n) >= 5 and n != "march"}, key=lambda n: -len(n))
_DAY = r"(?P<d>[0-3]?\d)(?:st|nd|rd|th|er|eme|o|º|\.)?"
_YEAR = r"(?P<y>(?:18|19|20)\d\d|'\d\d|\d\d(?![\d:]))"
_OF = r"(?:\s*(?:,|\.|of|de|del|di|van)\s*|\s+|-)"

_NAMED_DAYS = (
    r"christmas(?:\s+(?:eve|day))?|xmas|new\s+year'?s?(?:\s+(?:eve|day))?|hogmanay|"
    r"easter(?:\s+(?:sunday|monday))?|good\s+friday|boxing\s+day|thanksgiving|halloween|"
    r"valentine'?s\s+day|st\.?\s+patrick'?s\s+day|independence\s+day|bastille\s+day|"
    r"midsummer(?:\s+(?:eve|day))?|noel|weihnachten|heiligabend|silvester|navidad|"
    r"nochebuena|natale|pascua|paques|ostern|pasqua|kerstmis|oudejaarsavond"
)


def _valid(year: int, month: int, day: int) -> bool:
    try:
        dt.date(year, month, day)
    except ValueError:
        return False
    return True


def _full_year(text: str) -> int:
    digits = int(text.strip("'"))
    return digits if digits >= 100 else (1900 + digits if digits > 30 else 2000 + digits)


def _numeric_dates(text: str) -> Iterator[Found]:
    for m in re.finditer(
        r"(?<![\d.,/-])(\d{1,4})([./-])(\d{1,2})\2(\d{2,4})(?![\d]|[./-]\d)", text
    ):
        a, b, c = m.group(1), m.group(3), m.group(4)
        if len(a) == 4 and len(c) <= 2 and _valid(int(a), int(b), int(c)):
            yield Category.DATE, f"{int(a)}-{int(b)}-{int(c)}"
        elif len(a) <= 2 and len(c) in (2, 4):
            year = _full_year(c)
            if _valid(year, int(b), int(a)) or _valid(year, int(a), int(b)):
                yield Category.DATE, f"{year}-{sorted((int(a), int(b)))}"
    for m in re.finditer(r"(?<![\d.])((?:18|19|20)\d\d)(0[1-9]|1[0-2])([0-3]\d)(?!\d)", text):
        if _valid(int(m.group(1)), int(m.group(2)), int(m.group(3))):
            yield Category.DATE, f"{m.group(1)}-{int(m.group(2))}-{int(m.group(3))}"
    for m in re.finditer(r"(?<![\d.])((?:18|19|20)\d\d)-?w([0-5]\d)(?:-?([1-7]))?(?![\d])", text):
        yield Category.DATE, f"{m.group(1)}-w{m.group(2)}"  # ISO 8601 week date
    # no year, or a month and a two-digit year: 10/15, 15/10, 03/48 (one part of two figures)
    for m in re.finditer(r"(?<![\d.,/-])(\d{1,2})/(\d{2})(?![\d]|[./-]\d)", text):
        a, b = int(m.group(1)), int(m.group(2))
        if 1 <= a <= 12 or (1 <= a <= 31 and 1 <= b <= 12):
            yield Category.DATE, f"{a}/{b}"
    for m in re.finditer(r"(?<![\d.,/-])((?:0?[1-9]|1[0-2]))[./-]((?:19|20)\d\d)(?![\d])", text):
        yield Category.DATE, f"{int(m.group(1))}/{m.group(2)}"


def _word_dates(text: str) -> Iterator[Found]:
    day_first = rf"(?<![a-z0-9.]){_DAY}{_OF}(?P<m>{_MONTH})\.?(?:{_OF}{_YEAR})?(?![a-z])"
    month_first = (
        rf"(?<![a-z])(?P<m>{_MONTH})\.?(?:\s*(?P<d>[0-3]?\d)(?:st|nd|rd|th)?(?![\d:]))?"
        rf"(?:\s*,?\s*{_YEAR})?(?![a-z])"
    )
    for pattern in (day_first, month_first):
        for m in re.finditer(pattern, text):
            day, year = m.group("d"), m.group("y")
            month = MONTHS[m.group("m")]
            if day and not 1 <= int(day) <= 31:
                continue
            if not (day or year):
                continue
            if m.group("m") in ("may", "mar", "mai", "maj", "dez", "mei") and not year:
                continue  # also words: "may 2 stents", "mar" (Spanish sea)
            yield Category.DATE, f"{year or ''}-{month}-{day or ''}"
    for m in re.finditer(rf"(?<![a-z])(?:{'|'.join(_ALONE)})(?![a-z])", text):
        yield Category.DATE, m.group(0)  # a month named alone is still an element of a date
    for m in re.finditer(rf"(?<![a-z])(?:{_NAMED_DAYS})(?![a-z])", text):
        yield Category.DATE, re.sub(r"\W", "", m.group(0))


def cjk_dates(text: str) -> Iterator[Found]:
    """Find dates written with the CJK year, month and day signs (年 月 日, 년 월 일)."""
    pattern = (
        r"(\d{2,4})\s*[年년]\s*(\d{1,2})\s*[月월](?:\s*(\d{1,2})\s*[日일])?"
        r"|(\d{1,2})\s*[月월]\s*(\d{1,2})\s*[日일]"
    )
    for m in re.finditer(pattern, text):
        yield Category.DATE, "-".join(g for g in m.groups() if g)


_UNITS = r"(?:years?|yrs?|y/?o|y\.o\.?|yo|y|anni|anno|ans|jahre|jahren|anos|jaar|lat)"
_NINETY = (
    r"ninety(?:[\s-]?(?:one|two|three|four|five|six|seven|eight|nine))?|"
    r"(?:one|a)[\s-]hundred(?:[\s-](?:and[\s-])?[a-z]+)?|hundred|novant[a-z]*|nonante[a-z-]*|"
    r"quatre[\s-]vingt[\s-](?:dix|onze|douze|treize|quatorze|quinze|seize)[a-z-]*|"
    r"[a-z]*undneunzig|neunzig|noventa[a-z\s]*?|negentig|nittio[a-z]*|halvfems[a-z]*|"
    r"cien(?:to)?|cem|cento|hundert"
)


def _ages(text: str, year: int) -> Iterator[Found]:
    over = r"(?P<n>9\d|1[0-2]\d)"
    for pattern in (
        rf"(?<![\d.]){over}\s*-?\s*{_UNITS}(?![a-z])",
        r"(?<![\d.])(?P<n>9\d)-?(?:f|m|w)(?![a-z0-9])",  # 92F; not 100m, a walking distance
        rf"(?<![\d.]){over}\s*-?(?:yof|yom|yo\s?[fm])(?![a-z0-9])",
        rf"(?<![a-z0-9])(?:f|m|w)\s*/\s*{over}(?![\d.])",
        rf"(?<![a-z])(?:aged?|ages|age\s*:|alter|edad|eta|agee\s+de|idade)\s*:?\s*{over}(?![\d.])",
    ):
        for m in re.finditer(pattern, text):
            yield Category.AGE, m.group("n")
    for m in re.finditer(rf"(?<![a-z])(?:{_NINETY})[\s-]+{_UNITS}(?![a-z])", text):
        yield Category.AGE, re.sub(r"\W", "", m.group(0))
    for m in re.finditer(r"(?<![a-z])(?:nonagenarian|centenarian|nineties)(?![a-z])", text):
        yield Category.AGE, m.group(0)
    born = (
        r"(?:born|b\.|yob|dob|birth\s*year|year\s+of\s+birth|ne|nee|geb\.?|geboren|nato|nata|"
        r"nacid[oa]|nascid[oa])"
    )
    for m in re.finditer(
        rf"(?<![a-z]){born}\s*:?\s*(?:in\s+)?(?:[a-z]+\.?\s+)?((?:18|19|20)\d\d)(?!\d)", text
    ):
        if year - int(m.group(1)) >= 90:
            yield Category.AGE, m.group(1)


def _phone(text: str) -> Iterator[Found]:
    for m in re.finditer(r"(?<![\w.])(?:\+|00)?\(?\d[\d\s().\-/]{5,}\d(?![\w])", text):
        digits = re.sub(r"\D", "", m.group(0))
        groups = len(re.findall(r"\d+", m.group(0)))
        if 7 <= len(digits) <= 15 and (groups >= 2 or m.group(0).startswith(("+", "00"))):
            yield Category.PHONE, digits
    label = r"(?<![a-z])(?:tel|telephone|phone|ph|fax|mobile|cell|mob|tlf|telefon[o]?)"
    for m in re.finditer(rf"{label}\.?\s*(?:no\.?|#)?\s*:?\s*(\+?\d[\d\s().\-/]{{3,}}\d)", text):
        yield Category.PHONE, re.sub(r"\D", "", m.group(1))


_TLD = (
    r"com|org|net|edu|gov|mil|int|info|biz|io|co|uk|de|fr|nl|es|it|ch|at|be|se|no|dk|fi|ie|au|nz|"
    r"ca|us|eu|jp|cn|in|br|za|pt|pl|cz|ru|health|nhs|med|local|lan|internal|example|test"
)
_AT = r"(?:\s*@\s*|\s*[\(\[\{<]\s*at\s*[\)\]\}>]\s*|\s+at\s+)"
_DOT = r"(?:\.|\s*[\(\[\{<]\s*dot\s*[\)\]\}>]\s*|\s+dot\s+)"


def _contacts(text: str) -> Iterator[Found]:
    for m in re.finditer(
        rf"([a-z0-9._%+\-]+){_AT}([a-z0-9\-]+(?:{_DOT}[a-z0-9\-]+)*){_DOT}({_TLD})(?![a-z])", text
    ):
        if "@" in m.group(0) or "dot" in m.group(0) or re.search(r"\w\.\w", m.group(0)):
            yield Category.EMAIL, re.sub(r"\W|(?<=\s)at|dot", "", m.group(0))
    for m in re.finditer(r"(?<![a-z])(?:https?|ftp|file|sftp)\s*:\s*/\s*/\s*[^\s<>\"]+", text):
        yield Category.URL, m.group(0)
    for m in re.finditer(
        rf"(?<![a-z0-9.@\-])(?:www{_DOT})?(?:[a-z0-9\-]+{_DOT})+(?:{_TLD})(?![a-z])", text
    ):
        if "." in m.group(0) or "dot" in m.group(0):
            yield Category.URL, re.sub(r"\s+|dot", "", m.group(0))
    for m in re.finditer(r"(?<![\d.])(?:\d{1,3}\.){3}\d{1,3}(?![\d]|\.\d)", text):
        if all(int(p) <= 255 for p in m.group(0).split(".")):
            yield Category.IP_ADDRESS, m.group(0)
    for m in re.finditer(r"(?<![\w:])(?:[0-9a-f]{1,4}:){2,7}[0-9a-f]{0,4}(?![\w:])", text):
        if re.search(r"[a-f]", m.group(0)) or m.group(0).count(":") >= 3:
            yield Category.IP_ADDRESS, m.group(0)


_STREET = (
    r"street|st|road|rd|avenue|ave|lane|ln|drive|close|crescent|court|ct|"
    r"boulevard|blvd|terrace|square|sq|gardens|grove|mews|strasse|str|weg|"
    r"gasse|platz|allee|rue|chemin|via|viale|piazza|calle|avenida|rua|laan|straat|gade|vej|gatan"
)
_UNIT_WORDS = frozenset(("cm", "mm", "ms", "hz", "mhz", "khz", "kg", "mg", "ml", "bpm", "sec"))
_SHORT_WORDS = frozenset(("to", "of", "at", "in", "or", "et", "on", "is", "by", "as", "an", "up"))
_NUMBER_AND_UNIT = re.compile(r"\d+(?:mmhg|cm|mm|hz|khz|mhz|ms|m|s|kg|mg|ml|bpm|yo|y|f|x|mins?)")


def _places(text: str) -> Iterator[Found]:
    for m in re.finditer(r"(?<![a-z0-9])([a-z]{1,2}\d[a-z\d]?)\s+(\d[a-z]{2})(?![a-z0-9])", text):
        if m.group(2)[1:] not in _UNIT_WORDS:  # UK: sw1a 1aa
            yield Category.POSTCODE, m.group(1) + m.group(2)
    for m in re.finditer(r"(?<![a-z0-9])([a-z]\d[a-z])\s?(\d[a-z]\d)(?![a-z0-9])", text):
        yield Category.POSTCODE, m.group(1) + m.group(2)  # Canada: k1a 0b1
    for m in re.finditer(r"(?<![\d-])(\d{5})-(\d{4})(?![\d])", text):
        yield Category.POSTCODE, m.group(0)  # US ZIP+4
    for m in re.finditer(r"(?<![\d.,])([1-9]\d{3})\s?([a-z]{2})(?![a-z0-9])", text):
        if m.group(2) not in _UNIT_WORDS | _SHORT_WORDS:
            yield Category.POSTCODE, m.group(0).replace(" ", "")  # the Netherlands: 1234 ab
    street = rf"(?<![\d.])\d{{1,5}}[a-z]?,?\s+(?:[a-z']+\s+){{0,3}}(?:{_STREET})\.?(?![a-z])"
    for m in re.finditer(street, text):
        yield Category.PLACE, re.sub(r"\W", "", m.group(0))
    for m in re.finditer(
        r"(?<![a-z])(?:[a-z]+\s+county|county\s+(?:of\s+)?[a-z]+|[a-z]{3,}shire|p\.?\s?o\.?\s+box\s*\d+)(?![a-z])",
        text,
    ):
        yield Category.PLACE, re.sub(r"\W", "", m.group(0))
    coord = r"-?\d{1,3}\.\d{3,}\s*[nsew]?\s*[,;/]\s*-?\d{1,3}\.\d{3,}"
    degrees = r"\d{1,3}\s*(?:deg|o)\s*\d{1,2}\s*'"  # plain(): the degree sign is "deg"
    for m in re.finditer(rf"(?<![\d.]){coord}|{degrees}", text):
        yield Category.PLACE, re.sub(r"\s", "", m.group(0))


def _codes(text: str) -> Iterator[Found]:
    for m in re.finditer(r"(?<!\d)\d{5,}(?!\d)", text):
        yield Category.LONG_NUMBER, m.group(0)
    for m in re.finditer(r"(?<![\d.])\d{3}[.\s-]\d{2}[.\s-]\d{4}(?![\d])", text):
        yield Category.LONG_NUMBER, re.sub(r"\D", "", m.group(0))  # a social security number
    label = (
        r"s/?n|serial(?:\s+(?:no|number))?|device(?:\s+id)?|udi|lot|licen[cs]e(?:\s+plate)?|plate|"
        r"reg(?:istration)?|vin|policy|account|acct|member|insurance|certificate|cert|mrn|nhs"
    )
    for m in re.finditer(
        rf"(?<![a-z])(?:{label})\s*(?:no\.?|number|#)?\s*[:#.]?\s*"
        r"([a-z0-9][a-z0-9\- ]{2,}[a-z0-9])",
        text,
    ):
        if re.search(r"\d", m.group(1)):
            yield Category.CODE, re.sub(r"\W", "", m.group(1))
    for m in re.finditer(r"(?<![a-z0-9])([a-z]{2}\d{2})\s?([a-z]{3})(?![a-z0-9])", text):
        yield Category.CODE, m.group(1) + m.group(2)  # a UK number plate: ab12 cde
    for m in re.finditer(
        r"(?<![a-z0-9\-])[a-z0-9]*(?:[a-z]+\d+|\d+[a-z]+)[a-z0-9]*(?![a-z0-9])", text
    ):
        word = m.group(0)
        digits = sum(c.isdigit() for c in word)
        mixed = len(word) >= 6 and digits >= 3 and len(word) - digits >= 2
        if mixed and not _NUMBER_AND_UNIT.fullmatch(word):
            yield Category.CODE, word


DETECTORS: tuple[Callable[[str], Iterator[Found]], ...] = (
    _numeric_dates,
    _word_dates,
    _phone,
    _contacts,
    _places,
    _codes,
)


def detect(text: str, year: int) -> list[Found]:
    """Return every identifier-like finding in a plain text (``year``: ages from birth years)."""
    found: list[Found] = []
    for detector in DETECTORS:
        found.extend(detector(text))
    found.extend(_ages(text, year))
    return found
