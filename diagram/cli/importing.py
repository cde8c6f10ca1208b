"""The ``limbchart import`` command: a vascular ultrasound structured report in, a study file out.

Registered on the command group beside the others; the reading is in
:mod:`diagram.reading.sr`, imported when the command runs.
"""

from __future__ import annotations

from pathlib import Path

import click


@click.command("import")
@click.argument("report", type=click.Path(dir_okay=False, path_type=Path))
@click.option(
    "-o",
    "--output",
    required=True,
    type=click.Path(dir_okay=False, path_type=Path),
    help="The study file to write (.yaml).",
)
@click.option("--overwrite", is_flag=True, help="Replace the study file if it exists.")
def import_report(report: Path, output: Path, overwrite: bool) -> None:
    """Turn a vascular ultrasound structured report (DICOM SR) into a study file.

    The file holds the report's velocities (cm/s) by side and segment and its header (patient,
    exam, study UID); add lesions, occlusions and pressures by hand, then draw it. What the report
    holds that cannot be placed is named in one warning line per item.
    """
    from diagram.output.export import refuse_existing, write_atomic
    from diagram.reading.load import load_report
    from diagram.reading.sr import study_file_text

    if output.suffix.lower() not in (".yaml", ".yml"):
        raise click.UsageError(f"{output}: a study file ends in .yaml or .yml.")
    refuse_existing(output, overwrite)
    study, found = load_report(report)
    for line in study.import_notes:
        click.echo(line, err=True)
    write_atomic(output, study_file_text(found.tree).encode("utf-8"), overwrite=overwrite)
    click.echo(f"wrote {output}", err=True)
