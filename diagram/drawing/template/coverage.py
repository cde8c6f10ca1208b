"""What a map template covers: named coverages, subtrees of the tree, and their vessel keys.

A template declares what it draws with ``data-coverage`` on its root: ``bilateral`` (the aorta
to both feet, the default), ``right-infrainguinal``, ``left-infrainguinal``,
``bilateral-infrainguinal``, or a list of subtrees ``SIDE:SEGMENT`` (each segment with everything
downstream of it, e.g. ``"right:POP-BK"``) or ``AO`` (the whole tree).
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from types import MappingProxyType

from diagram import anatomy

# Named coverages: the subtrees (``AO`` or ``side:segment``) each stands for.
COVERAGES: Mapping[str, tuple[str, ...]] = MappingProxyType(
    {
        "bilateral": ("AO",),
        "bilateral-infrainguinal": ("right:CFA", "left:CFA"),
        "right-infrainguinal": ("right:CFA",),
        "left-infrainguinal": ("left:CFA",),
    }
)
SIDE_WORDS = MappingProxyType(
    {
        "right": "right",
        "rt": "right",
        "r": "right",
        "left": "left",
        "lt": "left",
        "l": "left",
    }
)


def side_word(text: str) -> str | None:
    """Return "right" or "left" for a side word (``R``, ``lt`` ...), else None."""
    return SIDE_WORDS.get(text.strip().lower())


def covered_keys(coverage: str) -> frozenset[str]:
    """Return the vessel keys of a normalised coverage (``Template.coverage``)."""
    keys: set[str] = set()
    for root in COVERAGES.get(coverage, tuple(coverage.split())):
        side, _, segment = root.partition(":")
        keys |= _subtree(side or None, segment or side)
    return frozenset(keys)


def _subtree(side: str | None, segment: str) -> set[str]:
    if segment in anatomy.UNPAIRED:
        return {segment} | {
            anatomy.vessel_key(s, seg)
            for s in ("right", "left")
            for seg in anatomy.SEGMENT_IDS
            if seg not in anatomy.UNPAIRED
        }
    out, todo = set(), [segment]
    while todo:
        seg = todo.pop()
        out.add(anatomy.vessel_key(side or "right", seg))
        todo.extend(anatomy.CHILDREN[seg])
    return out


def normalise_coverage(raw: str) -> str:
    """Return the canonical form of a ``data-coverage`` value; ValueError says what is wrong."""
    text = raw.strip().lower()
    if text in COVERAGES:
        return text
    roots: list[str] = []
    for token in re.split(r"[\s,]+", raw.strip()):
        side_text, colon, seg_word = token.rpartition(":")
        segment = anatomy.resolve(seg_word) if token else None
        side = side_word(side_text) if colon else None
        if segment is None or (colon and side is None):
            raise ValueError(f"{token!r} is not a named coverage nor SIDE:SEGMENT")
        if (segment in anatomy.UNPAIRED) == bool(colon):
            raise ValueError(f"{token!r}: write AO alone and SIDE:SEGMENT for a leg's segment")
        root = segment if segment in anatomy.UNPAIRED else f"{side}:{segment}"
        roots.extend([root] if root not in roots else [])
    joined = " ".join(roots)
    for name in COVERAGES:
        if covered_keys(name) == covered_keys(joined):
            return name
    return joined


def key_order(key: str) -> tuple[int, int]:
    """Return the sort key of a vessel key: the aorta, the right leg, the left; tree order."""
    side, _, segment = key.rpartition("/")
    return (("", "right", "left").index(side), anatomy.SEGMENT_IDS.index(segment))


def describe_coverage(coverage: str) -> str:
    """Return a declared coverage in words, e.g. ``right leg from the CFA down``."""
    if coverage == "bilateral":
        return "aorta to both feet"
    words = []
    for root in COVERAGES.get(coverage, tuple(coverage.split())):
        side, _, segment = root.partition(":")
        words.append("the whole tree" if not segment else f"{side} leg from the {segment} down")
    return "; ".join(words)


def suggest_coverage(declared: set[str]) -> str | None:
    """Return the partial coverage the drawn vessels form exactly, if they form one."""
    if not declared or declared == covered_keys("bilateral"):
        return None
    roots = []
    for key in sorted(declared, key=key_order):
        side, _, seg = key.rpartition("/")
        parent = anatomy.SEGMENTS[seg].parent
        if parent is None or anatomy.vessel_key(side or "right", parent) not in declared:
            roots.append(seg if not side else f"{side}:{seg}")
    coverage = normalise_coverage(" ".join(roots))
    return coverage if covered_keys(coverage) == declared else None
