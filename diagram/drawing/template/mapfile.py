"""Read a lab's SVG map template safely and expose each vessel's centre-line geometry.

The template is read as data and never executed or rendered here. The contract, checked at load
(``check_template`` lists every breach without raising):

- the root is ``<svg xmlns="http://www.w3.org/2000/svg">`` with a ``viewBox`` of four numbers,
  width and height between 1 and 100 000 units, corner within ±100 000;
- the root may declare what it covers with ``data-coverage`` (grammar below); without it
  the template covers the whole tree, the aorta and both legs;
- each vessel centre line is a ``<path>`` (or ``<line>``/``<polyline>``) drawn from its proximal
  to its distal end and named by ``data-segment`` (with ``data-side``, which may sit on an ancestor
  group), failing that by its ``id`` (``right-SFA-M``, ``R_SFA-M``, ``SFA-M-left``), failing that
  by ``inkscape:label``; aliases are resolved with ``anatomy.resolve``;
- every covered segment appears once (the aorta ``AO`` once, no side), and nothing else;
- each vessel starts within ``JOIN_TOLERANCE`` units of its parent's distal end (the first vessel
  of a partial template has no parent to join);
- right-side vessels lie on the viewer's left: of the aorta's distal end, of the midpoint between
  the two legs when there is no aorta, or, on a one-leg map, on the leg's lateral side as the
  profunda and the anterior tibial show it;
- ``data-length-cm`` and ``data-diameter-mm`` are present and within ``PLAUSIBLE_FACTOR`` of the
  segment's nominal value (``anatomy`` lengths, ``NOMINAL_DIAMETER_MM``), which catches a value
  written in the wrong unit; every vessel lies inside the viewBox;
- the body outline is drawn inside ``<g id="silhouette">`` (optional quiet strokes, such as
  ligaments or toes, inside ``<g id="landmarks">``); layers may be named by ``id`` or, as editors
  do, by ``inkscape:label``.

``data-coverage`` is ``bilateral`` (the default), ``right-infrainguinal``, ``left-infrainguinal``,
``bilateral-infrainguinal``, or a list of subtrees ``SIDE:SEGMENT`` (each segment with everything
downstream of it, e.g. ``"right:POP-BK"``) or ``AO`` (the whole tree).

Geometry is in the root viewBox's user units with every ``transform`` attribute of the element and
its ancestors applied.

The file is read by :mod:`diagram.drawing.template.svgread`, which refuses hostile content (DTDs and
entities, external references, scripts, event attributes, embedded and animation elements, absurd
sizes);
files over ``MAX_TEMPLATE_BYTES`` are refused unread.
"""

from __future__ import annotations

import difflib
import functools
import math
from collections.abc import Mapping
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from types import MappingProxyType
from typing import TYPE_CHECKING, Any

from diagram import anatomy
from diagram.drawing.template.contracts import (
    JOIN_TOLERANCE,
    Add,
    check_joins,
    check_sides,
    declared_value,
)
from diagram.drawing.template.coverage import (
    COVERAGES,
    covered_keys,
    describe_coverage,
    key_order,
    normalise_coverage,
    suggest_coverage,
)
from diagram.drawing.template.geometry import PathGeometry
from diagram.drawing.template.mapread import MapReader, RawVessel
from diagram.drawing.template.nominal import NOMINAL_DIAMETER_MM

# Safe reading lives in diagram.drawing.template.svgread; its limits stay importable from here.
from diagram.drawing.template.svgread import MAX_DEPTH as MAX_DEPTH
from diagram.drawing.template.svgread import MAX_ELEMENTS as MAX_ELEMENTS
from diagram.drawing.template.svgread import MAX_PATH_CHARS as MAX_PATH_CHARS
from diagram.drawing.template.svgread import MAX_VIEWBOX as MAX_VIEWBOX
from diagram.drawing.template.svgread import SVG_NS as SVG_NS
from diagram.drawing.template.svgread import clip
from diagram.errors import Problem, TemplateError

if TYPE_CHECKING:
    pass

SHIPPED_TEMPLATE = "bilateral.svg"
MAX_TEMPLATE_BYTES = 5_000_000


@dataclass(frozen=True)
class Vessel:
    """One segment's centre line in the template, proximal end first."""

    key: str  # anatomy.vessel_key(side, segment): "AO" or "right/CFA"
    side: str | None  # "right", "left", or None for the unpaired aorta
    segment: str  # canonical segment id
    length_cm: float  # nominal length declared by the template
    diameter_mm: float  # nominal diameter declared by the template
    geometry: PathGeometry  # absolute coordinates in the template's viewBox, transforms applied
    line: int | None = None  # where the template declares it

    @property
    def units_per_cm(self) -> float:
        """Return the drawing scale along this vessel (arc length per declared cm)."""
        return self.geometry.length() / self.length_cm


@dataclass(frozen=True)
class Template:
    """A parsed map template."""

    name: str
    source: str
    viewbox: tuple[float, float, float, float]  # min-x, min-y, width, height
    vessels: Mapping[str, Vessel]  # by Vessel.key (read-only)
    silhouette: tuple[str, ...]  # absolute path data of the quiet leg outline
    landmarks: tuple[str, ...] = ()  # absolute path data of quiet open strokes (ligament, toes)
    coverage: str = "bilateral"  # the declared data-coverage, normalised (see COVERAGES)
    title: str = ""  # the root <title>, if any

    @property
    def partial(self) -> bool:
        """Return True when the template covers less than the whole arterial tree."""
        return len(self.vessels) < len(covered_keys("bilateral"))

    @property
    def sides(self) -> tuple[str, ...]:
        """Return the legs the template draws, right first."""
        found = {v.side for v in self.vessels.values()}
        return tuple(side for side in ("right", "left") if side in found)

    def covers(self, side: str | None, segment: str) -> bool:
        """Return True when the template draws ``segment`` on ``side``."""
        if segment in anatomy.UNPAIRED:
            return segment in self.vessels
        return side is not None and anatomy.vessel_key(side, segment) in self.vessels

    def vessel(self, side: str | None, segment: str) -> Vessel:
        """Return the vessel of ``segment`` on ``side`` (side ignored for the aorta)."""
        if segment in anatomy.UNPAIRED:
            return self.vessels[segment]
        if side is None:
            raise ValueError(f"{segment} is paired: say which side")
        return self.vessels[anatomy.vessel_key(side, segment)]


def load_template(path: str | Path | None = None) -> Template:
    """Return the parsed template at ``path`` (the shipped bilateral map when None); cached.

    A shipped template's name (``infrainguinal-left``) stands for it; given as a ``Path``, the
    name is used only when no such file exists.
    """
    template, problems = _read(path)
    if problems or template is None:
        raise TemplateError(list(problems))
    return template


def check_template(path: str | Path | None = None) -> list[Problem]:
    """Return every problem with the template at ``path`` (empty when it can be used)."""
    return list(_read(path)[1])


def shipped_templates() -> tuple[str, ...]:
    """Return the names of the map templates shipped with the package (``bilateral`` ...)."""
    folder = resources.files("diagram.templates_svg")
    return tuple(sorted(p.name[:-4] for p in folder.iterdir() if p.name.endswith(".svg")))


def is_shipped(name: str | Path) -> bool:
    """Return True when ``name`` is a shipped template's name (a str, not a path)."""
    return isinstance(name, str) and name in shipped_templates()


def summary_line(template: Template) -> str:
    """Return the one-line verdict on a template that passed its checks."""
    n = len(template.silhouette)
    return (
        f"ok: {len(template.vessels)} vessels ({template.coverage}: "
        f"{describe_coverage(template.coverage)}), joins within {JOIN_TOLERANCE:g} units, "
        f"silhouette {n} path{'s' if n != 1 else ''}, nothing external referenced"
    )


def _read(path: str | Path | None) -> tuple[Template | None, tuple[Problem, ...]]:
    name = SHIPPED_TEMPLATE[:-4] if path is None else path
    if isinstance(name, Path) and is_shipped(str(name)) and not name.exists():
        name = str(name)  # a shipped name given as a path (a command-line option) and no such file
    if is_shipped(name):
        with resources.as_file(resources.files("diagram.templates_svg") / f"{name}.svg") as p:
            return _read_file(Path(p), f"{name}.svg")
    assert path is not None
    return _read_file(Path(path), str(path))


def _read_file(path: Path, display: str) -> tuple[Template | None, tuple[Problem, ...]]:
    try:
        resolved = path.resolve(strict=True)
        stat = resolved.stat()
        if not resolved.is_file():
            return None, (Problem(display, None, "", None, "is not a file"),)
        if stat.st_size > MAX_TEMPLATE_BYTES:
            return None, (_too_big(display, stat.st_size),)
        # An OSError raised inside is not cached, so a fixed permission takes effect at once.
        return _parse_cached(str(resolved), display, stat.st_mtime_ns, stat.st_size)
    except OSError as exc:
        rule = f"cannot be read: {exc.strerror or exc}"
        near = difflib.get_close_matches(path.name.removesuffix(".svg"), shipped_templates(), n=1)
        shipped = ", ".join(shipped_templates())
        hint = (
            f"did you mean the shipped {near[0]}?"
            if near
            else f"check the template's path; the shipped maps are {shipped}"
        )
        return None, (Problem(display, None, "", None, rule, hint),)


def _too_big(display: str, size: int) -> Problem:
    return Problem(
        display,
        None,
        "",
        f"{size} bytes",
        f"is larger than the {MAX_TEMPLATE_BYTES} bytes a map template may have",
        "simplify the artwork or remove embedded content",
    )


@functools.lru_cache(maxsize=16)
def _parse_cached(
    resolved: str, display: str, mtime_ns: int, size: int
) -> tuple[Template | None, tuple[Problem, ...]]:
    """Parse once per (file, modification time, size); the key changes when the file does."""
    with open(resolved, "rb") as fh:
        data = fh.read(MAX_TEMPLATE_BYTES + 1)
    if len(data) > MAX_TEMPLATE_BYTES:
        return None, (_too_big(display, len(data)),)
    reader = MapReader(display)
    reader.feed(data)
    return _build(reader, display, Path(resolved).stem)


def _build(
    reader: MapReader, display: str, name: str
) -> tuple[Template | None, tuple[Problem, ...]]:
    """Return the Template read, or every breach of the contract found."""
    problems = list(reader.problems)
    if reader.fatal:
        return None, tuple(problems)

    def add(line: int | None, where: str, value: Any, rule: str, hint: str | None = None) -> None:
        problems.append(
            Problem(display, line, where, None if value is None else str(value), rule, hint)
        )

    coverage, covered = _coverage(reader, add)
    found, declared = _collect(reader, coverage, covered, add)
    _check_complete(reader, covered, declared, add)
    check_joins(found, add)
    check_sides(found, add)
    if problems or reader.viewbox is None:
        return None, tuple(problems)
    return Template(
        name,
        display,
        reader.viewbox,
        MappingProxyType({key: found[key] for key in sorted(found, key=key_order)}),
        tuple(reader.silhouette),
        tuple(reader.landmarks),
        coverage,
        " ".join("".join(reader.title).split()),
    ), ()


def _collect(
    reader: MapReader, coverage: str, covered: frozenset[str] | None, add: Add
) -> tuple[dict[str, Vessel], set[str]]:
    """Return the vessels read (by key) and every key declared, reporting strays and repeats."""
    found: dict[str, Vessel] = {}
    declared: set[str] = set()
    for raw in reader.vessels:
        if raw.side is None and raw.segment not in anatomy.UNPAIRED:
            continue  # its missing side is already reported
        key = anatomy.vessel_key(raw.side or "right", raw.segment)
        if covered is not None and key not in covered:
            add(
                raw.line,
                raw.where,
                key,
                f"lies outside the declared coverage ({coverage})",
                "remove it, or widen data-coverage on the root <svg>",
            )
            continue
        if key in declared:
            first = found[key].line if key in found else None
            add(
                raw.line,
                raw.where,
                key,
                f"appears more than once (first on line {first})",
                "delete the duplicate or fix its data-segment/data-side",
            )
            continue
        declared.add(key)
        vessel = _vessel(raw, key, reader.viewbox, add)
        if vessel is not None:
            found[key] = vessel
    return found, declared


def _check_complete(
    reader: MapReader, covered: frozenset[str] | None, declared: set[str], add: Add
) -> None:
    """Report a map with no vessels or outline, an undeclared partial map, missing vessels."""
    expected = sorted(covered if covered is not None else (), key=key_order)
    if not reader.vessels:
        add(
            None,
            "vessels",
            None,
            f"no vessel centre lines found (0 of {len(expected)})",
            'name each centre line with data-segment="..." and data-side="right|left"',
        )
    if not reader.silhouette:
        add(
            None,
            "silhouette",
            None,
            "no body outline found",
            'draw the outline as paths inside <g id="silhouette">',
        )
    suggested = suggest_coverage(declared) if reader.coverage is None else None
    if suggested is not None:
        add(
            reader.root_line,
            "svg.data-coverage",
            None,
            f"is missing, and the map draws only {describe_coverage(suggested)} "
            f"({len(declared)} of {len(expected)} vessels)",
            f'declare a partial map: <svg data-coverage="{suggested}" ...>',
        )
        expected = []
    for key in expected if reader.vessels else ():
        if key not in declared:
            side, _, seg = key.rpartition("/")
            attrs = f'data-segment="{seg}"' + (f' data-side="{side}"' if side else "")
            add(
                None,
                f"vessels.{key}",
                None,
                "is missing",
                f"add a <path {attrs}> drawn from its parent's distal end",
            )


def _coverage(reader: MapReader, add: Add) -> tuple[str, frozenset[str] | None]:
    """Return the normalised coverage and its vessel keys (None when it cannot be read)."""
    if reader.coverage is None:
        return "bilateral", covered_keys("bilateral")
    raw, line = reader.coverage
    try:
        coverage = normalise_coverage(raw)
    except ValueError as exc:
        near = difflib.get_close_matches(raw.strip().lower(), list(COVERAGES), n=1)
        add(
            line,
            "svg.data-coverage",
            repr(clip(raw)),
            f"must be {', '.join(COVERAGES)} or a list of SIDE:SEGMENT subtrees ({exc})",
            f"did you mean {near[0]}?" if near else 'e.g. data-coverage="right:POP-BK"',
        )
        return raw, None
    return coverage, covered_keys(coverage)


def _vessel(
    raw: RawVessel, key: str, viewbox: tuple[float, float, float, float] | None, add: Add
) -> Vessel | None:
    try:
        geometry = PathGeometry.from_d(raw.d, raw.transform)
    except ValueError as exc:
        add(raw.line, f"{raw.where}.d", repr(clip(raw.d)), str(exc))
        return None
    nominal_cm = anatomy.SEGMENTS[raw.segment].length_cm
    nominal_mm = NOMINAL_DIAMETER_MM[raw.segment]
    length = declared_value(raw.length, "data-length-cm", nominal_cm, "cm", raw, add)
    diameter = declared_value(raw.diameter, "data-diameter-mm", nominal_mm, "mm", raw, add)
    if viewbox is not None:
        x, y, w, h = viewbox
        x0, y0, x1, y1 = geometry.bounds()
        slack = JOIN_TOLERANCE
        if x0 < x - slack or y0 < y - slack or x1 > x + w + slack or y1 > y + h + slack:
            add(
                raw.line,
                f"vessels.{key}",
                f"bounds=({x0:.1f} {y0:.1f} {x1:.1f} {y1:.1f})",
                f"must lie inside the viewBox ({x:g} {y:g} {w:g} {h:g})",
                "move it onto the map or widen the viewBox",
            )
    return Vessel(
        key, raw.side, raw.segment, length or math.nan, diameter or math.nan, geometry, raw.line
    )
