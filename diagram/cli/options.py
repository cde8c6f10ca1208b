"""Options shared by several commands, defined once so their names and help stay the same."""

from __future__ import annotations

from pathlib import Path

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
target_option = click.option(
    "--target",
    type=click.Choice(["ATA", "PTA", "PER"], case_sensitive=False),
    help="Tibial artery of the planning path (default: the least diseased).",
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
