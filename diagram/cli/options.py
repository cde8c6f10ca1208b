"""Options shared by several commands, defined once so their names and help stay the same.

With them, the few helpers the commands share for what they are given and what they print:
whether an argument names one study file, and a message made safe for the terminal.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click

from diagram.drawing.paper import PAGE_NAMES

page_option = click.option(
    "--page",
    type=click.Choice(PAGE_NAMES),
    help="Page size, or 'map' for the map and legend alone [default: a4, or the lab profile's].",
)
TEMPLATE_METAVAR = "FILE.svg|NAME"
STUDIES_METAVAR = "STUDY..."
template_option = click.option(
    "--template",
    type=click.Path(dir_okay=False, path_type=Path),
    metavar=TEMPLATE_METAVAR,
    help="A lab's own map template (SVG) or a shipped one by name "
    "[default: bilateral, or the lab profile's].",
)
criteria_option = click.option(
    "--criteria",
    metavar="NAME|PATH",
    help="Criteria set to grade with, instead of the one the study names.",
)
TARGETS = ("ATA", "PTA", "PER")


class TargetArtery(click.ParamType):  # type: ignore[type-arg]  # not generic in older click
    """The tibial artery a planning path runs to, read without regard to case.

    A segment id or a name of another artery is refused with what to give instead: ``pta-d``
    gets "did you mean PTA?", ``sfa-m`` is told the target is a tibial artery.
    """

    name = "|".join(TARGETS)

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None) -> str:
        text = str(value).strip()
        if text.upper() in TARGETS:
            return text.upper()
        from diagram import anatomy

        found = anatomy.suggestions(text)
        vessels = [t for t in TARGETS if any(s.startswith(f"{t}-") for s in found)]
        if vessels:
            hint = f"did you mean {' or '.join(vessels)}? the target names the whole artery"
        else:
            level = (
                f"; {found[0]} is a {anatomy.SEGMENTS[found[0]].level.value} segment"
                if found
                else ""
            )
            hint = f"give ATA, PTA or PER: anterior tibial, posterior tibial, peroneal{level}"
        raise HintedParameter(f"{text!r} is not a tibial artery ({hint}).", ctx, param)


class HintedParameter(click.BadParameter):
    """A bad option value whose message carries its own hint (no pointer to --help is added)."""


target_option = click.option(
    "--target",
    type=TargetArtery(),
    help="Tibial artery of the planning path, any case (default: the least diseased).",
)
prior_option = click.option(
    "--prior",
    type=click.Path(dir_okay=False, path_type=Path),
    help="An earlier exam to compare with (instead of the study's own prior:).",
)
DEFAULT_DPI = 150.0
dpi_option = click.option(
    "--dpi",
    type=click.FloatRange(36, 1200),
    help="Resolution of PNG output [default: 150]; refused when no output is a PNG.",
)
jobs_option = click.option(
    "--jobs", type=click.IntRange(1, 256), help="Worker processes (default: CPU count)."
)
scheduler_option = click.option(
    "--scheduler",
    metavar="ADDRESS",
    help="Draw a batch on an existing Dask cluster whose scheduler is at ADDRESS "
    "(e.g. tcp://host:8786) instead of --jobs local processes; the workers must see the studies "
    "and the output folder at the same paths. Needs: pip install 'limbchart[dask]'.",
)
quiet_option = click.option("--quiet", is_flag=True, help="No progress bar and no per-study lines.")
overwrite_option = click.option(
    "--overwrite",
    is_flag=True,
    help="Replace output files that exist already (without it they are left as they are and "
    "nothing is drawn).",
)


def check_dpi(dpi: float | None, formats: tuple[str, ...]) -> None:
    """Refuse --dpi when no output is a PNG: PDF, SVG and DICOM sheets are vector."""
    if dpi is not None and "png" not in formats:
        raise click.UsageError(
            f"--dpi sets the resolution of PNG output, and the output here is "
            f"{', '.join(f.upper() for f in formats)} (vector, drawn at any size); leave --dpi out."
        )


def printable(line: str) -> str:
    """Escape control characters, so that a message stays one line and cannot drive a terminal."""
    if line.isprintable():
        return line
    return "".join(ch if ch.isprintable() else ascii(ch)[1:-1] for ch in line)


def is_study_file(path: Path) -> bool:
    """Return True for a path that names one study file (not a folder, not a list of paths).

    A structured report (DICOM SR) counts, recognised by its suffix or by its content.
    """
    if is_folder(str(path)):
        return False
    if path.suffix.lower() in (".yaml", ".yml", ".json", ".dcm"):
        return True
    from diagram.reading.sr import looks_like_dicom

    try:
        with open(path, "rb") as handle:
            return looks_like_dicom(handle.read(132))
    except OSError:
        return False


def show_import_notes(notes: tuple[str, ...]) -> None:
    """Print what an imported report held that could not be placed, one line per item."""
    for line in notes:
        click.echo(printable(line), err=True)


def is_folder(name: str) -> bool:
    """Return True for an existing folder; False for anything the file system cannot name."""
    try:
        return Path(name).is_dir()
    except OSError:  # a name too long for the file system: export reports it in one line
        return False
