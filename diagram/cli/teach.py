"""The ``limbchart teach`` command: export studies as de-identified teaching cases.

Listed in the command group of ``diagram.cli.main``. Only click is imported here;
the work is in :mod:`diagram.teaching.batch` and :mod:`diagram.teaching.case`, imported when the
command runs, so that ``limbchart --help`` stays light.
"""

from __future__ import annotations

import sys
from pathlib import Path
from typing import TYPE_CHECKING, Any

import click

from diagram.cli.options import (
    DEFAULT_DPI,
    STUDIES_METAVAR,
    check_dpi,
    dpi_option,
    jobs_option,
    page_option,
    quiet_option,
    template_option,
)

if TYPE_CHECKING:
    from diagram.teaching.batch import TeachResult, TeachSettings, TeachSummary, TeachTask

# the same as diagram.teaching.case.TEACH_FORMATS (a test keeps them equal)
FORMAT_CHOICES = ("pdf", "svg", "png", "dcm", "yaml")
DEFAULT_FORMATS = ("pdf", "yaml")


@click.command()
@click.argument(
    "inputs", nargs=-1, required=True, metavar=STUDIES_METAVAR, type=click.Path(path_type=Path)
)
@click.option(
    "-o",
    "--output",
    required=True,
    type=click.Path(file_okay=False, path_type=Path),
    help="Folder for the teaching cases (made if missing); files are named by case id only.",
)
@click.option(
    "--format",
    "formats",
    multiple=True,
    type=click.Choice(FORMAT_CHOICES),
    help="Output format; repeat for several (default: pdf and yaml, the de-identified study).",
)
@click.option(
    "--link",
    type=click.Path(dir_okay=False, path_type=Path),
    help="Also write a file mapping each case id to its source study (kept out of the "
    "output folder; without it no link is kept anywhere).",
)
@click.option("--no-year", is_flag=True, help="Leave the exam year off too (age is kept).")
@click.option(
    "--keep-text",
    is_flag=True,
    help="Keep the free text (notes, indication, comments), scrubbed and scanned, and list every "
    "kept text in a review list for a person to sign off before release (withheld by default).",
)
@click.option(
    "--review",
    type=click.Path(dir_okay=False, path_type=Path),
    help="Where the review list of --keep-text goes (default: beside the output folder, "
    "FOLDER-free-text-review.txt; never inside it).",
)
@click.option(
    "--add",
    is_flag=True,
    help="Add these cases to a folder that holds a teaching set already (its audit is extended).",
)
@page_option
@template_option
@dpi_option
@jobs_option
@quiet_option
def teach(
    inputs: tuple[Path, ...],
    output: Path,
    formats: tuple[str, ...],
    link: Path | None,
    no_year: bool,
    keep_text: bool,
    review: Path | None,
    add: bool,
    page: str | None,
    template: Path | None,
    dpi: float | None,
    jobs: int | None,
    quiet: bool,
) -> None:
    """Export each STUDY (a file, a folder of files, or a .txt list of paths) as a teaching case.

    Names, ids, dates but the year, ages over 89, site and staff are removed, free text is
    withheld (or, with --keep-text, scrubbed and listed for review), document metadata is
    stripped, and every output is scanned for the source's identifiers before anything is
    written: a case with a hit is not written at all. An audit.json in the output folder lists
    what kinds of identifier were removed per case. A folder that holds a teaching set already
    is refused unless --add is given.
    """
    from diagram.batch.run import default_jobs
    from diagram.teaching.batch import TeachSettings
    from diagram.teaching.records import check_apart, default_review_list, read_audit

    if review is not None and not keep_text:
        raise click.UsageError("--review names the review list of --keep-text; give both.")
    chosen_formats = tuple(dict.fromkeys(formats or DEFAULT_FORMATS))
    check_dpi(dpi, chosen_formats)
    paths = _source_studies(inputs, output)
    earlier = read_audit(output, add=add)
    if link is not None:
        check_apart(link, output, "link file")
    if keep_text:
        review = review or default_review_list(output)
        check_apart(review, output, "review list", append=add)
    settings = TeachSettings(
        out_dir=output,
        formats=chosen_formats,
        keep_year=not no_year,
        keep_text=keep_text,
        page=page or "a4",
        template=template,
        png_dpi=DEFAULT_DPI if dpi is None else dpi,
    )
    tasks = _tasks(paths, settings, earlier)
    summary = _run(tasks, jobs or default_jobs(), quiet)
    results = sorted(summary.results, key=lambda r: r.n)
    audit = _write_records(results, settings, earlier, link, review)
    click.echo(f"{summary.line(len(tasks))} Audit: {audit}", err=True)
    if summary.interrupted:
        sys.exit(130)
    if summary.failed:
        sys.exit(2)


def _source_studies(inputs: tuple[Path, ...], output: Path) -> list[Path]:
    """Return the study files given, refusing any inside the output folder; make the folder."""
    from dataclasses import replace

    from diagram.batch.gather import expand_inputs
    from diagram.errors import ExportError, InputError

    try:
        paths = expand_inputs(inputs, echo_paths=False)
    except InputError as exc:  # name an input by its place: a file name may name the patient
        place = {str(p): k for k, p in enumerate(inputs, start=1)}
        raise InputError(
            [replace(p, file=f"argument {place.get(p.file, '?')}") for p in exc.problems]
        ) from None
    inside = [p for p in paths if p.resolve().is_relative_to(output.resolve())]
    if inside:  # identified studies must not sit among the teaching files
        raise ExportError(
            f"{output}: holds {len(inside)} of the source studies; give an output folder apart "
            "from the identified studies."
        )
    try:
        output.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise ExportError(f"{output}: cannot be made a folder: {exc.strerror}.") from None
    return paths


def _tasks(paths: list[Path], settings: TeachSettings, earlier: dict[str, Any]) -> list[TeachTask]:
    """Return one task per study, each with a new case id not used in the folder before."""
    from diagram.teaching.batch import TeachTask
    from diagram.teaching.case import new_case_id

    output = settings.out_dir
    taken = {str(c.get("case_id")) for c in earlier["cases"]}
    taken.update(p.name.split(".")[0] for p in output.iterdir())
    tasks = []
    for n, path in enumerate(paths, start=1):
        case_id = new_case_id()
        while case_id in taken:
            case_id = new_case_id()
        taken.add(case_id)
        tasks.append(TeachTask(n, path, case_id, settings))
    return tasks


def _run(tasks: list[TeachTask], workers: int, quiet: bool) -> TeachSummary:
    """Export the cases, printing each failure as it comes (and a progress bar unless quiet)."""
    from diagram.batch.run import show_progress
    from diagram.teaching.batch import run_teach

    def report(result: TeachResult) -> None:
        for line in result.errors:
            click.echo(line, err=True)

    if not show_progress(quiet):
        return run_teach(tasks, jobs=workers, on_result=report)
    with click.progressbar(length=len(tasks), label="teaching", file=sys.stderr) as bar:

        def tick(result: TeachResult) -> None:
            report(result)
            bar.update(1)

        return run_teach(tasks, jobs=workers, on_result=tick)


def _write_records(
    results: list[TeachResult],
    settings: TeachSettings,
    earlier: dict[str, Any],
    link: Path | None,
    review: Path | None,
) -> Path:
    """Write the audit, and the link file and the review list where asked; return the audit."""
    from diagram.teaching.records import write_audit, write_link, write_review_list

    output = settings.out_dir
    run = {
        "formats": list(settings.formats),
        "exam_year": settings.keep_year,
        "free_text": "kept for review" if settings.keep_text else "withheld",
        "review_list": review.name if review is not None else None,
    }
    audit = write_audit(output, earlier, run, [r.audit_entry() for r in results])
    if link is not None:
        write_link(link, [(r.case_id, r.source) for r in results if r.ok])
    if review is not None:
        rows = [(r.case_id, where, text) for r in results if r.ok for where, text in r.texts]
        write_review_list(review, output, len(earlier["runs"]) + 1, rows)
        click.echo(f"Free text kept for review: {len(rows)} texts listed in {review}.", err=True)
    return audit
