"""The template contract's checks between vessels: declared sizes, joins, sides.

Each check reports every breach through ``add`` (file line, where, value, rule, hint) and never
raises, so ``check_template`` can list all of them at once.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import TYPE_CHECKING

from diagram import anatomy
from diagram.drawing.template.coverage import key_order

if TYPE_CHECKING:
    from diagram.drawing.template.mapfile import Vessel
    from diagram.drawing.template.mapread import RawVessel

JOIN_TOLERANCE = 1.5  # units: a child may start this far from its parent's distal end
# A declared length or diameter within this factor of the segment's nominal value is plausible
# (own margin): it allows any adult variant yet catches millimetres written for centimetres.
PLAUSIBLE_FACTOR = 3.0
# On a one-leg map the lateral side is found from branches that lie lateral to a sibling
# (clinical-values.md, "Anatomy for the map": profunda lateral; below the knee anterior tibial
# most lateral, posterior tibial most medial, peroneal between): (lateral, medial) pairs compared
# at the midpoint of each path.
LATERAL_PAIRS: tuple[tuple[str, str], ...] = (
    ("PFA", "SFA-P"),
    ("ATA-M", "PER-M"),
    ("PER-M", "PTA-M"),
)


Add = Callable[..., None]


def declared_value(
    raw: str | None, attr: str, nominal: float, unit: str, v: RawVessel, add: Add
) -> float | None:
    """Return the declared value when it is plausible for the segment; report it otherwise."""
    low, high = nominal / PLAUSIBLE_FACTOR, nominal * PLAUSIBLE_FACTOR
    if raw is None:
        add(
            v.line,
            f"{v.where}.{attr}",
            None,
            "is missing",
            f"declare the segment's nominal {unit} in {attr}",
        )
        return None
    try:
        value = float(raw)
    except ValueError:
        value = math.nan
    # A relative slack of 1e-9 keeps the printed bounds themselves inside (7.7 * 3 is 23.0999...).
    if not (math.isfinite(value) and low * (1 - 1e-9) <= value <= high * (1 + 1e-9)):
        add(
            v.line,
            f"{v.where}.{attr}",
            repr(raw),
            f"must be a number from {low:.3g} to {high:.3g} {unit} for {v.segment} (within a "
            f"factor of {PLAUSIBLE_FACTOR:g} of its nominal {nominal:g} {unit})",
            f"check the unit: {attr} is in {unit}",
        )
        return None
    return value


def check_joins(found: dict[str, Vessel], add: Add) -> None:
    for key, vessel in found.items():
        parent_id = anatomy.SEGMENTS[vessel.segment].parent
        if parent_id is None:
            continue
        parent = found.get(anatomy.vessel_key(vessel.side or "right", parent_id))
        if parent is None:
            continue  # the first vessel of a partial map, or a parent reported already
        gap = math.dist(vessel.geometry.start, parent.geometry.end)
        if gap <= JOIN_TOLERANCE:
            continue
        if math.dist(vessel.geometry.end, parent.geometry.end) <= JOIN_TOLERANCE:
            hint = "it looks drawn distal to proximal: reverse its path"
        elif math.dist(vessel.geometry.start, parent.geometry.start) <= JOIN_TOLERANCE:
            hint = f"{parent.key} looks drawn distal to proximal: reverse its path"
        else:
            hint = f"move its first point onto the end of {parent.key}"
        add(
            vessel.line,
            f"vessels.{key}",
            f"gap={gap:.2f}",
            f"must start within {JOIN_TOLERANCE:g} units of the distal end of {parent.key}",
            hint,
        )


def _midline(found: dict[str, Vessel]) -> tuple[float, str] | None:
    """Return the x between the legs and what gives it, or None on a one-leg map."""
    if "AO" in found:
        return found["AO"].geometry.end[0], "the aorta's x"
    starts: dict[str, float] = {}
    for key in sorted(found, key=key_order):
        side = found[key].side
        if side is not None and side not in starts:
            starts[side] = found[key].geometry.start[0]
    if len(starts) < 2:
        return None
    return (starts["right"] + starts["left"]) / 2, "midway between the legs"


def check_sides(found: dict[str, Vessel], add: Add) -> None:
    middle = _midline(found)
    if middle is None:
        _check_one_leg(found, add)
        return
    mid_x, basis = middle
    for key, vessel in found.items():
        if vessel.side is None:
            continue
        g = vessel.geometry
        xs = (g.point_at(g.length() / 2)[0], g.end[0])
        wrong = [x for x in xs if (x >= mid_x if vessel.side == "right" else x <= mid_x)]
        if wrong:
            viewer, sign = ("left", "<") if vessel.side == "right" else ("right", ">")
            add(
                vessel.line,
                f"vessels.{key}",
                f"x={wrong[-1]:.1f}",
                f"must be {sign} {mid_x:.1f} ({basis}): a {vessel.side}-side vessel lies on "
                f"the viewer's {viewer}",
                "the patient's right is on the viewer's left; check data-side",
            )


def _check_one_leg(found: dict[str, Vessel], add: Add) -> None:
    """On a one-leg map, the lateral branches must lie on the side data-side implies."""
    for vessel in found.values():
        side = vessel.side
        if side is None:
            continue
        lateral = -1.0 if side == "right" else 1.0  # the right leg's lateral side: viewer's left
        for outer, inner in LATERAL_PAIRS:
            if vessel.segment != outer:
                continue
            other = found.get(anatomy.vessel_key(side, inner))
            if other is None:
                continue
            g, h = vessel.geometry, other.geometry
            x, y = g.point_at(g.length() / 2)[0], h.point_at(h.length() / 2)[0]
            if lateral * x <= lateral * y:
                viewer = "left" if side == "right" else "right"
                add(
                    vessel.line,
                    f"vessels.{vessel.key}",
                    f"x={x:.1f}",
                    f"must lie on the viewer's {viewer} of {other.key} (x={y:.1f}): {outer} is "
                    f"lateral to {inner}, and a {side} leg seen from the front has its lateral "
                    f"side on the viewer's {viewer}",
                    "the patient's right is on the viewer's left; check data-side",
                )
