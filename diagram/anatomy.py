"""The arterial tree of the leg: segment ids, parents, levels, aliases and nominal lengths.

Segment ids are the trade's abbreviations. Every id exists once per side except the distal aorta
``AO``, which is unpaired. Nominal lengths are typical adult values (clinical-values.md, "Anatomy
for the map": lengths recalled, from memory); the map uses them only to place a lesion's extent
along a segment and to check that a lesion fits the limb.
"""

from __future__ import annotations

import difflib
import re
from dataclasses import dataclass
from enum import StrEnum


class Side(StrEnum):
    """The patient's side (not the viewer's)."""

    RIGHT = "right"
    LEFT = "left"


class Level(StrEnum):
    """Anatomic level used by the planning summary."""

    INFLOW = "inflow"
    FEMORAL = "femoral"
    POPLITEAL = "popliteal"
    INFRAPOPLITEAL = "infrapopliteal"
    PEDAL = "pedal"


@dataclass(frozen=True)
class SegmentDef:
    """One arterial segment of the tree."""

    id: str
    name: str
    level: Level
    parent: str | None
    continues_to: str | None  # the in-line child a long lesion runs on into
    length_cm: float


# (id, long name, level, parent, in-line continuation, nominal length cm)
# Lengths from memory (clinical-values.md: CFA ~4, SFA 25-30, popliteal 15-20, AT 30-35, PT 28-32,
# peroneal 20-25, TPT 2-4, EIA ~10); the SFA and tibials are split into thirds.
_TREE: tuple[tuple[str, str, Level, str | None, str | None, float], ...] = (
    ("AO", "distal abdominal aorta", Level.INFLOW, None, "CIA", 6.0),
    ("CIA", "common iliac artery", Level.INFLOW, "AO", "EIA", 5.0),
    ("IIA", "internal iliac artery", Level.INFLOW, "CIA", None, 4.0),
    ("EIA", "external iliac artery", Level.INFLOW, "CIA", "CFA", 10.0),
    ("CFA", "common femoral artery", Level.FEMORAL, "EIA", "SFA-P", 4.0),
    ("PFA", "profunda femoris artery", Level.FEMORAL, "CFA", None, 8.0),
    ("SFA-P", "superficial femoral artery, proximal", Level.FEMORAL, "CFA", "SFA-M", 9.0),
    ("SFA-M", "superficial femoral artery, mid", Level.FEMORAL, "SFA-P", "SFA-D", 9.0),
    ("SFA-D", "superficial femoral artery, distal", Level.FEMORAL, "SFA-M", "POP-AK", 9.0),
    ("POP-AK", "popliteal artery above the knee", Level.POPLITEAL, "SFA-D", "POP-BK", 9.0),
    ("POP-BK", "popliteal artery below the knee", Level.POPLITEAL, "POP-AK", "TPT", 7.0),
    ("TPT", "tibioperoneal trunk", Level.INFRAPOPLITEAL, "POP-BK", "PTA-P", 3.0),
    ("ATA-P", "anterior tibial artery, proximal", Level.INFRAPOPLITEAL, "POP-BK", "ATA-M", 11.0),
    ("ATA-M", "anterior tibial artery, mid", Level.INFRAPOPLITEAL, "ATA-P", "ATA-D", 11.0),
    ("ATA-D", "anterior tibial artery, distal", Level.INFRAPOPLITEAL, "ATA-M", "DPA", 11.0),
    ("PTA-P", "posterior tibial artery, proximal", Level.INFRAPOPLITEAL, "TPT", "PTA-M", 10.0),
    ("PTA-M", "posterior tibial artery, mid", Level.INFRAPOPLITEAL, "PTA-P", "PTA-D", 10.0),
    ("PTA-D", "posterior tibial artery, distal", Level.INFRAPOPLITEAL, "PTA-M", "PLA", 10.0),
    ("PER-P", "peroneal artery, proximal", Level.INFRAPOPLITEAL, "TPT", "PER-M", 7.5),
    ("PER-M", "peroneal artery, mid", Level.INFRAPOPLITEAL, "PER-P", "PER-D", 7.5),
    ("PER-D", "peroneal artery, distal", Level.INFRAPOPLITEAL, "PER-M", None, 7.5),
    ("DPA", "dorsalis pedis artery", Level.PEDAL, "ATA-D", None, 6.0),
    ("PLA", "plantar arteries", Level.PEDAL, "PTA-D", None, 6.0),
)

SEGMENTS: dict[str, SegmentDef] = {row[0]: SegmentDef(*row) for row in _TREE}
SEGMENT_IDS: tuple[str, ...] = tuple(SEGMENTS)
UNPAIRED: frozenset[str] = frozenset({"AO"})

CHILDREN: dict[str, tuple[str, ...]] = {
    seg: tuple(s.id for s in SEGMENTS.values() if s.parent == seg) for seg in SEGMENTS
}


def _norm(text: str) -> str:
    """Fold case, spaces, underscores, hyphens and dots so aliases compare equal."""
    return re.sub(r"[\s_\-.]+", "", text.strip().lower())


def _alias_pairs() -> list[tuple[str, str]]:
    """Return (alias as written, canonical id) for every alias, ids first."""
    pairs: list[tuple[str, str]] = []
    thirds = {"P": ("proximal", "prox"), "M": ("mid", "middle"), "D": ("distal", "dist")}
    long_names = {
        "AO": ("aorta", "distal aorta", "abdominal aorta"),
        "CIA": ("common iliac",),
        "IIA": ("internal iliac", "hypogastric"),
        "EIA": ("external iliac",),
        "CFA": ("common femoral",),
        "PFA": ("profunda", "profunda femoris", "deep femoral", "DFA"),
        "TPT": ("tibioperoneal trunk", "tibioperoneal", "TP trunk", "tibiofibular trunk"),
        "DPA": ("dorsalis pedis", "DP"),
        "PLA": ("plantar", "plantar arteries", "plantar arch"),
    }
    vessel_words = {
        "SFA": ("superficial femoral", "FA"),  # FA-P/M/D: the newer "femoral artery" naming
        "ATA": ("anterior tibial", "AT"),
        "PTA": ("posterior tibial", "PT"),
        "PER": ("peroneal", "fibular", "PA"),
    }
    for seg_id, names in long_names.items():
        for name in (seg_id, *names):
            pairs.append((name, seg_id))
    for stem, words in vessel_words.items():
        for third, third_words in thirds.items():
            seg_id = f"{stem}-{third}"
            for word in (stem, *words):
                pairs.append((f"{word}-{third}", seg_id))
                for tw in third_words:
                    pairs.append((f"{word} {tw}", seg_id))
                    pairs.append((f"{tw} {word}", seg_id))
    for level_word, seg_id in (("AK", "POP-AK"), ("BK", "POP-BK")):
        for pop in ("POP", "popliteal"):
            pairs.append((f"{pop} {level_word}", seg_id))
            pairs.append((f"{level_word} {pop}", seg_id))
        phrase = "above knee" if level_word == "AK" else "below knee"
        pairs.append((f"popliteal {phrase}", seg_id))
        pairs.append((f"{phrase} popliteal", seg_id))
    return pairs


def _build_aliases() -> dict[str, str]:
    aliases: dict[str, str] = {}
    for text, seg_id in _alias_pairs():
        aliases.setdefault(_norm(text), seg_id)
    return aliases


def _alias_names() -> dict[str, tuple[str, ...]]:
    """Return each segment's aliases as a reader would write them, one spelling per alias."""
    seen: set[str] = set()
    names: dict[str, list[str]] = {seg: [] for seg in SEGMENTS}
    for text, seg_id in _alias_pairs():
        key = _norm(text)
        awkward = " " in text and "-" in text  # 'superficial femoral-M' reads, but is not shown
        if key not in seen and key != _norm(seg_id) and not awkward:
            seen.add(key)
            names[seg_id].append(text)
    return {seg: tuple(found) for seg, found in names.items()}


ALIASES: dict[str, str] = _build_aliases()
ALIAS_NAMES: dict[str, tuple[str, ...]] = _alias_names()


def resolve(name: str) -> str | None:
    """Return the canonical segment id for an id or alias, or None when unknown."""
    return ALIASES.get(_norm(name))


# The trade's shorthand, for suggestions: side words (the side comes from the limb a finding
# is listed under), level words, and vessel words with the segments each may mean.
_SIDE_WORDS = frozenset({"l", "r", "lt", "rt", "left", "right"})
_LEVEL_WORDS = {
    "p": "P", "prox": "P", "proximal": "P",
    "m": "M", "mid": "M", "middle": "M",
    "d": "D", "dist": "D", "distal": "D",
    "ak": "AK", "aboveknee": "AK", "above": "AK",
    "bk": "BK", "belowknee": "BK", "below": "BK",
}  # fmt: skip
_THIRDS = ("P", "M", "D")
_VESSEL_WORDS: dict[str, tuple[str, ...]] = {
    **{w: tuple(f"SFA-{t}" for t in _THIRDS) for w in ("sfa", "superficialfemoral", "fa")},
    "femoral": ("CFA", "PFA", *(f"SFA-{t}" for t in _THIRDS)),
    **{w: ("POP-AK", "POP-BK") for w in ("pop", "popliteal", "popl")},
    **{w: tuple(f"ATA-{t}" for t in _THIRDS) for w in ("ata", "at", "anteriortibial")},
    **{w: tuple(f"PTA-{t}" for t in _THIRDS) for w in ("pta", "pt", "posteriortibial")},
    **{w: tuple(f"PER-{t}" for t in _THIRDS) for w in ("per", "peroneal", "fibular", "pa")},
    "tibial": tuple(f"{v}-{t}" for v in ("ATA", "PTA") for t in _THIRDS),
    "iliac": ("CIA", "EIA", "IIA"),
    "fem": ("CFA", "PFA", *(f"SFA-{t}" for t in _THIRDS)),
}
# words that pick one of a vessel's segments other than by level
_QUALIFIERS = {
    "ext": "EIA", "external": "EIA", "int": "IIA", "internal": "IIA",
    "common": "CIA", "com": "CIA", "deep": "PFA", "profunda": "PFA",
}  # fmt: skip


def suggestions(name: str) -> tuple[str, ...]:
    """Return the canonical ids an unknown name most likely meant, for a "did you mean" hint.

    Suggestions stay within the vessel the name mentions (``popliteal`` offers POP-AK and
    POP-BK; ``femoral mid`` offers SFA-M), and side and level shorthand is understood
    (``LT``, ``RT``, ``L``, ``R``, ``AK``, ``BK``, ``prox``, ``mid``, ``dist``).
    """
    words = [w for w in re.split(r"[\s_\-.]+", name.strip().lower()) if w]
    words = [w for w in words if w not in _SIDE_WORDS] or words
    direct = resolve(" ".join(words))
    if direct is not None:
        return (direct,)
    levels = [_LEVEL_WORDS[w] for w in words if w in _LEVEL_WORDS]
    picked = {_QUALIFIERS[w] for w in words if w in _QUALIFIERS}
    vessel = "".join(w for w in words if w not in _LEVEL_WORDS and w not in _QUALIFIERS)
    if vessel in _VESSEL_WORDS:
        found = _VESSEL_WORDS[vessel]
    elif near := difflib.get_close_matches(vessel, list(_VESSEL_WORDS), n=1, cutoff=0.75):
        found = _VESSEL_WORDS[near[0]]
    else:
        key = _norm(name)
        match = difflib.get_close_matches(key, list(ALIASES), n=1, cutoff=0.6)
        return (ALIASES[match[0]],) if match else ()
    chosen = tuple(s for s in found if s in picked or (levels and s.endswith(f"-{levels[0]}")))
    return chosen or found


def suggest(name: str) -> str | None:
    """Return the closest canonical id for an unknown name (the first of :func:`suggestions`)."""
    found = suggestions(name)
    return found[0] if found else None


def did_you_mean(name: str) -> str | None:
    """Return the hint for an unknown segment name: ``did you mean POP-AK or POP-BK?``."""
    found = suggestions(name)
    if not found:
        return None
    listed = found[0] if len(found) == 1 else f"{', '.join(found[:-1])} or {found[-1]}"
    words = set(re.split(r"[\s_\-.]+", name.strip().lower()))
    if words & _SIDE_WORDS and not words <= _SIDE_WORDS:
        return f"did you mean {listed}? the side comes from the limb it is listed under"
    return f"did you mean {listed}?"


def vessel_key(side: Side | str, segment: str) -> str:
    """Return the map key of one drawn vessel: ``AO`` or ``right/CFA``."""
    if segment in UNPAIRED:
        return segment
    return f"{Side(side).value}/{segment}"


def ancestors(segment: str) -> tuple[str, ...]:
    """Return the segments upstream of ``segment``, nearest first."""
    out: list[str] = []
    parent = SEGMENTS[segment].parent
    while parent is not None:
        out.append(parent)
        parent = SEGMENTS[parent].parent
    return tuple(out)


def run_on(segment: str) -> tuple[str, ...]:
    """Return ``segment`` and its in-line continuations to the end of the limb."""
    out = [segment]
    nxt = SEGMENTS[segment].continues_to
    while nxt is not None:
        out.append(nxt)
        nxt = SEGMENTS[nxt].continues_to
    return tuple(out)


def is_downstream(segment: str, of: str) -> bool:
    """Return True when ``segment`` lies strictly downstream of ``of``."""
    return of in ancestors(segment)


def remaining_length_cm(segment: str, from_cm: float = 0.0) -> float:
    """Return the in-line length from ``from_cm`` in ``segment`` to the end of the limb."""
    return sum(SEGMENTS[s].length_cm for s in run_on(segment)) - from_cm
