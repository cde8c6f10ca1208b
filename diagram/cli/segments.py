"""The ``limbchart segments`` command: every segment id, its aliases, level and nominal length.

Listed in the command group of :mod:`diagram.cli.main`. The lengths listed are the
ones a lesion's ``from_cm`` and ``length_cm`` are measured against; the band ids are those a
segment's ``band:`` may name in each shipped criteria set.
"""

from __future__ import annotations

import click


def segment_lines() -> list[str]:
    """Return the table of segments, then the band ids of each shipped criteria set."""
    from diagram import anatomy
    from diagram.criteria import load_criteria, shipped_names

    rows = [("segment", "level", "length", "name", "aliases")]
    for seg in anatomy.SEGMENTS.values():
        rows.append(
            (
                seg.id,
                seg.level.value,
                f"{seg.length_cm:g} cm",
                seg.name,
                ", ".join(anatomy.ALIAS_NAMES[seg.id]) or "-",
            )
        )
    widths = [max(len(r[i]) for r in rows) for i in range(4)]
    lines = [
        "  ".join(cell.ljust(w) for cell, w in zip(row[:4], widths, strict=True)) + "  " + row[4]
        for row in rows
    ]
    lines += [
        "",
        "Each id is given per limb (limbs.right, limbs.left) except AO, the unpaired aorta, "
        "listed under one limb.",
        "Ids and aliases are read without regard to case, spaces, hyphens or underscores.",
        "Lengths are nominal adult values (from memory): from_cm and length_cm are measured "
        "against them.",
        "",
    ]
    names = shipped_names()
    width = max(len("criteria"), *(len(n) for n in names))
    lines.append(f"{'criteria':<{width}}  band ids (for band:, mildest first)")
    for name in names:
        lines.append(f"{name:<{width}}  {', '.join(load_criteria(name).band_ids)}")
    return lines


@click.command()
def segments() -> None:
    """List every segment id with its level, nominal length and aliases, and the band ids."""
    for line in segment_lines():
        click.echo(line.rstrip())
