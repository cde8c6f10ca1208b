"""Map templates: the shipped bilateral map, the template contract, and hostile files refused."""

from __future__ import annotations

import contextlib
import importlib.util
import itertools
import math
import os
import re
import socket
import subprocess
import sys
from collections.abc import Iterator
from importlib import resources
from pathlib import Path
from typing import Any

import pytest

from diagram import anatomy
from diagram.drawing.template.contracts import JOIN_TOLERANCE, PLAUSIBLE_FACTOR
from diagram.drawing.template.coverage import covered_keys, normalise_coverage
from diagram.drawing.template.geometry import PathGeometry, Point, format_number
from diagram.drawing.template.mapfile import (
    MAX_DEPTH,
    MAX_ELEMENTS,
    MAX_PATH_CHARS,
    MAX_TEMPLATE_BYTES,
    Template,
    Vessel,
    check_template,
    is_shipped,
    load_template,
    shipped_templates,
    summary_line,
)
from diagram.errors import TemplateError

SHIPPED = Path(str(resources.files("diagram.templates_svg") / "bilateral.svg"))
FIXTURES = Path(__file__).parent / "data" / "templates"
PAIRED = [s for s in anatomy.SEGMENT_IDS if s not in anatomy.UNPAIRED]
ALL_KEYS = {"AO"} | {anatomy.vessel_key(side, s) for side in ("right", "left") for s in PAIRED}

# --------------------------------------------------------------------------- helpers

_RECORDERS: list[list[tuple[str, str]]] = []
_WATCHED = {"open", "socket.connect", "socket.getaddrinfo", "urllib.Request", "subprocess.Popen"}


def _audit(event: str, args: tuple[object, ...]) -> None:
    if _RECORDERS and event in _WATCHED:
        _RECORDERS[-1].append((event, repr(args)))


sys.addaudithook(_audit)


@contextlib.contextmanager
def recorded() -> Iterator[list[tuple[str, str]]]:
    """Record file opens and network use (Python audit events) inside the block."""
    events: list[tuple[str, str]] = []
    _RECORDERS.append(events)
    try:
        yield events
    finally:
        _RECORDERS.pop()


def variant(tmp_path: Path, old: str, new: str, name: str = "variant.svg") -> Path:
    """Write the shipped template with ``old`` (which must occur once) replaced by ``new``."""
    text = SHIPPED.read_text(encoding="utf-8")
    assert text.count(old) == 1, old
    out = tmp_path / name
    out.write_text(text.replace(old, new), encoding="utf-8")
    return out


def line_of(path: Path, needle: str) -> int:
    for number, line in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1):
        if needle in line:
            return number
    raise AssertionError(needle)


def problem_lines(path: Path) -> list[str]:
    return [str(p) for p in check_template(path)]


def x_at_y(vessels: list[Vessel], y: float) -> float:
    """Return the x where the first of ``vessels`` spanning height ``y`` crosses it."""
    for v in vessels:
        pts = v.geometry.polyline(0, v.geometry.length(), 0.25)
        if min(p[1] for p in pts) <= y <= max(p[1] for p in pts):
            return min(pts, key=lambda p: abs(p[1] - y))[0]
    raise AssertionError(f"no vessel spans y={y}")


def inside(point: Point, polygon: tuple[Point, ...]) -> bool:
    """Even-odd ray casting."""
    x, y = point
    hit = False
    for (x1, y1), (x2, y2) in zip(polygon, polygon[1:] + polygon[:1], strict=True):
        if (y1 > y) != (y2 > y) and x < x1 + (y - y1) * (x2 - x1) / (y2 - y1):
            hit = not hit
    return hit


@pytest.fixture(scope="module")
def shipped() -> Template:
    return load_template()


# --------------------------------------------------------------------------- the shipped map


def test_shipped_template_passes_its_own_contract(shipped: Template) -> None:
    assert check_template() == []
    assert check_template(SHIPPED) == []
    assert set(shipped.vessels) == ALL_KEYS
    assert len(shipped.vessels) == 2 * 22 + 1
    assert shipped.viewbox == (0.0, 0.0, 400.0, 1000.0)
    assert shipped.name == "bilateral" and shipped.source == "bilateral.svg"
    assert len(shipped.silhouette) == 1 and shipped.silhouette[0].endswith("Z")
    assert shipped.vessel("right", "CFA") is shipped.vessels["right/CFA"]
    assert shipped.vessel(None, "AO") is shipped.vessels["AO"]
    assert shipped.vessel("left", "AO") is shipped.vessels["AO"]
    with pytest.raises(ValueError, match="CFA is paired"):
        shipped.vessel(None, "CFA")


@pytest.mark.parametrize("key", sorted(ALL_KEYS))
def test_each_shipped_vessel_is_drawn_to_scale(shipped: Template, key: str) -> None:
    vessel = shipped.vessels[key]
    assert vessel.geometry.length() > 0
    assert vessel.length_cm == anatomy.SEGMENTS[vessel.segment].length_cm
    # 7 units per cm in the pelvis, 8.5 from the groin down (the generator's scales; the
    # path data carries 3 decimals).
    expected = 7.0 if vessel.segment in {"AO", "CIA", "IIA", "EIA"} else 8.5
    assert vessel.units_per_cm == pytest.approx(expected, abs=2e-3)


# Lorbeer R et al., PLoS One 2018, upper reference diameters (clinical-values.md): CIA 11.8,
# EIA 10.3, proximal femoral 10.2, distal femoral 7.7, popliteal 6.9, AT 4.2, PT 3.8, peroneal 4.0.
# From memory: distal aorta 16, internal iliac 6, profunda 6, TPT 5, pedal arteries 2.5.
@pytest.mark.parametrize(
    ("segment", "diameter_mm"),
    [
        ("AO", 16.0),
        ("CIA", 11.8),
        ("IIA", 6.0),
        ("EIA", 10.3),
        ("CFA", 10.2),
        ("PFA", 6.0),
        ("SFA-P", 7.7),
        ("SFA-M", 7.7),
        ("SFA-D", 7.7),
        ("POP-AK", 6.9),
        ("POP-BK", 6.9),
        ("TPT", 5.0),
        ("ATA-P", 4.2),
        ("ATA-M", 4.2),
        ("ATA-D", 4.2),
        ("PTA-P", 3.8),
        ("PTA-M", 3.8),
        ("PTA-D", 3.8),
        ("PER-P", 4.0),
        ("PER-M", 4.0),
        ("PER-D", 4.0),
        ("DPA", 2.5),
        ("PLA", 2.5),
    ],
)
def test_shipped_diameters(shipped: Template, segment: str, diameter_mm: float) -> None:
    sides = [None] if segment in anatomy.UNPAIRED else ["right", "left"]
    for side in sides:
        assert shipped.vessel(side, segment).diameter_mm == diameter_mm


def test_shipped_children_start_exactly_at_their_parents_end(shipped: Template) -> None:
    for vessel in shipped.vessels.values():
        parent = anatomy.SEGMENTS[vessel.segment].parent
        if parent is not None:
            end = shipped.vessel(vessel.side, parent).geometry.end
            assert math.dist(vessel.geometry.start, end) < 1e-3, vessel.key


def test_shipped_in_line_continuations_are_smooth(shipped: Template) -> None:
    for vessel in shipped.vessels.values():
        nxt = anatomy.SEGMENTS[vessel.segment].continues_to
        if nxt is None or vessel.segment == "AO" or (vessel.segment, nxt) == ("POP-BK", "TPT"):
            continue  # the aortic and popliteal bifurcations turn on purpose
        a = vessel.geometry.tangent_at(vessel.geometry.length())
        b = shipped.vessel(vessel.side, nxt).geometry.tangent_at(0)
        assert a[0] * b[0] + a[1] * b[1] > math.cos(math.radians(1)), vessel.key


def test_shipped_sides_patient_right_on_viewer_left(shipped: Template) -> None:
    mid_x = shipped.vessels["AO"].geometry.end[0]
    assert mid_x == 200
    for vessel in shipped.vessels.values():
        if vessel.side is None:
            continue
        pts = vessel.geometry.polyline(0.5, vessel.geometry.length(), 1)
        if vessel.side == "right":
            assert all(p[0] < mid_x for p in pts), vessel.key
        else:
            assert all(p[0] > mid_x for p in pts), vessel.key


def test_shipped_map_is_mirror_symmetric(shipped: Template) -> None:
    for segment in PAIRED:
        right = shipped.vessel("right", segment).geometry
        left = shipped.vessel("left", segment).geometry
        for f in (0.0, 0.5, 1.0):
            rx, ry = right.point_at(f * right.length())
            lx, ly = left.point_at(f * left.length())
            assert (400 - rx, ry) == pytest.approx((lx, ly), abs=2e-3)


@pytest.mark.parametrize("side", ["right", "left"])
def test_shipped_anatomy_lateral_to_medial(shipped: Template, side: str) -> None:
    # clinical-values.md, "Anatomy for the map": profunda arises laterally; in a frontal view below
    # the knee the anterior tibial is most lateral, the posterior tibial most medial, the peroneal
    # between (recalled ordering).
    lateral = -1 if side == "right" else 1  # lateral is toward the viewer's left on the right leg

    def stem(name: str) -> list[Vessel]:
        return [shipped.vessel(side, f"{name}-{third}") for third in "PMD"]

    for level in range(640, 790, 10):
        at, per, pt = (x_at_y(stem(n), level) for n in ("ATA", "PER", "PTA"))
        assert lateral * at > lateral * per > lateral * pt, level
    pfa = shipped.vessel(side, "PFA").geometry
    for f in (0.25, 0.5, 1.0):
        x, y = pfa.point_at(f * pfa.length())
        assert lateral * x > lateral * x_at_y([shipped.vessel(side, "SFA-P")], y)
    # The internal iliac turns toward the midline pelvis; the external iliac runs laterally.
    cia_end = shipped.vessel(side, "CIA").geometry.end[0]
    assert lateral * shipped.vessel(side, "IIA").geometry.end[0] < lateral * cia_end
    assert lateral * shipped.vessel(side, "EIA").geometry.end[0] > lateral * cia_end


def test_shipped_vessels_sit_inside_the_silhouette(shipped: Template) -> None:
    outline = PathGeometry.from_d(shipped.silhouette[0])
    polygon = outline.polyline(0, outline.length(), 1.0)
    for vessel in shipped.vessels.values():
        for p in vessel.geometry.polyline(0, vessel.geometry.length(), 2.0):
            assert inside(p, polygon), (vessel.key, p)


def test_shipped_file_is_plain_data() -> None:
    text = SHIPPED.read_text(encoding="utf-8")
    assert "<script" not in text and "href" not in text and "url(" not in text
    assert "<!DOCTYPE" not in text and 'id="silhouette"' in text and 'id="vessels"' in text
    assert len(re.findall(r"<path [^>]*data-segment=", text)) == 45


def test_template_is_read_only(shipped: Template) -> None:
    with pytest.raises(TypeError):
        shipped.vessels["AO"] = shipped.vessels["right/CFA"]  # type: ignore[index]


def test_import_stays_light() -> None:
    code = "import sys, diagram.drawing.template.mapfile; print('defusedxml' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


# --------------------------------------------------------------------------- caching


def test_parsed_templates_are_cached_until_the_file_changes(tmp_path: Path) -> None:
    assert load_template() is load_template()
    copy = tmp_path / "lab.svg"
    copy.write_bytes(SHIPPED.read_bytes())
    first = load_template(copy)
    assert load_template(str(copy)) is not None
    assert load_template(copy) is first
    stat = copy.stat()
    os.utime(copy, ns=(stat.st_atime_ns, stat.st_mtime_ns + 1_000_000_000))
    second = load_template(copy)
    assert second is not first and second.vessels.keys() == first.vessels.keys()


# --------------------------------------------------------------------------- broken templates


def test_transform_heavy_template_equals_the_shipped_geometry(shipped: Template) -> None:
    # Mirrored layer, rotated/scaled/skewed groups, a matrix on every path, relative path data,
    # names from id and inkscape:label: after transforms, the same map (to the 3 decimals the
    # shipped file carries, magnified by the fixture's scales).
    other = load_template(FIXTURES / "transformed.svg")
    assert set(other.vessels) == ALL_KEYS
    # The outline sits in an editor's layer named by inkscape:label, under its own transform.
    mine, theirs = (PathGeometry.from_d(t.silhouette[0]) for t in (shipped, other))
    assert theirs.length() == pytest.approx(mine.length(), abs=1e-6)
    assert math.dist(theirs.point_at(500), mine.point_at(500)) < 1e-6
    for key, vessel in shipped.vessels.items():
        g, h = vessel.geometry, other.vessels[key].geometry
        assert h.length() == pytest.approx(g.length(), abs=2e-3)
        for f in (0.0, 0.3, 0.5, 1.0):
            assert math.dist(g.point_at(f * g.length()), h.point_at(f * h.length())) < 2e-3


@pytest.mark.parametrize(
    ("fixture", "expected"),
    [
        (
            "missing-segment.svg",
            [
                '{f}: vessels.left/PER-M: is missing (add a <path data-segment="PER-M" '
                'data-side="left"> drawn from its parent\'s distal end)'
            ],
        ),
        (
            "gap.svg",
            [
                "{f}:14: vessels.right/POP-BK: gap=4.00 must start within 1.5 units of the distal "
                "end of right/POP-AK (move its first point onto the end of right/POP-AK)"
            ],
        ),
        (
            "duplicate.svg",
            [
                "{f}:12: path[data-segment=SFA-M][data-side=right]: right/SFA-M appears more than "
                "once (first on line 11) (delete the duplicate or fix its data-segment/data-side)"
            ],
        ),
    ],
)
def test_broken_fixtures_report_exactly_their_defect(fixture: str, expected: list[str]) -> None:
    path = FIXTURES / fixture
    assert problem_lines(path) == [e.format(f=path) for e in expected]
    with pytest.raises(TemplateError) as err:
        load_template(path)
    assert err.value.lines() == [e.format(f=path) for e in expected]
    assert err.value.exit_code == 2


def test_swapped_sides_are_reported_for_every_vessel() -> None:
    path = FIXTURES / "swapped-sides.svg"
    lines = problem_lines(path)
    named = sorted(re.findall(r": vessels\.(\w+/[\w-]+): ", "\n".join(lines)))
    assert named == sorted(ALL_KEYS - {"AO"})  # every paired vessel, each once
    assert lines[0] == (
        f"{path}:5: vessels.left/CIA: x=181.6 must be > 200.0 (the aorta's x): a left-side vessel "
        "lies on the viewer's right (the patient's right is on the viewer's left; check data-side)"
    )
    assert all("the aorta's x" in line for line in lines)


@pytest.mark.parametrize(
    "attrs",
    [
        'id="right-SFA-M"',
        'id="R_SFA-M"',
        'id="SFA-M-right"',
        'id="rt.sfa mid"',
        'id="path77" inkscape:label="Right superficial femoral mid"',
        'data-segment="superficial femoral mid" data-side="Right"',
        'data-segment="FA-M" data-side="R"',
    ],
)
def test_vessel_names_from_attributes_ids_and_labels(tmp_path: Path, attrs: str) -> None:
    path = variant(
        tmp_path,
        'id="right-SFA-M" data-segment="SFA-M" data-side="right"',
        attrs,
    )
    if "inkscape:" in attrs:
        text = path.read_text(encoding="utf-8").replace(
            "<svg ", '<svg xmlns:inkscape="http://www.inkscape.org/namespaces/inkscape" ', 1
        )
        path.write_text(text, encoding="utf-8")
    assert problem_lines(path) == []
    assert load_template(path).vessels["right/SFA-M"].segment == "SFA-M"


def test_side_inherited_from_a_group(tmp_path: Path) -> None:
    text = SHIPPED.read_text(encoding="utf-8")
    rows = [r for r in text.splitlines() if 'data-side="left"' in r]
    grouped = [
        '    <g data-side="left">',
        *(r.replace(' data-side="left"', "") for r in rows),
        "    </g>",
    ]
    text = text.replace("\n".join(rows), "\n".join(grouped))
    path = tmp_path / "grouped.svg"
    path.write_text(text, encoding="utf-8")
    assert problem_lines(path) == []


def _reversed_path_row(text: str, key: str) -> tuple[str, str]:
    side, seg = key.split("/")
    row = next(r for r in text.splitlines() if f'id="{side}-{seg}"' in r)
    d = re.search(r' d="([^"]+)"', row)
    assert d is not None
    piece = PathGeometry.from_d(d.group(1)).pieces[0].reversed()
    pts = [piece.start, *(getattr(piece, n) for n in ("p1", "p2", "p3"))]
    fmt = [f"{format_number(x)} {format_number(y)}" for x, y in pts]
    return row, row.replace(d.group(1), f"M {fmt[0]} C {fmt[1]} {fmt[2]} {fmt[3]}")


def test_a_vessel_drawn_backwards_gets_a_hint(tmp_path: Path) -> None:
    row, backwards = _reversed_path_row(SHIPPED.read_text(encoding="utf-8"), "right/SFA-M")
    path = variant(tmp_path, row, backwards)
    lines = problem_lines(path)
    assert len(lines) == 2
    assert lines[0].startswith(f"{path}:{line_of(path, 'right-SFA-M')}: vessels.right/SFA-M: gap=")
    assert lines[0].endswith("(it looks drawn distal to proximal: reverse its path)")
    assert lines[1].endswith("(right/SFA-M looks drawn distal to proximal: reverse its path)")


@pytest.mark.parametrize(
    ("old", "new", "expected"),
    [
        (
            'data-segment="SFA-M" data-side="right"',
            'data-segment="SFA-X" data-side="right"',
            [
                "{f}:{line}: path[data-segment=SFA-X][data-side=right]: 'SFA-X' is not a segment id "
                "(did you mean SFA-P?)",
                '{f}: vessels.right/SFA-M: is missing (add a <path data-segment="SFA-M" '
                'data-side="right"> drawn from its parent\'s distal end)',
            ],
        ),
        (
            'data-segment="SFA-M" data-side="right"',
            'data-segment="SFA-M" data-side="up"',
            [
                "{f}:{line}: path[data-segment=SFA-M][data-side=up]: 'up' data-side must be right or "
                "left",
                "{f}:{line}: path[data-segment=SFA-M][data-side=up]: SFA-M needs a side (add "
                'data-side="right" or data-side="left")',
                '{f}: vessels.right/SFA-M: is missing (add a <path data-segment="SFA-M" '
                'data-side="right"> drawn from its parent\'s distal end)',
            ],
        ),
        (
            'id="AO" data-segment="AO"',
            'id="AO" data-segment="AO" data-side="right"',
            [
                "{f}:{line}: path[data-segment=AO][data-side=right]: 'right' AO is unpaired and takes no "
                "data-side (remove data-side)",
            ],
        ),
        (
            'data-segment="SFA-M" data-side="right" data-length-cm="9"',
            'data-segment="SFA-M" data-side="right"',
            [
                "{f}:{line}: path[data-segment=SFA-M][data-side=right].data-length-cm: is missing "
                "(declare the segment's nominal cm in data-length-cm)",
            ],
        ),
        (
            'stroke-width="4.235" d="M 141.457 287.321',
            'stroke-width="4.235" d="M 141.457 287.321 L',
            [
                "{f}:{line}: path[data-segment=SFA-M][data-side=right].d: 'M 141.457 287.321 L C "
                "144.336 314.708 146.203 336.054 148...' path data: L expects a number at "
                "offset 20 (found 'C 144.336 31')",
            ],
        ),
        (
            'id="right-SFA-M" data-segment',
            'id="right-SFA-M" style="transform: rotate(3deg)" data-segment',
            [
                "{f}:{line}: path[data-segment=SFA-M][data-side=right].style: 'transform: "
                "rotate(3deg)' CSS transform is not read (use the transform attribute instead)",
            ],
        ),
    ],
)
def test_vessel_attribute_problems(tmp_path: Path, old: str, new: str, expected: list[str]) -> None:
    path = variant(tmp_path, old, new)
    line = line_of(path, new)
    assert problem_lines(path) == [e.format(f=path, line=line) for e in expected]


@pytest.mark.parametrize(
    ("attr", "value", "ok"),
    [
        # Plausible: within a factor of 3 of the nominal value (own margin). SFA-M: 9 cm nominal
        # (anatomy.py, from memory), 7.7 mm (Lorbeer 2018, distal femoral): 3-27 cm, 2.57-23.1 mm.
        ("data-length-cm", "3", True),
        ("data-length-cm", "2.99", False),
        ("data-length-cm", "27", True),
        ("data-length-cm", "27.01", False),
        ("data-length-cm", "90", False),  # millimetres written as centimetres
        ("data-length-cm", "0", False),
        ("data-length-cm", "-3", False),
        ("data-length-cm", "nan", False),
        ("data-length-cm", "nine", False),
        ("data-diameter-mm", "2.567", True),
        ("data-diameter-mm", "2.566", False),
        ("data-diameter-mm", "23.1", True),
        ("data-diameter-mm", "23.11", False),
        ("data-diameter-mm", "0.77", False),  # centimetres written as millimetres
        ("data-diameter-mm", "inf", False),
    ],
)
def test_declared_length_and_diameter_must_be_plausible(
    tmp_path: Path, attr: str, value: str, ok: bool
) -> None:
    assert PLAUSIBLE_FACTOR == 3.0
    current = "9" if attr == "data-length-cm" else "7.7"
    path = variant(
        tmp_path,
        'data-side="right" data-length-cm="9" data-diameter-mm="7.7" stroke-width="4.235" '
        'd="M 141.457',
        'data-side="right" data-length-cm="9" data-diameter-mm="7.7" stroke-width="4.235" '
        'd="M 141.457'.replace(f'{attr}="{current}"', f'{attr}="{value}"'),
    )
    lines = problem_lines(path)
    if ok:
        assert lines == []
    else:
        bounds, unit = ("3 to 27", "cm") if attr == "data-length-cm" else ("2.57 to 23.1", "mm")
        nominal = "9" if unit == "cm" else "7.7"
        assert lines == [
            f"{path}:{line_of(path, 'right-SFA-M')}: path[data-segment=SFA-M][data-side=right]."
            f"{attr}: {value!r} must be a number from {bounds} {unit} for SFA-M (within a factor "
            f"of 3 of its nominal {nominal} {unit}) (check the unit: {attr} is in {unit})"
        ]


def test_join_tolerance_boundary(tmp_path: Path) -> None:
    # right/SFA-M starts at (141.457, 287.321), the end of right/SFA-P: move only its first point.
    assert JOIN_TOLERANCE == 1.5
    for dy, ok in ((1.49, True), (1.5, True), (1.52, False)):
        path = variant(tmp_path, 'd="M 141.457 287.321', f'd="M 141.457 {287.321 + dy:.3f}')
        lines = problem_lines(path)
        assert (lines == []) is ok, (dy, lines)


# --------------------------------------------------------------------------- hostile templates


@pytest.mark.parametrize("fixture", ["billion-laughs.svg", "external-entity.svg"])
def test_entities_are_refused_before_anything_is_expanded_or_read(fixture: str) -> None:
    path = FIXTURES / fixture
    with recorded() as events, pytest.raises(TemplateError) as err:
        load_template(path)
    assert err.value.lines() == [
        f"{path}:2: <!DOCTYPE>: DTDs, entity declarations and external entities are refused "
        "(remove the <!DOCTYPE ...> declaration and any entities)"
    ]
    assert not any("passwd" in args for _, args in events)
    assert not any(event != "open" for event, _ in events)


def test_external_http_entity_is_never_fetched(tmp_path: Path) -> None:
    with socket.socket() as server:
        server.bind(("127.0.0.1", 0))
        server.listen(1)
        server.settimeout(0.3)
        port = server.getsockname()[1]
        path = tmp_path / "http-entity.svg"
        path.write_text(
            '<?xml version="1.0"?>\n'
            f'<!DOCTYPE svg [<!ENTITY x SYSTEM "http://127.0.0.1:{port}/x">]>\n'
            '<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 400 1000">&x;</svg>\n',
            encoding="utf-8",
        )
        with recorded() as events, pytest.raises(TemplateError):
            load_template(path)
        with pytest.raises(TimeoutError):
            server.accept()
    assert not any(event.startswith(("socket", "urllib")) for event, _ in events)


def test_external_image_references_are_refused_and_not_read() -> None:
    path = FIXTURES / "image-href.svg"
    with recorded() as events, pytest.raises(TemplateError) as err:
        load_template(path)
    hint = "(embed the artwork as paths; only '#id' references are allowed)"
    assert err.value.lines() == [
        f"{path}:4: image.href: 'file:///etc/passwd' external references are refused {hint}",
        f"{path}:5: image.href: 'http://127.0.0.1:9/logo.png' external references are refused "
        f"{hint}",
        f"{path}: vessels: no vessel centre lines found (0 of 45) (name each centre line with "
        'data-segment="..." and data-side="right|left")',
        f'{path}: silhouette: no body outline found (draw the outline as paths inside <g id="silhouette">)',
    ]
    assert not any("passwd" in args or event != "open" for event, args in events)


def test_scripts_and_embedded_content_are_refused() -> None:
    path = FIXTURES / "script.svg"
    lines = problem_lines(path)
    assert lines[:3] == [
        f"{path}:2: svg.onload: 'alert(1)' event attributes are refused (remove it: the template "
        "is read as data only)",
        f"{path}:3: script: <script> is refused in a map template (remove it: the template is "
        "read as data only)",
        f"{path}:4: foreignObject: <foreignObject> is refused in a map template (remove it: the "
        "template is read as data only)",
    ]


@pytest.mark.parametrize(
    ("old", "new", "field", "rule"),
    [
        (
            '<g id="silhouette" fill="none"',
            '<g id="silhouette" fill="url(http://x/p.svg#a)"',
            "g[id=silhouette].fill",
            "external references are refused",
        ),
        (
            '<g id="silhouette" fill="none"',
            '<g id="silhouette" style="fill:url(data:x)"',
            "g[id=silhouette].style",
            "external references are refused",
        ),
        (
            "<title>",
            '<style>@import "http://x/a.css";</style><title>',
            "style",
            "external stylesheets are refused",
        ),
        (
            "<svg ",
            '<?xml-stylesheet href="http://x/a.css"?><svg ',
            "<?xml-stylesheet?>",
            "external stylesheets are refused",
        ),
        (
            "<title>",
            '<a href="http://x/">x</a><title>',
            "a.href",
            "external references are refused",
        ),
        ("<title>", '<svg viewBox="0 0 1 1"/><title>', "svg", "nested <svg> elements are not read"),
        (
            "<title>",
            '<set attributeName="href" to="http://x/"/><title>',
            "set",
            "<set> is refused in a map template",
        ),
        (
            '<g id="vessels"',
            '<g id="vessels" onclick="x()"',
            "g[id=vessels].onclick",
            "event attributes are refused",
        ),
    ],
)
def test_hostile_additions_to_a_valid_template(
    tmp_path: Path, old: str, new: str, field: str, rule: str
) -> None:
    path = variant(tmp_path, old, new)
    problems = check_template(path)
    assert [p.field for p in problems] == [field]
    assert problems[0].rule == rule
    assert problems[0].line == line_of(path, new.split(">")[0].split("<")[-1][:20] or new)


def test_local_references_are_allowed(tmp_path: Path) -> None:
    path = variant(
        tmp_path,
        "<title>",
        '<defs><linearGradient id="g"/></defs><use href="#body-outline"/>'
        '<rect fill="url(#g)" width="1" height="1"/><title>',
    )
    assert problem_lines(path) == []


def test_oversized_file_is_refused_unread(tmp_path: Path) -> None:
    path = tmp_path / "huge.svg"
    with open(path, "wb") as fh:
        fh.truncate(MAX_TEMPLATE_BYTES + 1)
    with recorded() as events:
        lines = problem_lines(path)
    assert lines == [
        f"{path}: (file): {MAX_TEMPLATE_BYTES + 1} bytes is larger than the {MAX_TEMPLATE_BYTES} "
        "bytes a map template may have (simplify the artwork or remove embedded content)"
    ]
    assert not any("huge.svg" in args for _, args in events)


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("<svg", "{f}:1: xml: is not well-formed XML: unclosed token"),
        (
            '<svg xmlns="http://www.w3.org/2000/svg">\n<g>\n</svg>',
            "{f}:3: xml: is not well-formed XML: mismatched tag",
        ),
        (
            "<svg viewBox='0 0 400 1000'/>",
            "{f}:1: <svg>: the root element must be <svg> in the SVG namespace (use <svg "
            'xmlns="http://www.w3.org/2000/svg" viewBox="...">)',
        ),
        (
            "<svg xmlns='http://www.w3.org/2000/svg'>&foo;</svg>",
            "{f}:1: xml: is not well-formed XML: undefined entity",
        ),
    ],
)
def test_unreadable_xml(tmp_path: Path, text: str, expected: str) -> None:
    path = tmp_path / "bad.svg"
    path.write_text(text, encoding="utf-8")
    assert expected.format(f=path) in problem_lines(path)


@pytest.mark.parametrize(
    ("viewbox", "ok"),
    [
        ("0 0 400 1000", True),
        ("0,0,1,1", True),
        ("-100000 0 100000 100000", True),
        ("0 0 0 1000", False),
        ("0 0 400 -1000", False),
        ("0 0 100001 1000", False),
        ("0 0 400", False),
        ("a b c d", False),
        ("0 0 nan 1000", False),
    ],
)
def test_viewbox_must_be_sane(tmp_path: Path, viewbox: str, ok: bool) -> None:
    path = variant(tmp_path, 'viewBox="0 0 400 1000"', f'viewBox="{viewbox}"')
    fields = [p.field for p in check_template(path)]
    if ok:
        assert "svg.viewBox" not in fields
    else:
        assert fields[0] == "svg.viewBox"


def test_url_split_across_parser_buffers_is_still_seen(tmp_path: Path) -> None:
    # The SAX reader feeds expat 65 516-byte blocks and text arrives in pieces: put "url(" across
    # the first block boundary; the style text is checked whole.
    text = SHIPPED.read_text(encoding="utf-8")
    head = text[: text.index("<title>")] + "<style>/*"
    pad = 65_516 - len(head.encode("utf-8")) - len("*/ rect { fill: ur")
    style = "<style>/*" + "x" * pad + "*/ rect { fill: url(http://x/) }</style>"
    path = variant(tmp_path, "<title>", style + "<title>")
    data = path.read_bytes()
    assert data[65_514:65_518] == b"url("
    assert [p.rule for p in check_template(path)] == ["external references are refused"]


def test_missing_silhouette(tmp_path: Path) -> None:
    row = next(r for r in SHIPPED.read_text(encoding="utf-8").splitlines() if "body-outline" in r)
    path = variant(tmp_path, row, "")
    assert problem_lines(path) == [
        f'{path}: silhouette: no body outline found (draw the outline as paths inside <g id="silhouette">)'
    ]


def test_missing_viewbox_and_missing_file(tmp_path: Path) -> None:
    path = variant(tmp_path, 'viewBox="0 0 400 1000" ', "")
    assert [p.field for p in check_template(path)] == ["svg.viewBox"]
    gone = tmp_path / "nowhere.svg"
    assert problem_lines(gone) == [
        f"{gone}: (file): cannot be read: No such file or directory (check the template's path; "
        "the shipped maps are bilateral, infrainguinal-left, infrainguinal-right)"
    ]
    assert problem_lines(tmp_path) == [f"{tmp_path}: (file): is not a file"]


def test_vessel_hidden_in_defs_is_reported(tmp_path: Path) -> None:
    row = next(r for r in SHIPPED.read_text(encoding="utf-8").splitlines() if "right-PLA" in r)
    path = variant(tmp_path, row, f"<defs>{row.strip()}</defs>")
    assert problem_lines(path) == [
        f"{path}:{line_of(path, 'right-PLA')}: path[data-segment=PLA][data-side=right]: is inside "
        "<defs> and never drawn (move it into the vessels layer)",
        f'{path}: vessels.right/PLA: is missing (add a <path data-segment="PLA" data-side="right">'
        " drawn from its parent's distal end)",
    ]


# --------------------------------------------------------------------------- shipped one-leg maps

LEG_SEGMENTS = [
    s for s in anatomy.SEGMENT_IDS if s not in {"AO", "CIA", "IIA", "EIA"}
]  # the CFA and everything downstream


def _tool(name: str) -> Any:
    """Import a generator script from tools/ (not part of the package)."""
    path = Path(__file__).parent.parent / "tools" / f"{name}.py"
    spec = importlib.util.spec_from_file_location(name, path)
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module  # dataclasses look their module up while the class is built
    spec.loader.exec_module(module)
    return module


def test_shipped_template_names() -> None:
    assert shipped_templates() == ("bilateral", "infrainguinal-left", "infrainguinal-right")
    assert is_shipped("bilateral") and not is_shipped(Path("bilateral"))
    assert not is_shipped("bilateral.svg")


@pytest.mark.parametrize("name", ["bilateral", "infrainguinal-left", "infrainguinal-right"])
def test_every_shipped_template_passes_the_checks(name: str) -> None:
    assert check_template(name) == []
    template = load_template(name)
    assert template.source == f"{name}.svg" and template.name == name
    assert template.title.startswith("limbchart ")


@pytest.mark.parametrize("side", ["right", "left"])
def test_one_leg_map_covers_one_leg_from_the_cfa(side: str) -> None:
    template = load_template(f"infrainguinal-{side}")
    assert template.coverage == f"{side}-infrainguinal" and template.partial
    assert template.sides == (side,)
    assert list(template.vessels) == [anatomy.vessel_key(side, s) for s in LEG_SEGMENTS]
    assert template.covers(side, "CFA") and not template.covers(side, "EIA")
    assert not template.covers(None, "AO")
    other = "left" if side == "right" else "right"
    assert not template.covers(other, "CFA")
    assert summary_line(template) == (
        f"ok: 19 vessels ({side}-infrainguinal: {side} leg from the CFA down), joins within "
        "1.5 units, silhouette 1 path, nothing external referenced"
    )


@pytest.mark.parametrize("side", ["right", "left"])
def test_one_leg_map_is_larger_than_the_bilateral_and_drawn_to_one_scale(side: str) -> None:
    leg, both = load_template(f"infrainguinal-{side}"), load_template()
    scales = {round(v.units_per_cm, 2) for v in leg.vessels.values()}
    assert scales == {10.4}  # the generator's scale: the trunk's arc per nominal cm
    # The groin-to-foot height fills most of the page: taller than the same stretch on the
    # bilateral map (8.5 units per cm) relative to each viewBox height.
    assert 10.4 / leg.viewbox[3] > 8.5 / both.viewbox[3]
    for vessel in leg.vessels.values():
        parent = anatomy.SEGMENTS[vessel.segment].parent
        if parent in {"EIA", None}:
            continue
        assert math.dist(vessel.geometry.start, leg.vessel(side, parent).geometry.end) < 1e-3


@pytest.mark.parametrize("side", ["right", "left"])
def test_one_leg_map_anatomy_lateral_to_medial(side: str) -> None:
    # clinical-values.md, "Anatomy for the map": profunda lateral; below the knee the anterior
    # tibial most lateral, the posterior tibial most medial, the peroneal between (recalled).
    leg = load_template(f"infrainguinal-{side}")
    lateral = -1 if side == "right" else 1

    def stem(name: str) -> list[Vessel]:
        return [leg.vessel(side, f"{name}-{third}") for third in "PMD"]

    for level in range(620, 820, 10):
        at, per, pt = (x_at_y(stem(n), level) for n in ("ATA", "PER", "PTA"))
        assert lateral * at > lateral * per > lateral * pt, level
    pfa = leg.vessel(side, "PFA").geometry
    for f in (0.25, 0.5, 1.0):
        x, y = pfa.point_at(f * pfa.length())
        assert lateral * x > lateral * x_at_y([leg.vessel(side, "SFA-P")], y)


@pytest.mark.parametrize("side", ["right", "left"])
def test_one_leg_map_vessels_sit_inside_its_outline(side: str) -> None:
    leg = load_template(f"infrainguinal-{side}")
    outline = PathGeometry.from_d(leg.silhouette[0])
    polygon = outline.polyline(0, outline.length(), 1.0)
    for vessel in leg.vessels.values():
        for p in vessel.geometry.polyline(0, vessel.geometry.length(), 2.0):
            assert inside(p, polygon), (vessel.key, p)


def test_left_leg_is_the_mirror_of_the_right() -> None:
    right, left = load_template("infrainguinal-right"), load_template("infrainguinal-left")
    width = right.viewbox[2]
    for segment in LEG_SEGMENTS:
        r, lg = right.vessel("right", segment).geometry, left.vessel("left", segment).geometry
        for f in (0.0, 0.5, 1.0):
            rx, ry = r.point_at(f * r.length())
            assert (width - rx, ry) == pytest.approx(lg.point_at(f * lg.length()), abs=2e-3)


def test_shipped_files_and_fixtures_match_their_generators() -> None:
    leg = _tool("make_leg_template")
    for side in ("right", "left"):
        shipped = resources.files("diagram.templates_svg") / f"infrainguinal-{side}.svg"
        assert shipped.read_text(encoding="utf-8") == leg.template_svg(side)
    for name, text in leg.fixtures().items():
        assert (FIXTURES / name).read_text(encoding="utf-8") == text, name
    assert SHIPPED.read_text(encoding="utf-8") == _tool("make_bilateral_template").template_svg()


# --------------------------------------------------------------------------- declared coverage


@pytest.mark.parametrize(
    ("declared", "normal"),
    [
        ("bilateral", "bilateral"),
        ("AO", "bilateral"),
        (" Right-Infrainguinal ", "right-infrainguinal"),
        ("right:CFA", "right-infrainguinal"),
        ("rt:common femoral", None),  # tokens are split at spaces: use ids or one-word aliases
        ("R:cfa, L:CFA", "bilateral-infrainguinal"),
        ("left:CFA right:CFA", "bilateral-infrainguinal"),
        ("right:POP-BK", "right:POP-BK"),
        ("right:TPT right:ATA-P right:TPT", "right:TPT right:ATA-P"),
        ("right:popliteal bk", None),
        ("CFA", None),
        ("right:AO", None),
        ("up:CFA", None),
        ("", None),
    ],
)
def test_coverage_grammar(declared: str, normal: str | None) -> None:
    if normal is None:
        with pytest.raises(ValueError):
            normalise_coverage(declared)
    else:
        assert normalise_coverage(declared) == normal


def test_covered_keys() -> None:
    assert len(covered_keys("bilateral")) == 45
    assert len(covered_keys("bilateral-infrainguinal")) == 38
    assert covered_keys("right:POP-BK") == {
        anatomy.vessel_key("right", s)
        for s in [
            "POP-BK",
            "TPT",
            "PTA-P",
            "PTA-M",
            "PTA-D",
            "PLA",
            "PER-P",
            "PER-M",
            "PER-D",
            "ATA-P",
            "ATA-M",
            "ATA-D",
            "DPA",
        ]
    }


LEG = FIXTURES / "leg-swapped-side.svg"  # any one-leg fixture: line numbers follow the generator


@pytest.mark.parametrize(
    ("fixture", "expected"),
    [
        (
            "leg-missing-segment.svg",
            [
                '{f}: vessels.right/PER-M: is missing (add a <path data-segment="PER-M" '
                'data-side="right"> drawn from its parent\'s distal end)'
            ],
        ),
        (
            "leg-gap.svg",
            [
                "{f}:28: vessels.right/ATA-M: gap=3.00 must start within 1.5 units of the distal "
                "end of right/ATA-P (move its first point onto the end of right/ATA-P)"
            ],
        ),
        (
            "leg-swapped-side.svg",
            [
                "{f}:20: vessels.left/PFA: x=189.3 must lie on the viewer's right of left/SFA-P "
                "(x=212.7): PFA is lateral to SFA-P, and a left leg seen from the front has its "
                "lateral side on the viewer's right (the patient's right is on the viewer's "
                "left; check data-side)",
                "{f}:28: vessels.left/ATA-M: x=165.3 must lie on the viewer's right of "
                "left/PER-M (x=199.1): ATA-M is lateral to PER-M, and a left leg seen from the "
                "front has its lateral side on the viewer's right (the patient's right is on "
                "the viewer's left; check data-side)",
                "{f}:34: vessels.left/PER-M: x=199.1 must lie on the viewer's right of "
                "left/PTA-M (x=239.5): PER-M is lateral to PTA-M, and a left leg seen from the "
                "front has its lateral side on the viewer's right (the patient's right is on "
                "the viewer's left; check data-side)",
            ],
        ),
        (
            "leg-undeclared.svg",
            [
                "{f}:2: svg.data-coverage: is missing, and the map draws only right leg from the "
                "CFA down (19 of 45 vessels) (declare a partial map: <svg "
                'data-coverage="right-infrainguinal" ...>)'
            ],
        ),
    ],
)
def test_broken_one_leg_fixtures(fixture: str, expected: list[str]) -> None:
    path = FIXTURES / fixture
    assert problem_lines(path) == [e.format(f=path) for e in expected]


def test_vessels_outside_the_declared_coverage_are_reported() -> None:
    path = FIXTURES / "leg-outside-coverage.svg"
    lines = problem_lines(path)
    outside = ["CFA", "PFA", "SFA-P", "SFA-M", "SFA-D", "POP-AK"]
    assert lines == [
        f"{path}:{19 + i}: path[data-segment={seg}][data-side=right]: right/{seg} lies outside "
        "the declared coverage (right:POP-BK) (remove it, or widen data-coverage on the root "
        "<svg>)"
        for i, seg in enumerate(outside)
    ]


def test_a_map_of_two_subtrees_below_the_knee_passes() -> None:
    template = load_template(FIXTURES / "leg-below-knee.svg")
    assert template.coverage == "right:TPT right:ATA-P"
    assert len(template.vessels) == 12 and template.partial
    assert summary_line(template).startswith(
        "ok: 12 vessels (right:TPT right:ATA-P: right leg from the TPT down; right leg from the "
        "ATA-P down)"
    )


def test_unreadable_coverage_is_reported_with_a_hint(tmp_path: Path) -> None:
    path = variant(
        tmp_path,
        'viewBox="0 0 400 1000"',
        'viewBox="0 0 400 1000" data-coverage="rigt-infrainguinal"',
    )
    assert problem_lines(path) == [
        f"{path}:2: svg.data-coverage: 'rigt-infrainguinal' must be bilateral, "
        "bilateral-infrainguinal, right-infrainguinal, left-infrainguinal or a list of "
        "SIDE:SEGMENT subtrees ('rigt-infrainguinal' is not a named coverage nor SIDE:SEGMENT) "
        "(did you mean right-infrainguinal?)"
    ]


def _bilateral_without_pelvis(tmp_path: Path, swap: bool = False) -> Path:
    """Return the shipped map with the aorta and iliacs removed, declared infrainguinal."""
    rows = []
    for row in SHIPPED.read_text(encoding="utf-8").splitlines():
        if re.search(r'data-segment="(AO|CIA|IIA|EIA)"', row):
            continue
        if swap and "data-side=" in row:
            row = (
                row.replace('data-side="right"', "SIDE")
                .replace('data-side="left"', 'data-side="right"')
                .replace("SIDE", 'data-side="left"')
            )
        rows.append(row)
    text = "\n".join(rows).replace("<svg ", '<svg data-coverage="bilateral-infrainguinal" ', 1)
    path = tmp_path / "both-legs.svg"
    path.write_text(text, encoding="utf-8")
    return path


def test_both_legs_without_the_pelvis(tmp_path: Path) -> None:
    path = _bilateral_without_pelvis(tmp_path)
    template = load_template(path)
    assert template.sides == ("right", "left") and len(template.vessels) == 38
    swapped = _bilateral_without_pelvis(tmp_path, swap=True)
    lines = problem_lines(swapped)
    named = sorted(re.findall(r": vessels\.(\w+/[\w-]+): ", "\n".join(lines)))
    assert named == sorted(template.vessels)  # every vessel of both legs, each once
    assert all("midway between the legs" in line for line in lines)
    # the CFAs start at x 140.841 and 259.159 on the shipped map: midway is 200
    assert lines[0] == (
        f"{swapped}:21: vessels.left/CFA: x=136.1 must be > 200.0 (midway between the legs): a "
        "left-side vessel lies on the viewer's right (the patient's right is on the viewer's "
        "left; check data-side)"
    )


# --------------------------------------------------------------------------- more hostile files


@pytest.mark.parametrize(
    ("name", "text"),
    [
        (
            "parameter-entity.svg",
            '<?xml version="1.0"?>\n<!DOCTYPE svg [<!ENTITY % p SYSTEM "file:///etc/passwd"> %p;]>\n'
            '<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 400 1000"/>\n',
        ),
        (
            "external-dtd.svg",
            '<?xml version="1.0"?>\n<!DOCTYPE svg SYSTEM "file:///etc/passwd">\n'
            '<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 400 1000"/>\n',
        ),
        (
            "public-dtd.svg",
            '<?xml version="1.0"?>\n<!DOCTYPE svg PUBLIC "-//W3C//DTD SVG 1.1//EN" '
            '"http://127.0.0.1:9/svg11.dtd">\n'
            '<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 400 1000"/>\n',
        ),
    ],
)
def test_every_dtd_is_refused_and_nothing_is_read(tmp_path: Path, name: str, text: str) -> None:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    with recorded() as events:
        lines = problem_lines(path)
    assert lines == [
        f"{path}:2: <!DOCTYPE>: DTDs, entity declarations and external entities are refused "
        "(remove the <!DOCTYPE ...> declaration and any entities)"
    ]
    assert [args for _, args in events if "passwd" in args or "svg11" in args] == []
    assert {event for event, _ in events} <= {"open"}


@pytest.mark.parametrize(
    ("old", "new", "field"),
    [
        (
            "<title>",
            '<image xlink:href="file:///etc/passwd" width="1" height="1"/><title>',
            "image.href",
        ),
        ("<title>", '<image href="data:image/png;base64,AAAA"/><title>', "image.href"),
        ("<title>", '<use href="file:///tmp/art.svg#leg"/><title>', "use.href"),
        (
            "<title>",
            '<xi:include xmlns:xi="http://www.w3.org/2001/XInclude" href="file:///etc/passwd"/>'
            "<title>",
            "include.href",
        ),
        (
            '<g id="silhouette" fill="none"',
            '<g id="silhouette" style="fill: url( file:///etc/passwd )"',
            "g[id=silhouette].style",
        ),
        (
            '<g id="silhouette" fill="none"',
            '<g id="silhouette" filter="url(\'https://127.0.0.1:9/f.svg#x\')"',
            "g[id=silhouette].filter",
        ),
    ],
)
def test_external_and_file_references_are_refused_unread(
    tmp_path: Path, old: str, new: str, field: str
) -> None:
    path = variant(tmp_path, old, new)
    if "xlink:" in new:
        text = path.read_text(encoding="utf-8").replace(
            "<svg ", '<svg xmlns:xlink="http://www.w3.org/1999/xlink" ', 1
        )
        path.write_text(text, encoding="utf-8")
    with recorded() as events:
        problems = check_template(path)
    assert [(p.field, p.rule) for p in problems] == [(field, "external references are refused")]
    assert not any(event != "open" or "passwd" in args for event, args in events)


@pytest.mark.parametrize(
    ("old", "new", "field", "rule"),
    [
        (
            'width="400" height="1000"',
            'width="1e9" height="1000"',
            "svg.width",
            "must be a length above 0 and at most 100000 (number and unit)",
        ),
        (
            'width="400" height="1000"',
            'width="400" height="200000mm"',
            "svg.height",
            "must be a length above 0 and at most 100000 (number and unit)",
        ),
        (
            "<title>",
            '<iframe src="http://127.0.0.1:9/"/><title>',
            "iframe",
            "<iframe> is refused in a map template",
        ),
        (
            "<title>",
            '<animate attributeName="d" to="M 0 0"/><title>',
            "animate",
            "<animate> is refused in a map template",
        ),
    ],
)
def test_absurd_sizes_and_active_content(
    tmp_path: Path, old: str, new: str, field: str, rule: str
) -> None:
    path = variant(tmp_path, old, new)
    problems = check_template(path)
    assert [(p.field, p.rule) for p in problems] == [(field, rule)]


@pytest.mark.parametrize("ok", [True, False])
def test_root_size_boundary(tmp_path: Path, ok: bool) -> None:
    size = "100000" if ok else "100000.5"
    path = variant(tmp_path, 'width="400"', f'width="{size}px"')
    assert (problem_lines(path) == []) is ok


def test_too_many_elements_stop_the_reader(tmp_path: Path) -> None:
    path = variant(tmp_path, "<title>", "<g/>" * (MAX_ELEMENTS + 1) + "<title>")
    problems = check_template(path)
    assert [(p.field, p.rule) for p in problems] == [
        ("g", f"more than {MAX_ELEMENTS} elements are refused")
    ]


def test_deep_nesting_is_refused(tmp_path: Path) -> None:
    deep = "<g>" * MAX_DEPTH + "</g>" * MAX_DEPTH
    path = variant(tmp_path, "<title>", deep + "<title>")
    assert [(p.field, p.rule) for p in check_template(path)] == [
        ("g", f"nesting deeper than {MAX_DEPTH} levels is refused")
    ]
    ok = variant(
        tmp_path,
        "<title>",
        "<g>" * (MAX_DEPTH - 2) + "</g>" * (MAX_DEPTH - 2) + "<title>",
        "ok.svg",
    )
    assert check_template(ok) == []


def test_overlong_path_data_is_refused(tmp_path: Path) -> None:
    row = next(r for r in SHIPPED.read_text(encoding="utf-8").splitlines() if "body-outline" in r)
    long = row.replace(' Z"/>', " L 200 500" * (MAX_PATH_CHARS // 10) + ' Z"/>')
    path = variant(tmp_path, row, long)
    problems = check_template(path)
    assert problems[0].field == "path[id=body-outline]"
    assert problems[0].rule == f"path data longer than {MAX_PATH_CHARS} characters is refused"


def test_a_vessel_outside_the_viewbox_is_reported(tmp_path: Path) -> None:
    # The plantar arteries reach y = 906.0 on the shipped map; the tolerance is JOIN_TOLERANCE.
    path = variant(tmp_path, 'viewBox="0 0 400 1000"', 'viewBox="0 0 400 904.4"')
    lines = problem_lines(path)
    assert lines == [
        f"{path}:{line_of(path, f'{side}-PLA')}: vessels.{side}/PLA: bounds=({x0} 855.3 {x1} "
        "906.0) must lie inside the viewBox (0 0 400 904.4) (move it onto the map or widen the "
        "viewBox)"
        for side, x0, x1 in (("right", "159.5", "163.5"), ("left", "236.5", "240.5"))
    ]
    inside_tolerance = variant(
        tmp_path, 'viewBox="0 0 400 1000"', 'viewBox="0 0 400 904.6"', "ok.svg"
    )
    assert problem_lines(inside_tolerance) == []


# --------------------------------------------------------------------------- the commands


def run(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    from diagram.cli.main import main

    with pytest.raises(SystemExit) as done:
        main(args)
    out = capsys.readouterr()
    return int(done.value.code or 0), out.out, out.err


@pytest.mark.parametrize("name", ["bilateral", str(SHIPPED), "infrainguinal-right"])
def test_template_check_ok(name: str, capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = run(["template", "check", name], capsys)
    assert (code, err) == (0, "")
    assert out.startswith("ok: ") and out.count("\n") == 1
    assert "joins within 1.5 units" in out


def test_template_check_reports_each_problem_and_exits_2(
    capsys: pytest.CaptureFixture[str],
) -> None:
    path = FIXTURES / "swapped-sides.svg"
    code, out, err = run(["template", "check", str(path)], capsys)
    assert (code, out) == (2, "")
    assert err.splitlines() == problem_lines(path)


def test_template_check_of_a_hostile_file(capsys: pytest.CaptureFixture[str]) -> None:
    path = FIXTURES / "billion-laughs.svg"
    code, out, err = run(["template", "check", str(path)], capsys)
    assert (code, out) == (2, "")
    assert err == (
        f"{path}:2: <!DOCTYPE>: DTDs, entity declarations and external entities are refused "
        "(remove the <!DOCTYPE ...> declaration and any entities)\n"
    )


def test_template_check_of_a_missing_file_suggests_a_shipped_name(
    capsys: pytest.CaptureFixture[str],
) -> None:
    code, _, err = run(["template", "check", "infrainguinal-rigth"], capsys)
    assert code == 2
    assert err == (
        "infrainguinal-rigth: (file): cannot be read: No such file or directory (did you mean "
        "the shipped infrainguinal-right?)\n"
    )


def test_template_list(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = run(["template", "list"], capsys)
    assert (code, err) == (0, "")
    assert out.splitlines() == [
        "bilateral            45 vessels  aorta to both feet  (limbchart bilateral leg-artery map)",
        "infrainguinal-left   19 vessels  left leg from the CFA down  (limbchart left leg map, "
        "groin to foot)",
        "infrainguinal-right  19 vessels  right leg from the CFA down  (limbchart right leg map, "
        "groin to foot)",
    ]


def test_design_commands_keep_the_command_line_light() -> None:
    code = (
        "import sys, diagram.cli.design; "
        "print(sorted(m for m in ('defusedxml', 'cairosvg', 'PIL', 'svgwrite', 'yaml') "
        "if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


def test_a_template_saved_by_a_vector_editor(tmp_path: Path) -> None:
    # What a general editor keeps and adds: its namespaces, a named view, RDF metadata, layers
    # named by inkscape:label with generated ids, vessels renamed to generated ids and named by
    # their label, a layer moved by a transform its paths were not re-written for.
    text = (resources.files("diagram.templates_svg") / "infrainguinal-right.svg").read_text(
        encoding="utf-8"
    )
    text = text.replace(
        "<svg ",
        '<svg xmlns:inkscape="http://www.inkscape.org/namespaces/inkscape" '
        'xmlns:sodipodi="http://sodipodi.sourceforge.net/DTD/sodipodi-0.dtd" '
        'xmlns:rdf="http://www.w3.org/1999/02/22-rdf-syntax-ns#" '
        'xmlns:dc="http://purl.org/dc/elements/1.1/" '
        'xmlns:cc="http://creativecommons.org/ns#" sodipodi:docname="leg.svg" ',
        1,
    )
    text = text.replace(
        "  <title>",
        '  <sodipodi:namedview id="namedview7" pagecolor="#ffffff" inkscape:zoom="0.8"/>\n'
        '  <metadata id="metadata5"><rdf:RDF><cc:Work rdf:about=""><dc:format>image/svg+xml'
        '</dc:format><dc:type rdf:resource="http://purl.org/dc/dcmitype/StillImage"/>'
        "</cc:Work></rdf:RDF></metadata>\n  <title>",
        1,
    )
    text = text.replace(
        '<g id="silhouette"',
        '<g inkscape:groupmode="layer" id="layer1" inkscape:label="Silhouette" transform="translate(0 0)"',
        1,
    )
    text = text.replace(
        '<g id="vessels"',
        '<g inkscape:groupmode="layer" id="layer2" inkscape:label="Vessels" transform="translate(12.5 -3)"',
        1,
    )
    serial = itertools.count(1021)
    text = re.sub(
        r'id="right-([A-Z-]+)" data-segment="[A-Z-]+" data-side="right"',
        lambda m: f'id="path{next(serial)}" inkscape:label="Right {m.group(1)}"',
        text,
    )
    path = tmp_path / "edited.svg"
    path.write_text(text, encoding="utf-8")
    edited, shipped = load_template(path), load_template("infrainguinal-right")
    assert edited.coverage == "right-infrainguinal" and list(edited.vessels) == list(
        shipped.vessels
    )
    for key, vessel in shipped.vessels.items():
        x, y = vessel.geometry.start
        assert edited.vessels[key].geometry.start == pytest.approx((x + 12.5, y - 3), abs=1e-9)


def test_a_shipped_name_given_as_a_path(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    assert load_template(Path("infrainguinal-left")).coverage == "left-infrainguinal"
    monkeypatch.chdir(tmp_path)
    (tmp_path / "infrainguinal-left").write_bytes(SHIPPED.read_bytes())
    assert load_template(Path("infrainguinal-left")).coverage == "bilateral"  # the file wins
    assert load_template("infrainguinal-left").coverage == "left-infrainguinal"  # the name wins
