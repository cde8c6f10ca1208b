"""Generate fictional study files for benchmarks and batch tests (deterministic for a seed).

Every name and number is invented: patients are "Synthetic, Case N", velocities are drawn from
plausible ranges. ``crowded`` puts a sample in every segment of both legs and two lesions in
every segment long enough, the worst case for label layout.
"""

from __future__ import annotations

import random
from pathlib import Path
from typing import Any

import yaml

from diagram import anatomy

_NORMAL_PSV = {
    anatomy.Level.INFLOW: (95, 125),
    anatomy.Level.FEMORAL: (80, 115),
    anatomy.Level.POPLITEAL: (55, 75),
    anatomy.Level.INFRAPOPLITEAL: (40, 65),
    anatomy.Level.PEDAL: (30, 50),
}


def _segments(rng: random.Random, every: bool) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for seg, d in anatomy.SEGMENTS.items():
        if seg == "AO" or (not every and rng.random() < 0.3):
            continue
        low, high = _NORMAL_PSV[d.level]
        out[seg] = {"psv": rng.randint(low, high), "waveform": "triphasic"}
    return out


def _lesions(rng: random.Random, crowded: bool) -> list[dict[str, Any]]:
    out: list[dict[str, Any]] = []
    candidates = [s for s in anatomy.SEGMENT_IDS if s not in ("AO", "IIA")]
    chosen = candidates if crowded else rng.sample(candidates, rng.randint(0, 3))
    for seg in chosen:
        length = anatomy.SEGMENTS[seg].length_cm
        for k in range(2 if crowded and length >= 4 else 1):
            start = round(k * length / 2, 1)
            if rng.random() < 0.15 and not crowded:
                out.append(
                    {
                        "at": seg,
                        "from_cm": start,
                        "occluded": True,
                        "length_cm": round(min(length - start, 2.0), 1),
                    }
                )
            else:
                out.append(
                    {
                        "at": seg,
                        "from_cm": start,
                        "length_cm": 1.0,
                        "psv": rng.randint(120, 520),
                        "edv": rng.randint(10, 90),
                    }
                )
    return out


def study(n: int, *, crowded: bool = False, seed: int = 0) -> dict[str, Any]:
    """Return one fictional study as plain data."""
    rng = random.Random(seed * 100_003 + n)
    return {
        "format": 1,
        "patient": {
            "name": f"Synthetic, Case {n}",
            "id": f"SYN-{n:05d}",
            "birth_date": f"19{rng.randint(30, 80)}-0{rng.randint(1, 9)}-1{rng.randint(0, 9)}",
            "sex": rng.choice(["female", "male"]),
        },
        "exam": {
            "date": "2026-11-30",
            "accession": f"SYN-ACC-{n:05d}",
            "site": "Synthetic Lab",
            "criteria": "native",
        },
        "pressures": {
            "brachial": {"right": rng.randint(115, 160), "left": rng.randint(115, 160)},
            "right": {
                "pt": rng.randint(40, 170),
                "dp": rng.randint(40, 170),
                "toe": rng.randint(20, 110),
            },
            "left": {
                "pt": rng.randint(40, 170),
                "dp": rng.randint(40, 170),
                "toe": rng.randint(20, 110),
            },
        },
        "limbs": {
            side: {"segments": _segments(rng, crowded), "lesions": _lesions(rng, crowded)}
            for side in ("right", "left")
        },
        "notes": "Fictional generated study.",
    }


def write_studies(folder: Path, count: int, *, crowded: bool = False, seed: int = 0) -> list[Path]:
    """Write ``count`` fictional studies into ``folder`` and return their paths."""
    folder.mkdir(parents=True, exist_ok=True)
    paths = []
    for n in range(1, count + 1):
        path = folder / f"synthetic-{n:05d}.yaml"
        path.write_text(yaml.safe_dump(study(n, crowded=crowded, seed=seed), sort_keys=False))
        paths.append(path)
    return paths
