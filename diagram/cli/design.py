"""Commands for a lab's own design: ``template check|list``, ``style check``, ``gallery``.

The groups are listed in the main group (``diagram.cli.main``). Like every command,
they only parse options and call the API; a tool error (``DiagramError``) reaches ``cli.main``,
which prints one line per problem and exits with status 2. Heavy libraries are imported inside
the commands, so that ``limbchart --help`` stays light.
"""

from __future__ import annotations

from pathlib import Path

import click

from diagram.cli.options import TEMPLATE_METAVAR, overwrite_option


def _template_arg(value: str) -> str | Path:
    """Return a shipped template's name as it is, anything else as a path."""
    from diagram.drawing.template.mapfile import is_shipped

    return value if is_shipped(value) else Path(value)


@click.group()
def template() -> None:
    """Check a lab's map template, or list the shipped ones."""


@template.command("check")
@click.argument("file", metavar=TEMPLATE_METAVAR)
def template_check(file: str) -> None:
    """Check a map template against the template contract (every problem on its own line).

    A template passes when every segment it covers is drawn once, from its parent's distal end
    (within the join tolerance the verdict states), right-side vessels lie on the viewer's left,
    lengths and diameters are declared and plausible, a silhouette is drawn, and nothing external
    is referenced. A partial map declares what it covers with data-coverage on its root.
    """
    from diagram.drawing.template.mapfile import check_template, load_template, summary_line
    from diagram.errors import TemplateError

    chosen = _template_arg(file)
    problems = check_template(chosen)
    if problems:
        raise TemplateError(problems)
    click.echo(summary_line(load_template(chosen)))


@template.command("list")
def template_list() -> None:
    """List the map templates shipped with limbchart, one line each."""
    from diagram.drawing.template.coverage import describe_coverage
    from diagram.drawing.template.mapfile import load_template, shipped_templates

    names = shipped_templates()
    width = max(len(n) for n in names)
    for name in names:
        t = load_template(name)
        click.echo(
            f"{name:<{width}}  {len(t.vessels):2} vessels  {describe_coverage(t.coverage)}"
            f"  ({t.title})"
        )


@click.group()
def style() -> None:
    """Check a lab's band style for greyscale print and colour-vision deficiency."""


@style.command("check")
@click.argument("lab", required=False, type=click.Path(dir_okay=False, path_type=Path))
def style_check(lab: Path | None) -> None:
    """Measure every band of LAB's style (the default style without LAB) and report clashes.

    Prints the method, the thresholds and each band's greyscale measurements; then exits 0 with
    one "ok" line, or 2 with one line per pair of bands a greyscale print or a colour-vision
    deficiency would merge.
    """
    from diagram.design.stylecheck import (
        CVD_MATRICES,
        StyleCheckError,
        check_style,
        swatch_table,
        threshold_lines,
    )
    from diagram.drawing.labprofile import load_lab_profile
    from diagram.drawing.style import default_style

    if lab is None:
        report = check_style(default_style())
    else:
        profile = load_lab_profile(lab)
        report = check_style(profile.style, source=profile.source, line_of=profile.line)
    for line in (*threshold_lines(), *swatch_table(report.swatches)):
        click.echo(line)
    if report.problems:
        raise StyleCheckError(report.problems)
    click.echo(
        f"ok: {len(report.swatches)} bands; no pair too alike in greyscale; no colour pair "
        f"merged under {', '.join(CVD_MATRICES)}"
    )


@click.command()
@click.option(
    "-o",
    "--output",
    required=True,
    type=click.Path(dir_okay=False, path_type=Path),
    help="The gallery page (.pdf, .svg or .png).",
)
@click.option(
    "--lab",
    type=click.Path(dir_okay=False, path_type=Path),
    help="A lab profile (lab.yaml) whose style, template, page and name to show.",
)
@click.option(
    "--template",
    "template_name",
    metavar=TEMPLATE_METAVAR,
    help="Map template for the specimen (default: the lab's, else the shipped bilateral map).",
)
@overwrite_option
def gallery(output: Path, lab: Path | None, template_name: str | None, overwrite: bool) -> None:
    """Draw one page showing every band and symbol in the current style, for review."""
    from diagram.design.gallery import write_gallery
    from diagram.drawing.labprofile import load_lab_profile

    profile = load_lab_profile(lab) if lab is not None else None
    chosen = _template_arg(template_name) if template_name is not None else None
    written = write_gallery(output, profile, template=chosen, overwrite=overwrite)
    click.echo(f"wrote {written}", err=True)


COMMANDS: tuple[click.Command, ...] = (template, style, gallery)
