"""The ``limbchart draw`` command: one study to one file, or many studies to a folder.

Listed in the command group of ``diagram.cli.main``. Only click is imported here; the drawing is
in :mod:`diagram.inputs` and the batch in :mod:`diagram.batch.run`, imported when the command
runs, so that ``limbchart --help`` stays light.
"""

from __future__ import annotations

import contextlib
import os
import sys
from pathlib import Path
from typing import TYPE_CHECKING

import click

from diagram.cli.options import (
    DEFAULT_DPI,
    STUDIES_METAVAR,
    check_dpi,
    criteria_option,
    dpi_option,
    is_folder,
    is_study_file,
    jobs_option,
    overwrite_option,
    page_option,
    printable,
    prior_option,
    quiet_option,
    scheduler_option,
    show_import_notes,
    target_option,
    template_option,
)

if TYPE_CHECKING:
    from diagram.batch.run import BatchSettings
    from diagram.drawing.labprofile import LabProfile
    from diagram.output.export import ExportOptions, Renderer

FORMATS = ("svg", "pdf", "png", "dcm", "json", "fhir")


@click.command()
@click.argument(
    "studies", nargs=-1, required=True, metavar=STUDIES_METAVAR, type=click.Path(path_type=Path)
)
@click.option(
    "-o",
    "--output",
    required=True,
    type=click.Path(),
    help="Output file (format from its suffix: .svg .pdf .png .dcm .json .fhir.json), or a folder "
    "(ending in /) for many studies.",
)
@click.option(
    "--format",
    "formats",
    multiple=True,
    type=click.Choice(FORMATS),
    help="Output format, whatever the suffix; repeat it for several formats in a batch.",
)
@page_option
@template_option
@click.option(
    "--lab",
    type=click.Path(dir_okay=False, path_type=Path),
    help="A lab profile (YAML): lab name, template, page and band style.",
)
@criteria_option
@dpi_option
@target_option
@prior_option
@jobs_option
@scheduler_option
@quiet_option
@overwrite_option
@click.option(
    "--name",
    "name_pattern",
    default="map-{n:04d}",
    show_default=True,
    help="Output name pattern in a batch; fields {n} (place in the batch), {stem} (the study "
    "file's name), {folder} (its folder's name), {accession} {patient_id} {exam_date} (these "
    "three put identifiers in file names).",
)
@click.option(
    "--renderer",
    type=click.Choice(["cairo", "cairosvg"]),
    default="cairo",
    show_default=True,
    help="How PDF, PNG and DICOM are drawn: cairo paints the sheet directly; cairosvg "
    "converts its SVG (the slower reference route).",
)
def draw(
    studies: tuple[Path, ...],
    output: str,
    formats: tuple[str, ...],
    page: str | None,
    template: Path | None,
    lab: Path | None,
    criteria: str | None,
    dpi: float | None,
    target: str | None,
    prior: Path | None,
    jobs: int | None,
    scheduler: str | None,
    quiet: bool,
    overwrite: bool,
    name_pattern: str,
    renderer: Renderer,
) -> None:
    """Draw the map of each STUDY (a file, a folder of files, or a .txt list of paths).

    One study and a file name write that file. Otherwise -o names a folder (a path ending in /,
    or an existing folder): every output name is decided before anything is drawn, and a
    manifest.json there records which study became which file. An existing file is never
    replaced without --overwrite.
    """
    from diagram.output.export import format_for, refuse_existing

    single = _one_file(studies, output, formats, prior, jobs, scheduler)
    chosen = (
        (format_for(Path(output), formats[0] if formats else None),)  # refuse before any work
        if single
        else tuple(dict.fromkeys(formats or ("pdf",)))
    )
    check_dpi(dpi, chosen)
    png_dpi = dpi or DEFAULT_DPI
    if single:
        refuse_existing(Path(output), overwrite)
    profile = _lab_profile(lab) if lab is not None else None
    page = page or (profile.page if profile and profile.page else "a4")
    if single:
        from diagram.output.export import ExportOptions

        options = ExportOptions(png_dpi=png_dpi, renderer=renderer)
        _draw_one(
            studies[0],
            Path(output),
            chosen[0],
            options,
            page,
            template,
            profile,
            criteria,
            prior,
            target,
            overwrite=overwrite,
            quiet=quiet,
        )
        return
    from diagram.batch.run import BatchSettings

    settings = BatchSettings(
        out_dir=Path(output),
        formats=chosen,
        name_pattern=name_pattern,
        page=page,
        template=template,
        criteria=criteria,
        target=target,
        lab=profile,
        png_dpi=png_dpi,
        overwrite=overwrite,
        renderer=renderer,
    )
    _draw_batch(studies, settings, jobs, quiet, scheduler)


def _one_file(
    studies: tuple[Path, ...],
    output: str,
    formats: tuple[str, ...],
    prior: Path | None,
    jobs: int | None,
    scheduler: str | None,
) -> bool:
    """Return whether one study goes to one file (else to a folder); refuse what cannot go."""
    as_folder = output.endswith(("/", os.sep)) or is_folder(output)
    single = len(studies) == 1 and is_study_file(studies[0]) and not as_folder
    if not as_folder and not single:
        raise click.UsageError(
            f"-o {output} is a file name, but the studies given are many (or a folder or a "
            f"list of them); for many studies give a folder, ending in /: -o {output}/"
        )
    if prior is not None and not single:
        raise click.UsageError("--prior goes with one study; in a batch each study names its own.")
    if scheduler is not None and (single or jobs is not None):
        raise click.UsageError(
            "--scheduler draws a batch (-o a folder) on a Dask cluster, whose workers replace "
            "--jobs; give one of the two."
            if not single
            else "--scheduler draws a batch; for one study give -o a folder, ending in /."
        )
    if single and len(formats) > 1:
        raise click.UsageError("one output file takes one --format; give a folder for more.")
    return single


def _draw_one(
    path: Path,
    output: Path,
    fmt: str,
    options: ExportOptions,
    page: str,
    template: Path | None,
    profile: LabProfile | None,
    criteria: str | None,
    prior: Path | None,
    target: str | None,
    *,
    overwrite: bool,
    quiet: bool,
) -> None:
    """Draw one study into one file."""
    from diagram.inputs import draw_inputs, load_inputs, load_template_for
    from diagram.output.export import export
    from diagram.reading.load import load_study

    study = load_study(path)
    show_import_notes(study.import_notes)
    if fmt == "dcm" and study.exam.study_uid is None:
        from diagram.output.dicom import NO_STUDY_UID

        click.echo(printable(f"{path}: warning: {NO_STUDY_UID}"), err=True)
    inputs = load_inputs(study, criteria=criteria, prior=prior)
    drawing = draw_inputs(
        inputs, load_template_for(template, profile), page=page, target=target, lab=profile
    )
    written = export(drawing, output, fmt, options, overwrite=overwrite)
    if not quiet:
        click.echo(f"wrote {written}", err=True)


def _lab_profile(path: Path) -> LabProfile:
    """Return the lab profile, warning (and going on) when its band style fails the check."""
    from diagram.drawing.labprofile import load_lab_profile

    profile = load_lab_profile(path)
    _warn_style(profile, path)
    return profile


def _warn_style(profile: LabProfile, path: Path) -> None:
    """Warn (and go on) when the profile's bands would be misread in greyscale or by colour."""
    from diagram.design.stylecheck import check_style

    report = check_style(profile.style, source=profile.source, line_of=profile.line)
    for problem in report.problems:
        click.echo(printable(f"warning: {problem}"), err=True)
    if report.problems:
        click.echo(
            f"warning: the lab profile's band style fails the style check; the maps are drawn "
            f"with it all the same (see limbchart style check {path})",
            err=True,
        )


def _draw_batch(
    studies: tuple[Path, ...],
    settings: BatchSettings,
    jobs: int | None,
    quiet: bool,
    scheduler: str | None = None,
) -> None:
    from diagram.batch.gather import expand_inputs
    from diagram.batch.run import BatchResult, default_jobs, draw_batch, show_progress

    paths = expand_inputs(studies)
    bar_wanted = show_progress(quiet)

    def report(result: BatchResult) -> None:
        if not result.ok:
            for line in result.errors:
                click.echo(printable(line), err=True)
        elif not quiet and not bar_wanted:
            click.echo(f"{result.study} -> {', '.join(result.written)}", err=True)

    workers = jobs or default_jobs()
    with contextlib.ExitStack() as stack:
        cluster = None
        if scheduler is not None:
            from diagram.batch.cluster import connect

            cluster = stack.enter_context(connect(scheduler))
        if bar_wanted:
            bar = stack.enter_context(
                click.progressbar(length=len(paths), label="drawing", file=sys.stderr)
            )

            def tick(result: BatchResult) -> None:
                report(result)
                bar.update(1)

            summary = draw_batch(paths, settings, jobs=workers, on_result=tick, cluster=cluster)
        else:
            summary = draw_batch(paths, settings, jobs=workers, on_result=report, cluster=cluster)
    click.echo(summary.line(len(paths)), err=True)
    if summary.exit_status:
        sys.exit(summary.exit_status)
