"""Where lesions and stents lie: the segments and centimetres an extent covers.

Lengths are mapped with the nominal segment lengths of :mod:`diagram.anatomy` (typical adult
values, from memory) and handed on as fractions of each segment.
"""

from __future__ import annotations

from collections.abc import Iterable

from diagram import anatomy
from diagram.anatomy import SEGMENTS
from diagram.assess.results import Span
from diagram.reading.study import Lesion, Stent

# Drawn extent of a stenosis whose length is not given (common practice: a focal lesion).
FOCAL_LENGTH_CM = 1.0
_EPS = 1e-9


def lesion_chain(lesion: Lesion) -> tuple[str, ...]:
    """Return the segments an extent starting in ``lesion.at`` runs through, in order.

    An occlusion that reconstitutes in a branch (say the peroneal below a popliteal occlusion)
    follows the tree towards that branch; otherwise the extent runs on in line.
    """
    target = lesion.reconstitutes
    if target and target not in anatomy.run_on(lesion.at):
        path = [target]
        for up in anatomy.ancestors(target):
            if up == lesion.at:
                break
            path.append(up)
        return (lesion.at, *reversed(path[1:]), *anatomy.run_on(target))
    return anatomy.run_on(lesion.at)


def lesion_spans(lesion: Lesion) -> tuple[tuple[Span, ...], Span | None]:
    """Return the stretches a lesion covers and, for an occlusion, its reconstitution point."""
    chain = lesion_chain(lesion)
    start = lesion.from_cm or 0.0
    if lesion.length_cm is not None:
        remaining = lesion.length_cm
    elif lesion.occluded and lesion.reconstitutes:
        upto = chain.index(lesion.reconstitutes)
        remaining = sum(SEGMENTS[s].length_cm for s in chain[:upto]) - start
    elif lesion.occluded:
        remaining = SEGMENTS[lesion.at].length_cm - start
    else:
        remaining = min(FOCAL_LENGTH_CM, SEGMENTS[lesion.at].length_cm - start)
    spans: list[Span] = []
    pos = start
    for seg in chain:
        seg_len = SEGMENTS[seg].length_cm
        take = min(remaining, seg_len - pos)
        spans.append(_span(seg, pos, pos + take))
        remaining -= take
        pos = 0.0
        if remaining <= _EPS:
            break
    point: Span | None = None
    if lesion.occluded and (lesion.reconstitutes or lesion.length_cm is not None):
        last = spans[-1]
        end_seg, end_cm = last.segment, last.end_cm
        if abs(end_cm - SEGMENTS[end_seg].length_cm) < _EPS and end_seg != chain[-1]:
            # an occlusion ending on a segment boundary reconstitutes at the next one's start
            end_seg, end_cm = chain[chain.index(end_seg) + 1], 0.0
        if lesion.reconstitutes and end_seg != lesion.reconstitutes and lesion.length_cm is None:
            end_seg, end_cm = lesion.reconstitutes, 0.0
        point = _span(end_seg, end_cm, end_cm)
    return tuple(spans), point


def stent_spans(stent: Stent) -> tuple[Span, ...]:
    """Return the stretches a stent covers, from its start in ``from_`` to ``to`` (inclusive)."""
    chain = [stent.to, *anatomy.ancestors(stent.to)]
    path = list(reversed(chain[: chain.index(stent.from_) + 1])) if stent.from_ in chain else []
    path = path or [stent.from_]
    start = stent.from_cm or 0.0
    if stent.length_cm is not None:
        remaining = stent.length_cm
        path = list(anatomy.run_on(stent.from_)) if len(path) == 1 else path
    else:
        remaining = sum(SEGMENTS[s].length_cm for s in path) - start
    spans: list[Span] = []
    pos = start
    for seg in path:
        take = min(remaining, SEGMENTS[seg].length_cm - pos)
        spans.append(_span(seg, pos, pos + take))
        remaining -= take
        pos = 0.0
        if remaining <= _EPS:
            break
    return tuple(spans)


def _span(segment: str, start_cm: float, end_cm: float) -> Span:
    length = SEGMENTS[segment].length_cm
    return Span(
        segment,
        round(start_cm, 3),
        round(end_cm, 3),
        round(start_cm / length, 6),
        round(end_cm / length, 6),
    )


def union_cm(stretches: Iterable[tuple[float, float]]) -> float:
    """Return the length covered by possibly overlapping stretches."""
    total, end = 0.0, float("-inf")
    for a, b in sorted(stretches):
        if b > end:
            total += b - max(a, end)
            end = b
    return total
