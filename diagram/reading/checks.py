"""Check a parsed study file: the JSON Schema first, then what a schema cannot say.

:class:`Checker` collects every problem with its line: schema errors in the project's words (with
"did you mean" hints), NaN, infinities and YAML 1.1 number forms that change the value, dates,
segment names, and the study's own rules (EDV above PSV, an occluded or unassessed sample with a
measurement, a lesion longer than the limb below it, a reconstitution upstream, a stent that does
not run down one path, the aorta under both limbs). A value that may identify the patient is
never echoed in a message.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import functools
import json
import math
import re
from dataclasses import dataclass, field
from importlib import resources
from typing import TYPE_CHECKING, Any

from diagram import anatomy
from diagram.errors import Problem
from diagram.reading.hints import (
    BOUNDS,
    LIMIT_LABELS,
    NONCOMPRESSIBLE_HINT,
    NONCOMPRESSIBLE_WORDS,
    RANGE_LABELS,
    TYPE_RULES,
    UNIT_WRITTEN,
    close_hint,
    date_hint,
    dotted,
    enum_hint,
    number_text,
    private,
    range_field,
    range_rule,
    unit_hint,
)
from diagram.reading.schemacheck import conforms

if TYPE_CHECKING:
    import jsonschema

Key = str | int
Loc = tuple[Key, ...]  # where a value sits in the file: its keys and list indices


@dataclass
class Parsed:
    """A parsed file, as the readers in ``load.py`` hand it over: plain values and their lines."""

    kind: str = "yaml"
    tree: object = None
    lines: dict[Loc, int] = field(default_factory=dict)
    places: dict[Loc, str] = field(default_factory=dict)  # where no line applies (e.g. DICOM)
    raw: dict[Loc, str] = field(default_factory=dict)  # source text of non-string scalars
    problems: list[Problem] = field(default_factory=list)
    unreadable: set[Loc] = field(default_factory=set)  # values already refused
    notes: list[str] = field(default_factory=list)  # what an imported report could not place

    def note(
        self, loc: Loc, line: int | None, rule: str, value: str | None = None, at: str | None = None
    ) -> None:
        self.problems.append(Problem("", line, dotted(loc), value, rule, at=at))


_NO_VALUE = object()  # a problem about a key or an item, not about a value


def study_schema() -> dict[str, Any]:
    """Return the JSON Schema (Draft 2020-12) of the study file, a fresh copy on every call."""
    schema: dict[str, Any] = json.loads(_schema_text())
    return schema


@functools.cache
def _schema_tree() -> dict[str, Any]:
    """The schema parsed once, read but never changed (study_schema() gives a copy to change)."""
    return study_schema()


@functools.cache
def _schema_text() -> str:
    return resources.files("diagram").joinpath("schema/study.schema.json").read_text("utf-8")


_MEASURED = ("psv", "edv", "vr", "proximal_psv", "shift_hz")  # none of them where no flow
_YAML_BOOLEAN_WORDS = {"yes", "no", "on", "off"}
_PLAIN_DECIMAL = re.compile(r"[-+]?(0|[1-9][0-9]*)(\.[0-9]*)?([eE][-+]?[0-9]+)?|[-+]?\.[0-9]+")


def _number(value: object) -> float | None:
    """Return a finite number, or None for anything else (bools are not numbers)."""
    if isinstance(value, bool) or not isinstance(value, int | float):
        return None
    try:
        number = float(value)
    except OverflowError:  # an integer too long for a float: out of every range anyway
        return None
    return number if math.isfinite(number) else None


_SURROGATE = re.compile("[\ud800-\udfff]")


class Checker:
    """Collect every problem of a parsed study: schema, number literals, the arterial tree."""

    def __init__(self, name: str, parsed: Parsed) -> None:
        self.name = name
        self.parsed = parsed
        self.problems: list[Problem] = [dataclasses.replace(p, file=name) for p in parsed.problems]
        self.bad: set[Loc] = set(parsed.unreadable)
        self.seen: set[tuple[int | None, str, str]] = set()

    def line(self, loc: Loc) -> int | None:
        for end in range(len(loc), -1, -1):
            if loc[:end] in self.parsed.lines:
                return self.parsed.lines[loc[:end]]
        return None

    def place(self, loc: Loc) -> str | None:
        for end in range(len(loc), -1, -1):
            if loc[:end] in self.parsed.places:
                return self.parsed.places[loc[:end]]
        return None

    def show(self, loc: Loc, value: object) -> str | None:
        if private(loc):
            return None
        if loc in self.parsed.raw:
            return self.parsed.raw[loc][:40] or "(empty)"
        if isinstance(value, str):
            return repr(value if len(value) <= 40 else value[:40] + "...")
        if isinstance(value, bool):
            return "true" if value else "false"
        if value is None:
            return "null"
        if isinstance(value, dict):
            return "{...}"
        if isinstance(value, list):
            return "[...]"
        number = _number(value)
        return number_text(number) if number is not None else repr(value)

    def report(
        self, loc: Loc, rule: str, value: object = _NO_VALUE, *, hint: str | None = None
    ) -> None:
        if any(loc[:end] in self.bad for end in range(len(loc) + 1)):
            return  # one problem per value, none inside a value already refused
        line = self.line(loc)
        text = None if value is _NO_VALUE else self.show(loc, value)
        if (line, dotted(loc), rule) in self.seen:
            return
        self.seen.add((line, dotted(loc), rule))
        at = self.place(loc) if line is None else None
        self.problems.append(Problem(self.name, line, dotted(loc), text, rule, hint, at))

    def refuse(
        self, item: dict[str, object], loc: Loc, key: str, rule: str, hint: str | None = None
    ) -> None:
        """Report the value of ``key`` in the mapping ``item`` found at ``loc``."""
        self.report((*loc, key), rule, item[key], hint=hint)

    def check(self) -> None:
        tree = self.parsed.tree
        if not conforms(tree, _schema_tree()):  # jsonschema (a costly import) words the problems
            import jsonschema

            for error in jsonschema.Draft202012Validator(study_schema()).iter_errors(tree):
                self.schema_error(error)
        self.literals(tree, ())
        if not isinstance(tree, dict):
            return
        for key in ("patient", "exam"):
            section = tree.get(key)
            if isinstance(section, dict):
                for date_key in ("birth_date", "date"):
                    if isinstance(section.get(date_key), str):
                        self.date((key, date_key), section[date_key])
        limbs = tree.get("limbs")
        if isinstance(limbs, dict):
            self.limbs(limbs)
        pressures = tree.get("pressures")
        if isinstance(pressures, dict):
            self.noncompressible(pressures)

    def noncompressible(self, pressures: dict[str, object]) -> None:
        """Refuse a pressure recorded for an artery also listed as noncompressible."""
        for side in ("right", "left"):
            limb = pressures.get(side)
            listed = limb.get("noncompressible") if isinstance(limb, dict) else None
            if not isinstance(limb, dict) or not isinstance(listed, list):
                continue
            for vessel in ("pt", "dp"):
                if vessel in listed and vessel in limb:
                    self.refuse(
                        limb,
                        ("pressures", side),
                        vessel,
                        f"is refused: {vessel} is also listed as noncompressible, which has "
                        "no pressure.",
                        hint=f"leave {vessel} out, or take it off the noncompressible list",
                    )

    # -- schema errors --

    def schema_error(self, error: jsonschema.ValidationError) -> None:
        loc: Loc = tuple(error.absolute_path)
        if self.key_error(loc, error):
            return
        rule, hint = self.schema_rule(loc, error)
        if error.instance is None:
            hint = "leave the key out when there is no value"
        self.report(loc, rule, error.instance, hint=hint)
        self.bad.add(loc)  # one problem per value: later checks skip it

    def key_error(self, loc: Loc, error: jsonschema.ValidationError) -> bool:
        """Report an unknown or a missing key of a mapping; return whether the error was one."""
        kind, schema, value = error.validator, error.schema, error.instance
        if kind == "additionalProperties" and isinstance(value, dict):
            allowed = list(schema.get("properties", {}))
            for key in value:
                if key not in allowed:
                    self.report(
                        (*loc, key), "is not a known key.", hint=close_hint(str(key), allowed)
                    )
                    self.bad.add((*loc, key))
            return True
        if kind == "required" and isinstance(value, dict):
            for key in error.validator_value:
                if key not in value:
                    self.report((*loc, key), "is required.")
            return True
        return False

    def schema_rule(self, loc: Loc, error: jsonschema.ValidationError) -> tuple[str, str | None]:
        """Return the rule a value breaks, in words, and a hint (None when there is none)."""
        kind, schema, value = error.validator, error.schema, error.instance
        hint = None
        if kind != "type" and isinstance(value, float) and not math.isfinite(value):
            rule = "must be a finite number."
        elif "pattern" in schema and kind in ("type", "pattern", "maxLength"):
            rule = f"must be {schema['description']}."
            if loc[-1:] in (("date",), ("birth_date",)) and isinstance(value, str):
                hint = date_hint(value)
        elif kind == "type":
            expected = str(error.validator_value)
            rule = f"{TYPE_RULES.get(expected, 'has the wrong type')}."
            hint = self.type_hint(loc, value, expected)
        elif kind == "enum":
            choices = [str(c) for c in error.validator_value]
            rule = f"must be one of {', '.join(choices)}."
            hint = enum_hint(value, choices) if isinstance(value, str) else None
        elif kind == "const":
            rule = f"must be {error.validator_value}, the only study format this version reads."
        elif kind in ("minimum", "maximum") and loc[-1:] == ("angle",):
            low, high = number_text(schema["minimum"]), number_text(schema["maximum"])
            rule = f"must be between {low} and {high} degrees."
        elif kind in BOUNDS and range_field(loc) in RANGE_LABELS:
            rule = range_rule(range_field(loc), schema)
        elif kind == "minimum":
            limit = error.validator_value
            rule = (
                "must not be negative." if limit == 0 else f"must be at least {number_text(limit)}."
            )
        elif kind == "exclusiveMinimum" and loc[-1:] in (("psv",), ("proximal_psv",)):
            rule = "must be greater than 0."
            hint = "record no flow with occluded: true or flow: absent"
        elif kind == "exclusiveMinimum":
            rule = f"must be greater than {number_text(error.validator_value)}."
        elif kind == "maximum" and loc[:1] == ("pressures",):
            limit = number_text(error.validator_value)
            rule = f"is refused: a pressure above {limit} mmHg is not physiological."
        elif kind == "maximum" and loc[-1:] and str(loc[-1]) in LIMIT_LABELS:
            label, limit = LIMIT_LABELS[str(loc[-1])], number_text(error.validator_value)
            rule = f"is refused: {label} above {limit} cm/s is not physiological."
        elif kind == "maximum":
            rule = f"must be at most {number_text(error.validator_value)}."
        else:
            rule = f"breaks the schema rule {kind!r}."
        return rule, hint

    def type_hint(self, loc: Loc, value: object, expected: str) -> str | None:
        raw = self.parsed.raw.get(loc, "")
        if isinstance(value, bool) and raw.lower() in _YAML_BOOLEAN_WORDS:
            advice = "quote text" if expected == "string" else f"give a {expected}"
            if private(loc):  # say it without echoing the value
                return f"YAML reads yes, no, on and off as true or false; {advice}"
            return f"YAML reads {raw} as {str(value).lower()}; {advice}"
        if expected == "number" and isinstance(value, str):
            text = value.strip()
            if (
                loc[:1] == ("pressures",)
                and loc[-1:] in (("pt",), ("dp",))
                and NONCOMPRESSIBLE_WORDS.fullmatch(text)
            ):
                return NONCOMPRESSIBLE_HINT.format(side=loc[1], vessel=loc[-1])
            unit = UNIT_WRITTEN.fullmatch(text)
            if unit:
                return unit_hint(loc, unit[1], unit[2])
            if self.parsed.kind == "yaml" and re.fullmatch(r"[-+]?[0-9]+[eE][-+]?[0-9]+", text):
                return f"YAML 1.1 reads {text} as text; write {number_text(float(text))}"
            if _PLAIN_DECIMAL.fullmatch(text):
                return "write the number without quotes"
        if expected == "string" and _number(value) is not None:
            return "put it in quotes"
        return None

    # -- numbers and dates --

    def literals(self, value: object, loc: Loc) -> None:
        """Refuse NaN, infinities and YAML 1.1 number forms that change the value read."""
        if isinstance(value, dict):
            for key, item in value.items():
                self.literals(item, (*loc, key))
        elif isinstance(value, list):
            for i, item in enumerate(value):
                self.literals(item, (*loc, i))
        elif isinstance(value, float) and not math.isfinite(value):
            self.report(loc, "must be a finite number.", value)
        elif isinstance(value, str) and _SURROGATE.search(value):
            # a lone \ud800-style escape in JSON is not a character: refused, never dropped
            self.report(loc, "holds an unpaired surrogate escape, which is not text.")
        elif self.parsed.kind == "yaml" and isinstance(value, int | float):
            raw = self.parsed.raw.get(loc, "")
            if raw and not isinstance(value, bool) and not _PLAIN_DECIMAL.fullmatch(raw):
                self.report(
                    loc,
                    "must be written as a plain decimal number.",
                    value,
                    hint=f"YAML 1.1 reads {raw} as {number_text(value)}",
                )

    def date(self, loc: Loc, text: str) -> None:
        try:
            dt.date.fromisoformat(text)
        except ValueError:
            self.report(loc, "is not a calendar date.", text)

    # -- the arterial tree --

    def segment(self, loc: Loc, name: object, *, shown: bool = True) -> str | None:
        """Return the canonical id named at ``loc``, reporting an unknown name."""
        if not isinstance(name, str) or loc in self.bad:
            return None
        seg = anatomy.resolve(name)
        if seg is None:
            self.report(
                loc,
                "is not a segment id or alias.",
                name if shown else _NO_VALUE,
                hint=anatomy.did_you_mean(name),
            )
        return seg

    def limbs(self, limbs: dict[str, object]) -> None:
        aorta: dict[str, list[Loc]] = {}
        for side in ("right", "left"):
            limb = limbs.get(side)
            if not isinstance(limb, dict):
                continue
            base: Loc = ("limbs", side)
            segments = limb.get("segments")
            if isinstance(segments, dict):
                first: dict[str, Loc] = {}
                for key, sample in segments.items():
                    loc = (*base, "segments", key)
                    seg = self.segment(loc, key, shown=False)
                    if seg is not None and seg in first:
                        self.report(
                            loc,
                            f"names the same segment as {first[seg][-1]!r} "
                            f"(line {self.line(first[seg])}): give each segment once.",
                        )
                    elif seg is not None:
                        first[seg] = loc
                    if seg == "AO":
                        aorta.setdefault(side, []).append(loc)
                    if isinstance(sample, dict):
                        self.sample(loc, sample, "segment")
            for i, lesion in enumerate(self.items(limb, "lesions")):
                loc = (*base, "lesions", i)
                if self.lesion(loc, lesion) == "AO":
                    aorta.setdefault(side, []).append((*loc, "at"))
            for i, stent in enumerate(self.items(limb, "stents")):
                self.stent((*base, "stents", i), stent)
            for i, graft in enumerate(self.items(limb, "grafts")):
                for key in ("from", "to"):
                    self.segment((*base, "grafts", i, key), graft.get(key))
                samples = graft.get("samples")
                for site, sample in samples.items() if isinstance(samples, dict) else ():
                    if isinstance(sample, dict):
                        self.sample((*base, "grafts", i, "samples", site), sample, "graft site")
        if len(aorta) == 2:
            sides = sorted(aorta, key=lambda s: self.line(aorta[s][0]) or 0)
            other = aorta[sides[0]][0]
            for loc in aorta[sides[1]]:
                self.report(
                    loc,
                    f"is refused: the aorta is unpaired and is already under "
                    f"limbs.{sides[0]} (line {self.line(other)}); record AO under one "
                    "limb only.",
                )

    @staticmethod
    def items(limb: dict[str, object], key: str) -> list[dict[str, object]]:
        values = limb.get(key)
        return [v for v in values if isinstance(v, dict)] if isinstance(values, list) else []

    def sample(self, loc: Loc, sample: dict[str, object], noun: str) -> None:
        if "shift_hz" in sample and sample.get("occluded") is not True:
            self.shift(loc, sample)
        psv, edv = _number(sample.get("psv")), _number(sample.get("edv"))
        if psv is not None and edv is not None and edv > psv:
            self.refuse(
                sample, loc, "edv", f"is above the PSV ({number_text(psv)}): EDV cannot exceed PSV."
            )
        for flag, why in (
            ("occluded", f"an occluded {noun} has no velocity"),
            ("not_assessed", f"a {noun} not assessed has no measurements"),
        ):
            if sample.get(flag) is True:
                for key in _MEASURED if flag == "not_assessed" else ("psv", "edv", "shift_hz"):
                    if key in sample:
                        self.refuse(sample, loc, key, f"is refused: {why}.")
        repeats = sample.get("samples")
        for i, repeat in enumerate(repeats if isinstance(repeats, list) else ()):
            if isinstance(repeat, dict):
                self.sample((*loc, "samples", i), repeat, noun)

    def shift(self, loc: Loc, sample: dict[str, object]) -> None:
        """Refuse a Doppler shift that cannot give a PSV: no angle, no frequency, or a PSV too."""
        if "psv" in sample:
            rule = "is refused with a psv: give the PSV or the Doppler shift it came from."
            self.refuse(sample, loc, "shift_hz", rule)
            return
        for key, what in (("angle", "insonation angle"), ("f0_mhz", "transmit frequency")):
            if key not in sample:
                rule = f"needs the {what} ({key}) to compute the PSV (Doppler equation)."
                self.refuse(sample, loc, "shift_hz", rule, hint=f"add {key}")

    def extent(self, loc: Loc, seg: str, item: dict[str, object]) -> None:
        """Check that an extent starts inside ``seg`` and ends inside the limb."""
        nominal = anatomy.SEGMENTS[seg].length_cm
        start = _number(item.get("from_cm"))
        if start is not None and start > nominal and (*loc, "from_cm") not in self.bad:
            self.refuse(
                item,
                loc,
                "from_cm",
                f"is beyond the end of {seg} (nominal length {number_text(nominal)} cm).",
            )
            return
        length = _number(item.get("length_cm"))
        remaining = anatomy.remaining_length_cm(seg, start or 0.0)
        if length is not None and length > remaining:
            where = f"{seg} at {number_text(start)} cm" if start else f"the start of {seg}"
            rule = f"is longer than the limb: {number_text(remaining)} cm remain below {where}"
            rule += " (nominal lengths)."
            self.refuse(item, loc, "length_cm", rule)

    def lesion(self, loc: Loc, lesion: dict[str, object]) -> str | None:
        self.sample(loc, lesion, "lesion")
        seg = self.segment((*loc, "at"), lesion.get("at"))
        if seg is not None:
            self.extent(loc, seg, lesion)
        if "reconstitutes" not in lesion:
            return seg
        target = self.segment((*loc, "reconstitutes"), lesion["reconstitutes"])
        if target is None:
            return seg
        if lesion.get("occluded") is not True:
            rule = "is refused: only an occluded lesion reconstitutes."
            self.refuse(lesion, loc, "reconstitutes", rule, hint="add occluded: true")
        elif seg is not None and not anatomy.is_downstream(target, seg):
            rule = f"is not downstream of {seg}, where the occlusion starts."
            self.refuse(lesion, loc, "reconstitutes", rule)
        return seg

    def stent(self, loc: Loc, stent: dict[str, object]) -> None:
        start = self.segment((*loc, "from"), stent.get("from"))
        end = self.segment((*loc, "to"), stent.get("to"))
        if start is not None:
            self.extent(loc, start, stent)
        if start and end and end != start and not anatomy.is_downstream(end, start):
            rule = f"is not {start} or downstream of it: a stent runs down one path."
            self.refuse(stent, loc, "to", rule)
