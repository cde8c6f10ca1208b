"""Fictional studies with identifiers planted everywhere, for the teaching-export tests.

Every person, lab, number and address here is invented. Each study carries identifiers in every
identifying field and, in free text (indication, notes, every comment), in several spellings:
"Family, Given", "Given Family", capitals, initials with the id, the id without punctuation, the
birth date as 14/03/1948, 14.03.1948, March 14, 1948 and others, accents written decomposed or
stripped, digits and letters in full width, plus phone numbers, e-mail, URLs, IP addresses and
long numbers. :class:`Planted` lists what was planted, so that a scan written independently of
the product can look for it in the outputs.
"""

from __future__ import annotations

import datetime as dt
import random
import re
import unicodedata
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import yaml

GIVEN = ("Ada", "Zoë", "Björn", "Amélie", "Søren", "Łucja", "Dagný", "Maël", "Ottilie", "Radomír")
FAMILY = (
    "Quennell",
    "Ångström-Brisbois",
    "Vasquez-Ibarra",
    "Oyelaran",
    "Nørgaard",
    "Kowalczyk",
    "Thistlewood",
    "Dubreuil",
    "Okonkwo-Bellamy",
    "Halvorsen",
    "Marchetti",
    "Pellegrino-Wyse",
)
SITES = (
    "Brackenfold Vascular Lab",
    "Kestrelmoor Vein Clinic",
    "Ormsby Vale Imaging",
    "Saint Wendreda Vascular Centre",
    "Thornquist Hospital Vascular Unit",
)
STAFF = ("Imogen Tallisker", "Corvin Ashdale", "Prudence Venkataraman", "Tobiah Fenwright")
MONTHS = tuple(
    dt.date(2001, m, 1).strftime("%B") for m in range(1, 13)
)  # English names in the C locale
FULL_WIDTH = {c: chr(ord(c) + 0xFEE0) for c in "0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZ-/."}
CLINICAL = (
    "focal calcified plaque with post-stenotic turbulence",
    "tandem lesions, aliasing corrected with a higher scale",
    "good colour fill, no flow limiting lesion",
)
GENERIC_SITE_WORDS = ("Vascular", "Clinic", "Imaging", "Centre", "Hospital", "Saint")
SEGMENTS = ("CFA", "PFA", "SFA-P", "SFA-M", "SFA-D", "POP-AK", "POP-BK", "TPT", "ATA-P", "PTA-P")


def full_width(text: str) -> str:
    """Return ``text`` with digits, capitals and - / . in their full-width forms."""
    return "".join(FULL_WIDTH.get(c, c) for c in text.upper())


def decomposed(text: str) -> str:
    """Return ``text`` with accented letters written as letter + combining mark."""
    return unicodedata.normalize("NFD", text)


def stripped(text: str) -> str:
    """Return ``text`` without accents (Zoë ➜ Zoe, Nørgaard stays: ø is a letter of its own)."""
    return "".join(c for c in decomposed(text) if not unicodedata.combining(c))


def fold(text: str) -> str:
    """Return ``text`` NFKC-normalised, casefolded and without accents."""
    text = unicodedata.normalize("NFKC", text).casefold()
    return "".join(c for c in unicodedata.normalize("NFKD", text) if not unicodedata.combining(c))


@dataclass
class Planted:
    """What one study holds that must not reach a teaching output."""

    words: set[str] = field(default_factory=set)  # name words: looked for as whole words
    values: set[str] = field(default_factory=set)  # ids, dates, addresses: looked for anywhere
    year_of_birth: str | None = None  # an identifier only when the patient is 90 or older

    def found_in(self, text: str, prose: str | None = None) -> list[str]:
        """Return what was planted that occurs in ``text`` (names as whole words), and any
        e-mail, URL or long number in ``prose`` (what a reader sees; ``text`` by default)."""
        t = fold(text)
        out = [w for w in self.words if re.search(rf"(?<![^\W_]){re.escape(fold(w))}(?![^\W_])", t)]
        out += [v for v in self.values if fold(v) in t]
        if self.year_of_birth and re.search(rf"(?<!\d){self.year_of_birth}(?!\d)", t):
            out.append(self.year_of_birth)
        for generic in (r"\d{5,}", r"[\w.]+@[\w.]+\.\w+", r"https?://", r"www\."):
            out += re.findall(generic, t if prose is None else fold(prose))
        return out


def date_forms(day: dt.date) -> list[str]:
    """Return the spellings of a date planted in free text."""
    y, m, d = day.year, day.month, day.day
    return [
        f"{d:02d}/{m:02d}/{y}",
        f"{d:02d}.{m:02d}.{y}",
        f"{MONTHS[m - 1]} {d}, {y}",
        f"{d} {MONTHS[m - 1][:3]} {y}",
        day.isoformat(),
        f"{m}/{d}/{y % 100:02d}",
        full_width(f"{d:02d}/{m:02d}/{y}"),
    ]


def study(n: int, seed: int = 0) -> tuple[dict[str, Any], Planted]:
    """Return one fictional study (plain data) and what was planted in it."""
    rng = random.Random(seed * 1_000_003 + n)
    given, family = rng.choice(GIVEN), rng.choice(FAMILY)
    exam = dt.date(2026, 1, 1) + dt.timedelta(days=rng.randrange(330))
    born = dt.date(rng.randint(1926, 1975), rng.randint(1, 12), rng.randint(1, 28))
    pid = f"MRN-{n:04d}{rng.randint(10, 99)}"
    accession = f"X{rng.randint(100, 999)}-{rng.randint(10000, 99999)}"
    site, operator = rng.choice(SITES), f"{rng.choice('ACEGKM')}. {rng.choice(STAFF)}"
    referrer = f"Dr {rng.choice(STAFF)}"
    uid = f"2.25.{rng.getrandbits(100)}"
    phone = f"+44 20 7946 {rng.randint(1000, 9999)}"
    email = f"{stripped(given).lower()}.{n}@mail.example.org"
    url = f"https://portal.example.org/records/{pid}"
    ip = f"10.{rng.randint(0, 255)}.{rng.randint(0, 255)}.{rng.randint(1, 254)}"
    ssn = f"{rng.randint(100, 899)}-{rng.randint(10, 99)}-{rng.randint(1000, 9999)}"
    age = exam.year - born.year - ((exam.month, exam.day) < (born.month, born.day))
    initials = f"{given[0]}.{stripped(family)[0]}."
    compact_id = pid.replace("-", "")
    name_forms = [
        f"{family}, {given}",
        f"{given} {family}",
        f"{given} {family}".upper(),
        stripped(f"{given} {family}"),
        decomposed(f"{family}, {given}"),
        full_width(stripped(family)),
    ]
    born_forms, exam_forms = date_forms(born), date_forms(exam)
    comments = [
        f"{rng.choice(name_forms)} ({pid}): {rng.choice(CLINICAL)}",
        f"{initials} {compact_id} {rng.choice(CLINICAL)}",
        f"dob {rng.choice(born_forms)}, {rng.choice(CLINICAL)}",
        f"id {full_width(pid)}, call {phone}",
        f"seen {rng.choice(exam_forms)} by {operator}",
        f"{stripped(family).lower()} {rng.choice(CLINICAL)}, acc {accession}",
    ]
    rng.shuffle(comments)
    segments: dict[str, dict[str, Any]] = {}
    for k, seg in enumerate(SEGMENTS):
        sample: dict[str, Any] = {"psv": rng.randint(45, 120), "waveform": "triphasic"}
        if k < len(comments):
            sample["comment"] = comments[k]
        segments[seg] = sample
    lesion_at = rng.choice(("SFA-M", "SFA-D", "POP-AK"))
    lesion: dict[str, Any] = {
        "at": lesion_at,
        "from_cm": 1,
        "length_cm": round(rng.uniform(1, 4), 1),
        "psv": rng.randint(180, 480),
        "edv": rng.randint(10, 90),
        "comment": f"{rng.choice(name_forms)} born {rng.choice(born_forms)}; see {url}",
    }
    if age >= 90:
        lesion["comment"] += f"; a {age}-year-old, aged {age}"
    notes = (
        f"Patient {rng.choice(name_forms)}, MRN {pid} ({compact_id.lower()}), DOB "
        f"{rng.choice(born_forms)} / {rng.choice(born_forms)}. Exam {rng.choice(exam_forms)} at "
        f"{site} ({stripped(site).upper()}), accession {accession}, uid {uid}. Sonographer "
        f"{operator}, referred by {referrer}. Contact {phone}, {email}, workstation {ip}, "
        f"insurance {ssn}, record {rng.randint(10**7, 10**8)}."
    )
    data: dict[str, Any] = {
        "format": 1,
        "patient": {
            "name": f"{family}, {given}",
            "id": pid,
            "birth_date": born.isoformat(),
            "sex": rng.choice(("female", "male")),
        },
        "exam": {
            "date": exam.isoformat(),
            "accession": accession,
            "site": site,
            "operator": operator,
            "referrer": referrer,
            "indication": f"Calf claudication; {rng.choice(name_forms)} {initials} {pid}",
            "criteria": "native",
            "study_uid": uid,
        },
        "pressures": {
            "brachial": {"right": rng.randint(120, 160), "left": rng.randint(120, 160)},
            "right": {"pt": rng.randint(90, 170), "dp": rng.randint(90, 170)},
            "left": {"pt": rng.randint(50, 150), "dp": rng.randint(50, 150), "toe": 60},
        },
        "limbs": {
            "right": {"segments": {k: dict(v) for k, v in list(segments.items())[:5]}},
            "left": {"segments": segments, "lesions": [lesion]},
        },
        "prior": f"../{family}/{exam.isoformat()}.yaml",
        "notes": notes,
    }
    planted = Planted(year_of_birth=str(born.year) if age >= 90 else None)
    site_words = [w for w in site.split() if len(w) > 5 and w not in GENERIC_SITE_WORDS]
    for text in (given, family, *_name_words(operator), *_name_words(referrer), *site_words):
        planted.words.update(w for w in stripped(text).replace("-", " ").split() if len(w) > 2)
    planted.values.update(
        [pid, compact_id, accession, uid, phone, email, url, ip, ssn, site, *born_forms]
    )
    planted.values.update(exam_forms)
    planted.values.add(f"{age}-year-old" if age >= 90 else pid)
    return data, planted


def _name_words(name: str) -> list[str]:
    """Return the words of a staff name without initials and titles."""
    return [w for w in name.replace(".", " ").split() if len(w) > 1 and w != "Dr"]


def write_studies(folder: Path, count: int, seed: int = 0) -> dict[Path, Planted]:
    """Write ``count`` studies into ``folder``; return what each file holds."""
    folder.mkdir(parents=True, exist_ok=True)
    out: dict[Path, Planted] = {}
    for n in range(1, count + 1):
        data, planted = study(n, seed)
        path = folder / f"study-{n:04d}.yaml"
        path.write_text(yaml.safe_dump(data, sort_keys=False, allow_unicode=True), "utf-8")
        out[path] = planted
    return out
