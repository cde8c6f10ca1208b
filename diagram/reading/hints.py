"""The words of a study file's problems: field paths, plausible ranges, units and hints.

:class:`diagram.reading.checks.Checker` finds what is wrong; the tables and functions here say
it in the project's words, with a hint a user can act on ("did you mean triphasic?", "velocities
are in cm/s: 1.2 m/s is 120 cm/s; write 120"), and say where a value may identify the patient and
so is never echoed.
"""

from __future__ import annotations

import dataclasses
import difflib
import re
from typing import Any

from diagram.reading.study import Patient

_PATIENT_KEYS = {f.name for f in dataclasses.fields(Patient)}


def dotted(loc: tuple[str | int, ...]) -> str:
    """Return the field path as messages print it: ``limbs.left.lesions[0].psv``."""
    if loc[:1] == ("patient",) and len(loc) > 1 and loc[1] not in _PATIENT_KEYS:
        loc = (loc[0], "(unknown key)", *loc[2:])  # a stray key there may itself identify
    out = ""
    for key in loc:
        out += f"[{key}]" if isinstance(key, int) else (f".{key}" if out else key)
    return out


def private(loc: tuple[str | int, ...]) -> bool:
    """Return True where a value may identify the patient and must not be echoed."""
    if loc == ("patient", "sex"):  # not an identifier (HIPAA Safe Harbor keeps it)
        return False
    if loc[:1] in (("patient",), ("notes",)) or loc[-1:] == ("comment",):
        return True
    if loc[:1] == ("exam",):  # every exam fact but the criteria names
        return len(loc) < 2 or not str(loc[1]).endswith("criteria")
    return False


TYPE_RULES = {
    "number": "must be a number",
    "integer": "must be a whole number",
    "string": "must be text",
    "boolean": "must be true or false",
    "object": "must be a mapping of keys to values",
    "array": "must be a list",
}
LIMIT_LABELS = {"psv": "PSV", "edv": "EDV", "proximal_psv": "a proximal PSV"}
# fields whose plausible range (the schema's minimum and maximum, each with its basis in the
# schema's $comment) is stated in words: what the value is and its unit
RANGE_LABELS = {
    "vr": ("a velocity ratio", ""),
    "prf_hz": ("a pulse repetition frequency", " Hz"),
    "f0_mhz": ("a transmit frequency", " MHz"),
    "shift_hz": ("a Doppler shift", " Hz"),
    "brachial": ("a brachial pressure", " mmHg"),
    "from_cm": ("an offset", " cm"),
    "length_cm": ("a length", " cm"),
}
BOUNDS = ("minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum")


def number_text(value: float) -> str:
    """Return a number as a message prints it: ``3`` for 3.0, else the shortest decimal."""
    return str(int(value)) if float(value).is_integer() else repr(value)


def close_hint(word: str, choices: list[str]) -> str | None:
    """Return "did you mean ...?" for the nearest choice, in any case, when one is near."""
    folded = {c.lower(): c for c in choices}
    match = difflib.get_close_matches(word.lower(), list(folded), n=1, cutoff=0.6)
    return f"did you mean {folded[match[0]]}?" if match else None


def range_field(loc: tuple[str | int, ...]) -> str:
    """Return the name a plausible range is known by: the key, or "brachial" for its sides."""
    if loc[:2] == ("pressures", "brachial"):
        return "brachial"
    return str(loc[-1]) if loc else ""


def range_rule(name: str, schema: dict[str, Any]) -> str:
    """Return the rule of a plausible range, from the schema's bounds."""
    label, unit = RANGE_LABELS[name]
    high = number_text(schema["maximum"])
    if "exclusiveMinimum" in schema:
        span = f"above {number_text(schema['exclusiveMinimum'])} and at most {high}{unit}"
    else:
        span = f"between {number_text(schema['minimum'])} and {high}{unit}"
    return f"is refused: {label} must be {span} to be plausible."


SHORT_ENUMS = {  # the trade's short forms of enum words
    "m": "male", "f": "female", "man": "male", "woman": "female", "u": "unknown",
    "tri": "triphasic", "bi": "biphasic", "mono": "monophasic",
    "ante": "antegrade", "retro": "retrograde", "calc": "calcified",
}  # fmt: skip
UNIT_WRITTEN = re.compile(
    r"([-+]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+))\s*"
    r"(cm/s|cm/sec|cms|m/s|mm/s|mmhg|mm hg|cm|mm|°|deg|degrees|hz|khz|mhz)\.?",
    re.IGNORECASE,
)
FIELD_UNITS = {  # the unit each kind of field is always in, as the study file says it
    "cm/s": ({"psv", "edv", "proximal_psv"}, "velocities are in cm/s"),
    "mmHg": ({"pt", "dp", "toe", "right", "left"}, "pressures are in mmHg"),
    "cm": ({"length_cm", "from_cm"}, "lengths are in cm"),
    "degrees": ({"angle"}, "angles are in degrees"),
    "Hz": ({"prf_hz", "shift_hz"}, "this frequency is in Hz"),
    "MHz": ({"f0_mhz"}, "the transmit frequency is in MHz"),
}
UNIT_WORDS = {
    "cm/s": "cm/s", "cm/sec": "cm/s", "cms": "cm/s", "m/s": "m/s", "mm/s": "mm/s",
    "mmhg": "mmHg", "mm hg": "mmHg", "cm": "cm", "mm": "mm",
    "°": "degrees", "deg": "degrees", "degrees": "degrees",
    "hz": "Hz", "khz": "kHz", "mhz": "MHz",
}  # fmt: skip
UNIT_FACTORS = {
    ("m/s", "cm/s"): 100.0,
    ("mm/s", "cm/s"): 0.1,
    ("mm", "cm"): 0.1,
    ("kHz", "Hz"): 1e3,
}
NONCOMPRESSIBLE_WORDS = re.compile(
    r"n\.?\s*/?\s*c\.?|non-?\s*compress(ible)?|incompressible|>\s*[0-9]+", re.I
)
NONCOMPRESSIBLE_HINT = (
    "a vessel the cuff could not compress has no pressure: leave {vessel} out and list it as "
    "noncompressible: [{vessel}] under pressures.{side}; the ABI is then not given and the TBI "
    "(toe pressure) is the index"
)


def enum_hint(value: str, choices: list[str]) -> str | None:
    """Return the enum word a short form or a near miss stands for, as a hint."""
    word = SHORT_ENUMS.get(value.strip().lower())
    if word in choices:
        return f"did you mean {word}?"
    return close_hint(value, choices)


def unit_hint(loc: tuple[str | int, ...], number: str, written: str) -> str:
    """Return how to write a number given with a unit: alone, or converted to the field's unit."""
    unit = UNIT_WORDS[written.lower()]
    field_unit, why = next(
        ((u, why) for u, (keys, why) in FIELD_UNITS.items() if str(loc[-1]) in keys),
        (None, ""),
    )
    if field_unit is None:
        return f"write the number alone: {number}"
    if unit == field_unit:
        return f"drop the unit and write {number}: {why}"
    factor = UNIT_FACTORS.get((unit, field_unit))
    if factor is not None:
        converted = number_text(round(float(number) * factor, 6))
        return f"{why}: {number} {unit} is {converted} {field_unit}; write {converted}"
    return f"{why}: give the number in {field_unit}, without the unit"


def date_hint(text: str) -> str | None:
    """Return how to write a day-first or month-first date (the date itself is not echoed)."""
    found = re.fullmatch(r"[0-9]{1,2}([/.\-])[0-9]{1,2}[/.\-][0-9]{2,4}", text.strip())
    if found:
        return (
            f"e.g. 2026-11-02 for 2 November 2026: a day and month split by '{found.group(1)}' "
            "are read day-first in some countries, month-first in others, so they are not "
            "guessed; the date is not repeated here, as it can identify the patient"
        )
    return None
