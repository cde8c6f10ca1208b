"""Arc-length geometry of SVG path data (stdlib only).

INTERFACE STUB: to be implemented.
"""

from __future__ import annotations

from dataclasses import dataclass

Point = tuple[float, float]


@dataclass(frozen=True)
class PathGeometry:
    """A parsed path with exact arc-length queries."""

    def length(self) -> float:
        raise NotImplementedError

    def point_at(self, s: float) -> Point:
        """Return the point at arc length ``s`` (clamped to [0, length])."""
        raise NotImplementedError

    def tangent_at(self, s: float) -> Point:
        """Return the unit tangent at arc length ``s``."""
        raise NotImplementedError

    def polyline(self, s0: float, s1: float, step: float) -> tuple[Point, ...]:
        """Return points along the path from ``s0`` to ``s1`` at most ``step`` apart, ends included."""
        raise NotImplementedError

    def subpath_d(self, s0: float, s1: float) -> str:
        """Return absolute path data for the stretch from ``s0`` to ``s1``."""
        raise NotImplementedError
