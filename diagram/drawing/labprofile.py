"""A lab's profile (``lab.yaml``): its name, default map template, page, font and band looks.

::

    format: 1
    lab_name: Example Vascular Lab       # printed in the sheet header
    template: infrainguinal-right        # a shipped template, or a path relative to this file
    page: a4                             # a4, letter or map
    font: DejaVu Sans                    # the shipped font is the only one (see below)
    bands:                               # by house look; any field may be left out
      50-74: {tint: "#E59A4E", hatch: lines, spacing_pt: 3.6, angle_deg: 45, weight_pt: 0.82}

Every field is optional. A band's fields replace those of the default style's band of the same
look (``dataclasses.replace``); nothing else changes. The only font is the shipped DejaVu Sans:
label boxes are measured with its metrics before rendering, and another face would overflow them.

Problems are reported all at once, one line each, ``file:line: field: value rule (hint)``. YAML
anchors and aliases are refused before anything is built, duplicate keys are refused (PyYAML
would keep the last silently), and the file may not exceed ``MAX_PROFILE_BYTES``.
"""

from __future__ import annotations

import difflib
import math
import re
from collections.abc import Callable, Iterator, Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path
from types import MappingProxyType
from typing import Any

from diagram.drawing.paper import PAGE_NAMES
from diagram.drawing.style import NOT_ASSESSED, SEVERITY_ORDER, Hatch, Style, default_style
from diagram.errors import InputError, Problem

MAX_PROFILE_BYTES = 64 * 1024
MAX_DEPTH = 8  # the profile nests three levels; anything deeper is refused before composing
SHIPPED_FONT = "DejaVu Sans"
LOOKS = (*SEVERITY_ORDER, NOT_ASSESSED)
_TOP_KEYS = ("format", "lab_name", "template", "page", "font", "bands")
_BAND_KEYS = ("tint", "ink", "hatch", "spacing_pt", "angle_deg", "weight_pt")
# Hatches a lab may choose; rings stay reserved for "not assessed" so it is never mistaken.
_HATCHES = ("none", "dots", "lines", "cross", "solid")
# Own design bounds: below 1 pt a 150-dpi print merges the texture into a flat grey; above 12 pt
# it no longer shows on the thinnest tube (5 pt). Marks wider than half the spacing fill the tile.
SPACING_PT = (1.0, 12.0)
WEIGHT_PT_MIN = 0.1
MAX_NAME_CHARS = 80
_COLOUR = re.compile(r"^#[0-9a-fA-F]{6}$")
_CONTROL = re.compile(r"[\x00-\x1f\x7f]")


class LabProfileError(InputError):
    """A lab profile that cannot be used as it is."""


@dataclass(frozen=True)
class LabProfile:
    """A validated lab profile; fields left out of the file are None (the command's default)."""

    source: str
    lab_name: str | None = None
    template: str | Path | None = None  # a shipped template's name, or a resolved path
    page: str | None = None
    style: Style = field(default_factory=default_style)
    lines: tuple[tuple[str, int], ...] = ()  # (field, line); a tuple keeps the profile picklable

    def line(self, key: str) -> int | None:
        """Return the line of a field (``bands.50-74.tint``), or of its nearest parent."""
        found = dict(self.lines)
        while key:
            if key in found:
                return found[key]
            key = key.rpartition(".")[0]
        return None


def load_lab_profile(path: str | Path) -> LabProfile:
    """Read and validate a lab profile; LabProfileError lists every problem."""
    name = str(path)
    try:
        with open(path, "rb") as handle:
            data = handle.read(MAX_PROFILE_BYTES + 1)
    except OSError as exc:
        raise LabProfileError(
            [Problem(name, None, "", None, f"cannot be read: {exc.strerror or exc}")]
        ) from None
    if len(data) > MAX_PROFILE_BYTES:
        raise LabProfileError(
            [Problem(name, None, "", None, f"is larger than {MAX_PROFILE_BYTES} bytes")]
        )
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        raise LabProfileError([Problem(name, None, "", None, "is not UTF-8 text")]) from None
    return parse_lab_profile(text, name, Path(path).resolve().parent)


def parse_lab_profile(text: str, file: str, base: Path) -> LabProfile:
    """Validate a profile's text; relative template paths are taken from ``base``."""
    raw, lines = _read_yaml(text, file)
    problems: list[Problem] = []

    def bad(key: str, value: Any, rule: str, hint: str | None = None) -> None:
        at = lines.get(key, lines.get(key.rpartition(".")[0]))
        shown = None if value is None else repr(value)
        problems.append(Problem(file, at, key, shown, rule, hint))

    _unknown(raw, _TOP_KEYS, "", "is not a lab profile field", bad)
    if raw.get("format", 1) != 1:
        bad("format", raw["format"], "must be 1")
    lab_name = _text(raw.get("lab_name"), "lab_name", bad)
    page = raw.get("page")
    if page is not None and page not in PAGE_NAMES:
        bad("page", page, f"must be one of {', '.join(PAGE_NAMES)}", _near(page, PAGE_NAMES))
        page = None
    font = raw.get("font", SHIPPED_FONT)
    if not isinstance(font, str) or font.strip().casefold() != SHIPPED_FONT.casefold():
        bad(
            "font",
            font,
            f"is not available: labels are measured and drawn with the shipped {SHIPPED_FONT}",
            f"write font: {SHIPPED_FONT}, or leave it out",
        )
    template = _template(raw.get("template"), base, bad)
    bands = raw.get("bands", {})
    overrides: dict[str, dict[str, Any]] = {}
    if not isinstance(bands, dict):
        bad("bands", bands, "must be a mapping of band looks to their fields")
    else:
        for look, fields in bands.items():
            checked = _band(str(look), fields, bad)
            if checked is not None:
                overrides[str(look)] = checked
    base_style = default_style()
    style = replace(
        base_style,
        bands=tuple(replace(b, **overrides.get(b.id, {})) for b in base_style.bands),
        font_family=SHIPPED_FONT,
    )
    _too_heavy(style, set(overrides), bad)
    if problems:
        raise LabProfileError(sorted(problems, key=lambda p: (p.line or 0, p.field)))
    return LabProfile(file, lab_name, template, page, style, tuple(lines.items()))


# --------------------------------------------------------------------------- YAML with lines


def _read_yaml(text: str, file: str) -> tuple[dict[str, Any], dict[str, int]]:
    """Return the mapping and the line of every key (``bands.lt50.tint``); refuse bombs."""
    import yaml

    def fail(line: int | None, rule: str, hint: str | None = None) -> LabProfileError:
        return LabProfileError([Problem(file, line, "", None, rule, hint)])

    try:
        _screen(yaml.parse(text, Loader=yaml.SafeLoader), fail)
        node = yaml.compose(text, Loader=yaml.SafeLoader)
    except yaml.YAMLError as exc:
        where: Any = getattr(exc, "problem_mark", None)
        reason = getattr(exc, "problem", None) or "cannot be read"
        raise fail(
            where.line + 1 if where is not None else None, f"is not valid YAML: {reason}"
        ) from None
    if node is None:
        return {}, {}
    if not isinstance(node, yaml.MappingNode):
        raise fail(node.start_mark.line + 1, "must be a mapping of lab profile fields")
    lines = _key_lines(node, file)
    try:
        data = yaml.safe_load(text)
    except yaml.YAMLError as exc:  # e.g. a tag that names a Python object
        mark = getattr(exc, "problem_mark", None)
        raise fail(
            mark.line + 1 if mark is not None else None,
            "is not valid YAML: only plain mappings, lists, texts and numbers are read",
        ) from None
    return data, lines


def _screen(events: Iterator[Any], fail: Callable[[int | None, str], LabProfileError]) -> None:
    """Refuse anchors and aliases (how a YAML bomb expands) and deep nesting, before building."""
    import yaml

    depth = 0
    for event in events:
        mark: Any = event.start_mark
        if isinstance(event, yaml.AliasEvent) or getattr(event, "anchor", None):
            raise fail(mark.line + 1, "must not use YAML anchors or aliases")
        if isinstance(event, yaml.CollectionStartEvent):
            depth += 1
            if depth > MAX_DEPTH:
                raise fail(mark.line + 1, f"nests deeper than {MAX_DEPTH} levels")
        elif isinstance(event, yaml.CollectionEndEvent):
            depth -= 1


def _key_lines(node: Any, file: str) -> dict[str, int]:
    """Return the line of every key by its dotted path; refuse a key given twice."""
    import yaml

    lines: dict[str, int] = {}
    problems: list[Problem] = []

    def walk(n: yaml.Node, prefix: str) -> None:
        if not isinstance(n, yaml.MappingNode):
            return
        for key_node, value_node in n.value:
            key = f"{prefix}{key_node.value}"
            if key in lines:
                problems.append(
                    Problem(
                        file,
                        key_node.start_mark.line + 1,
                        key,
                        None,
                        f"appears twice (first on line {lines[key]})",
                        "keep one",
                    )
                )
                continue
            lines[key] = key_node.start_mark.line + 1
            walk(value_node, f"{key}.")

    walk(node, "")
    if problems:
        raise LabProfileError(problems)
    return lines


# --------------------------------------------------------------------------- fields

Bad = Any  # the reporting callback of parse_lab_profile


def _near(value: Any, choices: tuple[str, ...] | list[str]) -> str | None:
    found = difflib.get_close_matches(str(value), list(choices), n=1, cutoff=0.5)
    return f"did you mean {found[0]}?" if found else None


def _unknown(
    raw: Mapping[Any, Any], allowed: tuple[str, ...], prefix: str, rule: str, bad: Bad
) -> None:
    for key in raw:
        if key not in allowed:
            bad(f"{prefix}{key}", None, rule, _near(key, allowed))


def _number(value: Any) -> float | None:
    if isinstance(value, bool) or not isinstance(value, int | float):
        return None
    try:
        number = float(value)
    except OverflowError:  # a whole number too long for a float: out of every range anyway
        return None
    return number if math.isfinite(number) else None


def _text(value: Any, key: str, bad: Bad) -> str | None:
    if value is None:
        return None
    if not isinstance(value, str) or not value.strip() or _CONTROL.search(value):
        bad(key, value, "must be a one-line text")
        return None
    if len(value) > MAX_NAME_CHARS:
        bad(key, f"{value[:20]}...", f"must be at most {MAX_NAME_CHARS} characters")
        return None
    return value.strip()


def _template(value: Any, base: Path, bad: Bad) -> str | Path | None:
    from diagram.drawing.template.mapfile import shipped_templates

    if value is None:
        return None
    shipped = shipped_templates()
    if not isinstance(value, str) or not value.strip():
        bad("template", value, "must be a shipped template's name or a path to an SVG file")
        return None
    if value in shipped:
        return value
    path = Path(value)  # "~" is not expanded: a profile names files relative to itself
    path = path if path.is_absolute() else base / path
    try:
        found = path.is_file()
    except OSError:  # a name the file system cannot hold (too long, say)
        found = False
    if not found:
        hint = _near(value, shipped) or "give a path relative to the profile"
        bad(
            "template",
            value,
            f"is neither a shipped template ({', '.join(shipped)}) nor a file",
            hint,
        )
        return None
    return path


def _band(look: str, fields: Any, bad: Bad) -> dict[str, Any] | None:
    """Return the checked BandStyle fields of one look, or None when any is wrong."""
    where = f"bands.{look}"
    if look not in LOOKS:
        bad(where, None, f"is not a band look ({', '.join(LOOKS)})", _near(look, LOOKS))
        return None
    if not isinstance(fields, dict):
        usual = default_style().band_map()[look].hatch
        bad(where, fields, "must be a mapping of band fields", f"e.g. {look}: {{hatch: {usual}}}")
        return None
    wrong: list[str] = []

    def fail(key: str, value: Any, rule: str, hint: str | None = None) -> None:
        wrong.append(key)
        bad(f"{where}.{key}", value, rule, hint)

    _unknown(fields, _BAND_KEYS, "", "is not a band field", fail)
    out: dict[str, Any] = {}
    for key in ("tint", "ink"):
        colour = fields.get(key, "#000000")
        if not isinstance(colour, str) or not _COLOUR.match(colour):
            hint = (
                'quote it, "#rrggbb": in YAML a bare # starts a comment' if colour is None else None
            )
            fail(key, colour, "must be a colour written #rrggbb", hint or 'e.g. "#E59A4E"')
        elif key in fields:
            out[key] = colour.upper()
    if "hatch" in fields:
        allowed = (*_HATCHES, "rings") if look == NOT_ASSESSED else _HATCHES
        if fields["hatch"] not in allowed:
            hatch = fields["hatch"]
            hint = "rings are kept for not-assessed" if hatch == "rings" else _near(hatch, allowed)
            fail("hatch", hatch, f"must be one of {', '.join(allowed)}", hint)
        else:
            out["hatch"] = Hatch(fields["hatch"])
    for key, (low, high) in _RANGES.items():
        if key not in fields:
            continue
        value = _number(fields[key])
        if value is None or not low <= value <= high:
            fail(key, fields[key], _RANGE_RULES[key])
        else:
            out[key] = value
    return None if wrong else out


_RANGES: Mapping[str, tuple[float, float]] = MappingProxyType(
    {"spacing_pt": SPACING_PT, "angle_deg": (0.0, 179.999), "weight_pt": (WEIGHT_PT_MIN, 6.0)}
)
_RANGE_RULES: Mapping[str, str] = MappingProxyType(
    {
        "spacing_pt": f"must be a number from {SPACING_PT[0]:g} to {SPACING_PT[1]:g}",
        "angle_deg": "must be a number from 0 to below 180 (a texture repeats every 180°)",
        "weight_pt": f"must be a number from {WEIGHT_PT_MIN:g} to 6",
    }
)


def _too_heavy(style: Style, overridden: set[str], bad: Bad) -> None:
    """Report textures whose marks are wider than half their spacing: they fill the tile."""
    for b in style.bands:
        textured = b.hatch in (Hatch.DOTS, Hatch.LINES, Hatch.CROSS, Hatch.RINGS)
        if b.id in overridden and textured and b.weight_pt > b.spacing_pt / 2:
            bad(
                f"bands.{b.id}.weight_pt",
                b.weight_pt,
                f"must be at most half of spacing_pt ({b.spacing_pt:g}) for a {b.hatch} texture",
                "wider marks fill the tile and read as solid",
            )


def lab_profile_schema() -> dict[str, Any]:
    """Return the JSON Schema (Draft 2020-12) of a lab profile, built from the rules above.

    A schema cannot say everything the loader checks: a template path must name a file, and a
    texture's marks must be at most half its spacing; ``limbchart style check`` reports those.
    """
    number = {"type": "number"}

    def band(hatches: tuple[str, ...]) -> dict[str, Any]:
        return {
            "type": "object",
            "additionalProperties": False,
            "properties": {
                "tint": {"type": "string", "pattern": _COLOUR.pattern, "description": "fill"},
                "ink": {"type": "string", "pattern": _COLOUR.pattern, "description": "texture"},
                "hatch": {"enum": list(hatches), "description": "texture"},
                "spacing_pt": {**number, "minimum": SPACING_PT[0], "maximum": SPACING_PT[1]},
                "angle_deg": {**number, "minimum": 0, "exclusiveMaximum": 180},
                "weight_pt": {**number, "minimum": WEIGHT_PT_MIN, "maximum": 6},
            },
        }

    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": "https://limbchart.invalid/schema/lab-profile-1.json",
        "title": "limbchart lab profile, format 1",
        "description": "A lab's name, default map template, page and band looks. Every field "
        "is optional; a band's fields replace those of the default style's band of that look.",
        "type": "object",
        "additionalProperties": False,
        "properties": {
            "format": {"const": 1},
            "lab_name": {
                "type": "string",
                "maxLength": MAX_NAME_CHARS,
                "pattern": r"^[^\x00-\x1f\x7f]*\S[^\x00-\x1f\x7f]*$",
                "description": "printed in the sheet header",
            },
            "template": {
                "type": "string",
                "minLength": 1,
                "description": "a shipped template's name, or a path relative to the profile",
            },
            "page": {"enum": list(PAGE_NAMES)},
            "font": {"const": SHIPPED_FONT, "description": "the shipped font is the only one"},
            "bands": {
                "type": "object",
                "additionalProperties": False,
                "properties": {
                    look: band((*_HATCHES, "rings") if look == NOT_ASSESSED else _HATCHES)
                    for look in LOOKS
                },
            },
        },
    }
