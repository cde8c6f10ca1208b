"""Read a lab's SVG map template safely and expose each vessel's centre-line geometry.

INTERFACE STUB: to be implemented (see the template contract in DEVELOPERS.md).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

from diagram.geometry import PathGeometry


@dataclass(frozen=True)
class Vessel:
    """One segment's centre line in the template, proximal end first."""

    key: str  # anatomy.vessel_key(side, segment): "AO" or "right/CFA"
    side: str | None  # "right", "left", or None for the unpaired aorta
    segment: str  # canonical segment id
    length_cm: float  # nominal length declared by the template
    diameter_mm: float  # nominal diameter declared by the template
    geometry: PathGeometry  # absolute coordinates in the template's viewBox, transforms applied


@dataclass(frozen=True)
class Template:
    """A parsed map template."""

    name: str
    source: str
    viewbox: tuple[float, float, float, float]  # min-x, min-y, width, height
    vessels: Mapping[str, Vessel]  # by Vessel.key
    silhouette: tuple[str, ...]  # absolute path data of the quiet leg outline


def load_template(path: str | Path | None = None) -> Template:
    """Return the parsed template at ``path`` (the shipped bilateral map when None); cached."""
    raise NotImplementedError
