"""Check a band style for the two ways a map is misread: greyscale print and colour vision.

Greyscale: every band's swatch is rendered as the map renders it (``render.render_svg`` ➜
cairosvg PNG at ``DPI``), turned to grey with ITU-R BT.601 luma (Pillow mode ``L``), and measured
inside a small inset: mean grey, standard deviation, and edge density (the share of neighbouring
pixel pairs that differ by more than ``EDGE_STEP`` grey levels). Two bands are too alike when
their means differ by less than ``MIN_GREY_STEP`` *and* their textures by less than
``MIN_SD_STEP`` and ``MIN_EDGE_STEP``.

Colour vision: each pair of seen colours (the tint, or the ink of a solid band) is simulated for
protanopia, deuteranopia and tritanopia with the matrices of Machado, Oliveira & Fernandes 2009
(IEEE TVCG 15(6):1291-1298, severity 1.0, applied in linear sRGB) and compared in CIE L*a*b*
(D65, CIE 15:2004) with the CIE76 difference ΔE*ab. A pair that normal vision separates (ΔE*ab at
least ``MIN_DELTA_E``) and a deficiency brings under ``MIN_DELTA_E`` is merged.

The thresholds are this project's design margins, not published limits; ``threshold_lines``
states them, and the command prints them with the measurements.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType

from diagram.drawing.style import BandStyle, Hatch, Style
from diagram.errors import DiagramError, InputError, Problem

DPI = 150.0  # the PNG resolution the draw command uses by default
SWATCH_PT = (48.0, 24.0)
INSET_PT = 2.0  # measured inside, away from the anti-aliased edge
MIN_GREY_STEP = 16.0  # of 255
MIN_SD_STEP = 8.0  # grey levels
MIN_EDGE_STEP = 0.08  # share of neighbour pairs
EDGE_STEP = 24  # grey levels between neighbours that make an edge (about a tenth of the range)
MIN_DELTA_E = 10.0  # CIE76 ΔE*ab; a just-noticeable difference is about 2.3 (Sharma 2003)

Matrix = tuple[tuple[float, float, float], tuple[float, float, float], tuple[float, float, float]]
# Machado, Oliveira & Fernandes 2009, Table (severity 1.0), for linear RGB.
CVD_MATRICES: Mapping[str, Matrix] = MappingProxyType(
    {
        "protanopia": (
            (0.152286, 1.052583, -0.204868),
            (0.114503, 0.786281, 0.099216),
            (-0.003882, -0.048116, 1.051998),
        ),
        "deuteranopia": (
            (0.367322, 0.860646, -0.227968),
            (0.280085, 0.672501, 0.047413),
            (-0.011820, 0.042940, 0.968881),
        ),
        "tritanopia": (
            (1.255528, -0.076749, -0.178779),
            (-0.078411, 0.930809, 0.147602),
            (0.004733, 0.691367, 0.303900),
        ),
    }
)
# IEC 61966-2-1 (sRGB): linear RGB to CIE XYZ, D65.
_SRGB_TO_XYZ: Matrix = (
    (0.4124, 0.3576, 0.1805),
    (0.2126, 0.7152, 0.0722),
    (0.0193, 0.1192, 0.9505),
)
_WHITE = tuple(sum(row) for row in _SRGB_TO_XYZ)  # the XYZ of sRGB white: L* 100, a* b* 0

Lab = tuple[float, float, float]
RGB = tuple[float, float, float]


class StyleCheckError(InputError):
    """A style whose bands a greyscale print or a colour-vision deficiency would merge."""


@dataclass(frozen=True)
class Swatch:
    """One band's swatch measured in greyscale (0 black ... 255 white)."""

    band: str
    label: str
    grey_mean: float
    grey_sd: float
    edge_density: float


@dataclass(frozen=True)
class StyleReport:
    """What the check measured and what it found."""

    swatches: tuple[Swatch, ...]
    problems: tuple[Problem, ...]


# --------------------------------------------------------------------------- colour science


def linear_rgb(colour: str) -> RGB:
    """Return the linear sRGB of ``#rrggbb`` (IEC 61966-2-1 transfer function)."""

    def channel(i: int) -> float:
        c = int(colour[i : i + 2], 16) / 255
        return c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4

    return (channel(1), channel(3), channel(5))


def _apply(m: Matrix, v: RGB) -> RGB:
    return (
        m[0][0] * v[0] + m[0][1] * v[1] + m[0][2] * v[2],
        m[1][0] * v[0] + m[1][1] * v[1] + m[1][2] * v[2],
        m[2][0] * v[0] + m[2][1] * v[1] + m[2][2] * v[2],
    )


def simulate(rgb: RGB, deficiency: str) -> RGB:
    """Return linear RGB as seen with ``deficiency`` (clipped to the displayable range)."""
    r, g, b = _apply(CVD_MATRICES[deficiency], rgb)
    return (min(max(r, 0.0), 1.0), min(max(g, 0.0), 1.0), min(max(b, 0.0), 1.0))


def lab(rgb: RGB) -> Lab:
    """Return CIE 1976 L*a*b* (D65) of a linear sRGB colour (CIE 15:2004)."""
    xyz = _apply(_SRGB_TO_XYZ, rgb)

    def f(t: float) -> float:
        return t ** (1 / 3) if t > (6 / 29) ** 3 else t / (3 * (6 / 29) ** 2) + 4 / 29

    fx, fy, fz = (f(v / w) for v, w in zip(xyz, _WHITE, strict=True))
    return (116 * fy - 16, 500 * (fx - fy), 200 * (fy - fz))


def delta_e(a: Lab, b: Lab) -> float:
    """Return the CIE76 colour difference ΔE*ab."""
    return math.dist(a, b)


def seen_colour(band: BandStyle) -> tuple[str, str]:
    """Return the colour a reader sees for a band and the field that sets it."""
    return (band.ink, "ink") if band.hatch is Hatch.SOLID else (band.tint, "tint")


# --------------------------------------------------------------------------- greyscale swatches


def swatch_svg(style: Style) -> str:
    """Return an SVG of every band's swatch in a column, rendered as the map renders bands."""
    from diagram.drawing.scene import Box, Rect, Scene
    from diagram.output.svg import render_svg

    w, h = SWATCH_PT
    gap = 12.0
    height = gap + len(style.bands) * (h + gap)
    items = [Rect("page", 0, 0, w + 2 * gap, height, fill="#FFFFFF")]
    items += [
        Rect(f"swatch-{i}", gap, gap + i * (h + gap), w, h, band=b.id)
        for i, b in enumerate(style.bands)
    ]
    page = Box(0, 0, w + 2 * gap, height)
    scene = Scene(
        page="swatches",
        width_pt=page.w,
        height_pt=page.h,
        unit="in",
        font_family=style.font_family,
        bands=style.bands,
        items=tuple(items),
        map_box=page,
        vessel_box=page,
        label_boxes=(),
        pressure_regions=(),
    )
    return render_svg(scene)


def _grey_image(svg: str) -> tuple[Callable[[int, int], int], float]:
    """Return a pixel reader of the rendered SVG in grey, and pixels per point."""
    try:
        import cairosvg
        from PIL import Image
    except ImportError as exc:
        raise DiagramError(f"style check needs {exc.name}: pip install pillow cairosvg") from None
    except OSError as exc:  # the package is there but the system cairo library is not
        raise DiagramError(f"style check needs the cairo library ({exc})") from None
    from io import BytesIO

    png = cairosvg.svg2png(
        bytestring=svg.encode("utf-8"), unsafe=False, dpi=DPI, background_color="white"
    )
    image = Image.open(BytesIO(png)).convert("L")
    pixels = image.load()
    assert pixels is not None

    def at(x: int, y: int) -> int:
        value = pixels[x, y]
        assert isinstance(value, int)
        return value

    return at, DPI / 72.0


def measure_swatches(style: Style) -> tuple[Swatch, ...]:
    """Render every band's swatch and measure it in greyscale."""
    at, k = _grey_image(swatch_svg(style))
    w, h = SWATCH_PT
    gap = 12.0
    out = []
    for i, band in enumerate(style.bands):
        x0, x1 = round((gap + INSET_PT) * k), round((gap + w - INSET_PT) * k)
        top = gap + i * (h + gap)
        y0, y1 = round((top + INSET_PT) * k), round((top + h - INSET_PT) * k)
        rows = [[at(x, y) for x in range(x0, x1)] for y in range(y0, y1)]
        values = [v for row in rows for v in row]
        mean = sum(values) / len(values)
        sd = math.sqrt(sum((v - mean) ** 2 for v in values) / len(values))
        steps = [abs(a - b) for row in rows for a, b in itertools.pairwise(row)]
        steps += [
            abs(a - b) for r0, r1 in itertools.pairwise(rows) for a, b in zip(r0, r1, strict=True)
        ]
        edges = sum(1 for s in steps if s > EDGE_STEP) / len(steps)
        out.append(Swatch(band.id, band.label, mean, sd, edges))
    return tuple(out)


def too_alike(a: Swatch, b: Swatch) -> bool:
    """Return True when two swatches differ in neither grey nor texture enough to tell apart."""
    return (
        abs(a.grey_mean - b.grey_mean) < MIN_GREY_STEP
        and abs(a.grey_sd - b.grey_sd) < MIN_SD_STEP
        and abs(a.edge_density - b.edge_density) < MIN_EDGE_STEP
    )


# --------------------------------------------------------------------------- the check


def check_style(
    style: Style,
    *,
    source: str = "default style",
    line_of: Callable[[str], int | None] = lambda key: None,
) -> StyleReport:
    """Measure a style and return every greyscale and colour-vision problem it has."""
    swatches = measure_swatches(style)
    problems: list[Problem] = []
    for a, b in itertools.combinations(swatches, 2):
        if too_alike(a, b):
            problems.append(
                Problem(
                    source,
                    line_of(f"bands.{a.band}") or line_of(f"bands.{b.band}"),
                    f"bands.{a.band}/{b.band}",
                    f"grey {a.grey_mean:.0f}/{b.grey_mean:.0f}, sd {a.grey_sd:.1f}/"
                    f"{b.grey_sd:.1f}, edges {a.edge_density:.2f}/{b.edge_density:.2f}",
                    "too alike printed in greyscale: a pair needs a grey step of "
                    f"{MIN_GREY_STEP:g} of 255, or a texture step of {MIN_SD_STEP:g} sd or "
                    f"{MIN_EDGE_STEP:g} edge density",
                    "change the lightness of one tint or give one a hatch of its own",
                )
            )
    problems.extend(_merged_pairs(style.bands, source, line_of))
    return StyleReport(swatches, tuple(problems))


def _merged_pairs(
    bands: Sequence[BandStyle], source: str, line_of: Callable[[str], int | None]
) -> list[Problem]:
    out = []
    for a, b in itertools.combinations(bands, 2):
        (ca, fa), (cb, fb) = seen_colour(a), seen_colour(b)
        ra, rb = linear_rgb(ca), linear_rgb(cb)
        normal = delta_e(lab(ra), lab(rb))
        if normal < MIN_DELTA_E:
            continue  # alike to everyone: the greyscale check weighs their textures
        for deficiency in CVD_MATRICES:
            seen = delta_e(lab(simulate(ra, deficiency)), lab(simulate(rb, deficiency)))
            if seen < MIN_DELTA_E:
                out.append(
                    Problem(
                        source,
                        line_of(f"bands.{a.id}.{fa}") or line_of(f"bands.{b.id}.{fb}"),
                        f"bands.{a.id}.{fa}/bands.{b.id}.{fb}",
                        f"{ca!r}/{cb!r}",
                        f"merge under {deficiency}: ΔE*ab {seen:.1f} < {MIN_DELTA_E:g} "
                        f"(normal vision {normal:.1f}; Machado, Oliveira & Fernandes 2009, "
                        "severity 1.0)",
                        "make the two colours differ in lightness, not only in hue",
                    )
                )
    return out


def threshold_lines() -> list[str]:
    """Return the method and thresholds, as the command prints them."""
    w, h = SWATCH_PT
    return [
        f"greyscale: each band's swatch ({w:g} x {h:g} pt, {INSET_PT:g} pt inset) rendered at "
        f"{DPI:g} dpi, grey = ITU-R BT.601 luma; a pair is too alike when its grey means differ "
        f"by less than {MIN_GREY_STEP:g} of 255 and its textures by less than {MIN_SD_STEP:g} "
        f"sd and {MIN_EDGE_STEP:g} edge density (neighbour steps over {EDGE_STEP} grey levels)",
        "colour vision: protanopia, deuteranopia, tritanopia simulated with Machado, Oliveira & "
        "Fernandes 2009 (severity 1.0, linear sRGB); a pair apart in normal vision (CIE76 "
        f"ΔE*ab >= {MIN_DELTA_E:g}, CIE L*a*b* D65) is merged when its simulated ΔE*ab is "
        f"below {MIN_DELTA_E:g}",
    ]


def swatch_table(swatches: Sequence[Swatch]) -> list[str]:
    """Return the measurements as table lines."""
    width = max(len("band"), *(len(s.band) for s in swatches))
    head = f"{'band':<{width}}  grey   sd     edges"
    return [head] + [
        f"{s.band:<{width}}  {s.grey_mean:5.1f}  {s.grey_sd:5.1f}  {s.edge_density:5.3f}"
        for s in swatches
    ]
