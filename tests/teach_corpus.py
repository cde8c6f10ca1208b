"""The project's own adversarial corpus for the teaching export, and a harmless set.

Every person, place, number and address here is invented. An adversarial study smuggles one
identifier of its own (the study's name, id, dates, site …) or one kind of identifier (a phone
number, an age over 89 …) into its free text, written the way a hurried or careless record
would: transliterated, with look-alike letters, spaced, reversed, in another language … The
``leaks`` of an entry are what must not be found in any output (compared after NFKC, casefold
and dropping invisible characters, by the tests' own code). The harmless set are patients whose
names are words the sheet prints (a citation, a segment id, a word of the legend or markup):
every one of them must be exported.
"""

from __future__ import annotations

import datetime as dt
import unicodedata
from dataclasses import dataclass, field
from typing import Any

RLO = "\u202e"  # right-to-left override: the text after it is shown reversed


@dataclass(frozen=True)
class Entry:
    """One adversarial study: who it is about, what is smuggled where, what must not leak."""

    label: str
    text: str  # the free text smuggled in
    leaks: tuple[str, ...]  # substrings that must not reach an output
    who: dict[str, Any] = field(default_factory=dict)  # overrides of the base identity
    where: str = "notes"  # notes | indication | segment | lesion | graft


_BASE_WHO: dict[str, Any] = {
    "name": "Quennell, Bartholomew",
    "id": "KX-482913",
    "birth_date": "1951-04-17",
    "date": "2026-11-02",
    "site": "Harrowgate Vale Vascular Lab",
    "operator": "Imogen Tallisker",
    "referrer": "Dr Corvin Ashdale",
    "accession": "AC-55821",
}


def _e(label: str, text: str, leaks: str | tuple[str, ...], **who: Any) -> Entry:
    return Entry(label, text, (leaks,) if isinstance(leaks, str) else leaks, who)


ENTRIES: tuple[Entry, ...] = (
    # names
    _e("umlaut as ue", "Mr Mueller reports calf pain", "Mueller", name="Müller, Hans"),
    _e("o-slash as oe", "Mrs Soerensen walks 200 m", "Soerensen", name="Sørensen, Karen"),
    _e("a-ring as aa", "Aase reports rest pain", "Aase", name="Lindqvist, Åse"),
    _e(
        "look-alike letters",
        "Mr \u0412l\u0430\u0441kw\u043e\u043ed, right leg",
        "\u0412l\u0430\u0441kw\u043e\u043ed",
        name="Blackwood, Ferris",
    ),
    _e("spaced letters", "pt B l a c k w o o d ok", "B l a c k w o o d", name="Blackwood, Ferris"),
    _e("dotted capitals", "B.L.A.C.K. to return", "B.L.A.C.K", name="Blackwood, Ferris"),
    _e(
        "hyphen as space",
        "Okonkwo Bellamy, Ada: good fill",
        ("Okonkwo", "Bellamy"),
        name="Okonkwo-Bellamy, Ada",
    ),
    _e(
        "hyphen dropped",
        "seen: OkonkwoBellamy",
        "OkonkwoBellamy",
        name="Okonkwo-Bellamy, Ada",
    ),
    _e("apostrophe dropped", "Ms OSullivan, no rest pain", "OSullivan", name="O'Sullivan, Niamh"),
    _e("particle joined", "Mr Vanderberg, stent patent", "Vanderberg", name="van der Berg, Pieter"),
    _e("two-letter surname Le", "Mrs Le was seen", "Mrs Le", name="Le, Anh"),
    _e("two-letter surname Du", "Mr Du has claudication", "Mr Du", name="Du, Wei"),
    _e(
        "Cyrillic script",
        "\u0418\u0432\u0430\u043d\u043e\u0432\u0430 O.",
        "\u0418\u0432\u0430\u043d\u043e\u0432\u0430",
        name="Ivanova, Olga",
    ),
    _e("other transliteration", "Mr Muhammad walks 50 m", "Muhammad", name="Mohamed, Yusuf"),
    _e("nickname", "Bobby P. to return in 6 months", "Bobby", name="Pemberton, Robert"),
    _e("plural", "The Fletchers asked about surgery", "Fletchers", name="Fletcher, Dora"),
    _e(
        "reversed",
        f"pt {RLO}{'Thistlewood'[::-1]} ok",
        "Thistlewood"[::-1],
        name="Thistlewood, Ann",
    ),
    _e("digits for letters", "Mr E11ison, rest pain", "E11ison", name="Ellison, Mark"),
    Entry(
        "split across fields",
        "Kowal",
        ("Kowal",),
        {"name": "Kowalczyk, Jan", "indication_extra": "czyk"},
    ),
    # dates
    _e("ISO week date", "seen 2026-W45-1", "2026-W45-1"),
    _e("Portuguese date", "exame em 2 de novembro de 2026", "novembro"),
    _e("Japanese date", "\u691c\u67fb 2026\u5e7411\u67082\u65e5", "2026\u5e7411\u6708"),
    _e("no year", "review on 10/15", "10/15", date="2026-10-15"),
    _e("named day", "last seen Christmas Eve 2025", "Christmas Eve"),
    _e("birth month, two-digit year", "born 04/51", "04/51"),
    # ages over 89
    _e("age in words", "a ninety-two-year-old man", "ninety-two", birth_date="1934-05-01"),
    _e("age shorthand 92F", "92F, rest pain", "92F", birth_date="1934-05-01"),
    _e("age shorthand F/92", "F/92 with ulcer", "F/92", birth_date="1934-05-01"),
    _e("age in Italian", "paziente di 92 anni", "92 anni", birth_date="1934-05-01"),
    _e("birth year in text", "born in 1934, lives alone", "1934", birth_date="1934-05-01"),
    # contacts and ids
    _e("phone with dots", "call 555.014.2368", "555.014.2368"),
    _e("phone with slashes", "tel 0171/555 0142", "555 0142"),
    _e("phone with spaces", "daughter 020 7946 0142", "7946 0142"),
    _e("phone with en dashes", "ring 555\u2013014\u20132368", "014\u20132368"),
    _e("e-mail spaced", "mail q.bart @ example.org", "example.org"),
    _e("e-mail spelled", "write qbart at example dot org", "example dot org"),
    _e("URL", "images at https://records.example.net/p/77", "records.example.net"),
    _e("host name", "stored on pacs7.harrowgate.org.uk", "harrowgate.org"),
    _e("SSN with dots", "ssn 123.45.6789", "123.45.6789"),
    Entry(
        "MRN split across two fields",
        "old no. KX-482",
        ("KX-482",),
        {"indication_extra": "913"},
    ),
    _e("device serial", "probe S/N LX93-004417", "LX93-004417"),
    _e("licence plate", "drove himself, plate KX19 ZPB", "KX19 ZPB"),
    # places
    _e("street address", "lives at 14 Rosebank Road, Milbury MB4 7QT", ("Rosebank", "MB4 7QT")),
    _e("ZIP+4", "zip 90210-3321", "90210-3321"),
    _e("GPS", "home 51.5072, -0.1276", "51.5072"),
    _e("county", "moved from Fenwick County", "Fenwick"),
    _e("town from the site name", "travels from Harrowgate", "Harrowgate"),
    # the study's own values, plainly
    _e("name as written", "Quennell, Bartholomew: good fill", "Quennell"),
    _e("id without its dash", "id KX482913", "KX482913"),
    _e("birth date", "dob 17.04.1951", "17.04.1951"),
    _e("operator", "scanned by Tallisker", "Tallisker"),
    _e("referrer", "for Dr Ashdale", "Ashdale"),
    _e("accession", "acc AC55821", "AC55821"),
)
_MOVED = ("segment", "lesion", "indication", "graft")


def adversarial() -> list[Entry]:
    """Return the corpus: every entry in the notes, and the first ones again in other fields."""
    again = [
        Entry(f"{e.label} ({_MOVED[i % 4]})", e.text, e.leaks, e.who, _MOVED[i % 4])
        for i, e in enumerate(ENTRIES[:14])
        if "indication_extra" not in e.who
    ]
    return [*ENTRIES, *again]


HARMLESS_NAMES = (
    "Mills, Dora",  # a citation
    "Rutherford, Alan",  # a citation
    "Page, Harold",  # "page 1 of 2"
    "Stent, Mary",  # a legend word
    "Graft, Otto",
    "Per, Anna",  # a segment id (PER-P)
    "Ata, Emre",  # a segment id (ATA-P)
    "Font, Clara",  # SVG markup
    "Case, Norman",  # "Teaching case"
    "Long, Peter",  # "long occlusion"
    "Normal, Grace",
    "Band, Ivo",
)


def fold(text: str) -> str:
    """Return ``text`` NFKC-normalised, casefolded, without invisible characters."""
    kept = "".join(c for c in text if unicodedata.category(c) != "Cf")
    return unicodedata.normalize("NFKC", kept).casefold()


def study_data(
    who: dict[str, Any], *, notes: str | None = None, where: str = "notes", text: str = ""
) -> dict[str, Any]:
    """Return a fictional study (plain data) with ``text`` in the field ``where``."""
    ident = {**_BASE_WHO, **who}
    segments: dict[str, Any] = {
        "CFA": {"psv": 96, "waveform": "triphasic"},
        "SFA-P": {"psv": 88, "waveform": "biphasic"},
        "SFA-M": {"psv": 310, "edv": 40, "plaque": "calcified"},
        "POP-AK": {"psv": 55, "waveform": "monophasic"},
        "PER-P": {"psv": 40},
        "ATA-P": {"psv": 45},
    }
    lesion: dict[str, Any] = {"at": "SFA-M", "from_cm": 2, "length_cm": 3, "psv": 310}
    graft: dict[str, Any] = {
        "conduit": "vein",
        "from": "CFA",
        "to": "POP-BK",
        "samples": {"mid": {"psv": 70}},
    }
    exam = {k: ident[k] for k in ("date", "site", "operator", "referrer", "accession")}
    exam["indication"] = "calf claudication"
    data: dict[str, Any] = {
        "format": 1,
        "patient": {k: ident[k] for k in ("name", "id", "birth_date")} | {"sex": "female"},
        "exam": {**exam, "criteria": "native"},
        "pressures": {"brachial": {"right": 140, "left": 136}, "left": {"pt": 90, "dp": 84}},
        "limbs": {"left": {"segments": segments, "lesions": [lesion], "grafts": [graft]}},
        "notes": notes or "fictional study for the teaching tests",
    }
    if where == "notes":
        data["notes"] = text
    elif where == "indication":
        data["exam"]["indication"] = text
    elif where == "segment":
        segments["POP-AK"]["comment"] = text
    elif where == "lesion":
        lesion["comment"] = text
    elif where == "graft":
        graft["samples"]["mid"]["comment"] = text
    if "indication_extra" in who:
        data["exam"]["indication"] = who["indication_extra"]
    return data


def identity_values(who: dict[str, Any]) -> list[str]:
    """Return the identifying values of an entry's study, as a file holds them."""
    ident = {**_BASE_WHO, **who}
    day = dt.date.fromisoformat(ident["date"])
    return [ident["id"], ident["accession"], ident["birth_date"], day.isoformat()]
