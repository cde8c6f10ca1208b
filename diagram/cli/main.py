"""The ``limbchart`` command line: parse options, call the API, turn tool errors into exit status 2.

No domain logic lives here. Heavy libraries are imported by the commands that need them, so that
``limbchart --help`` stays fast.
"""

from __future__ import annotations

import os
import signal
import sys
import threading
from pathlib import Path
from typing import Any

import click

from diagram._version import __version__
from diagram.caution import CAUTION
from diagram.cli.design import COMMANDS as DESIGN_COMMANDS
from diagram.cli.draw import draw
from diagram.cli.edit import edit
from diagram.cli.importing import import_report
from diagram.cli.options import (
    STUDIES_METAVAR,
    HintedParameter,
    criteria_option,
    is_study_file,
    printable,
    prior_option,
    show_import_notes,
    target_option,
)
from diagram.cli.segments import segments
from diagram.cli.teach import teach


@click.command()
@click.argument(
    "studies", nargs=-1, required=True, metavar=STUDIES_METAVAR, type=click.Path(path_type=Path)
)
@click.option("--json", "as_json", is_flag=True, help="Print the results document as JSON.")
@criteria_option
@target_option
@prior_option
def check(
    studies: tuple[Path, ...],
    as_json: bool,
    criteria: str | None,
    target: str | None,
    prior: Path | None,
) -> None:
    """Validate each STUDY (a file, a folder of files, or a .txt list) and print its grading.

    Prints what draw would put on the sheet: the grading per segment and lesion, the pressure
    indices, the segments not assessed, the warnings and the change since the prior exam. With
    several studies each is headed by its file; a study with problems is reported and the rest
    are checked (exit status 2). --json prints the results document (a list for several).
    """
    from diagram.batch.gather import expand_inputs
    from diagram.errors import DiagramError
    from diagram.output.results import results_document, results_json, results_table

    single = len(studies) == 1 and is_study_file(studies[0])
    if prior is not None and not single:
        raise click.UsageError("--prior goes with one study; in a list each study names its own.")
    if single:
        assessment = _assess_path(studies[0], criteria, target, prior)
        if as_json:  # the bytes draw -o x.json writes
            doc = results_document(assessment, version=__version__)
            click.get_binary_stream("stdout").write(results_json(doc))
        else:
            click.echo(results_table(assessment))
            click.echo(f"\n{CAUTION}")
        return
    failed = 0
    documents: list[dict[str, Any]] = []
    for path in expand_inputs(studies):
        try:
            assessment = _assess_path(path, criteria, target, None)
        except DiagramError as exc:
            failed += 1
            for line in exc.lines():
                click.echo(printable(line), err=True)
            documents.append({"input": str(path), "results": None, "errors": exc.lines()})
            continue
        if as_json:
            doc = results_document(assessment, version=__version__)
            documents.append({"input": str(path), "results": doc, "errors": []})
        else:
            click.echo(printable(f"== {path}"))
            click.echo(results_table(assessment) + "\n")
    if as_json:  # UTF-8 as one study's document is (results_json)
        click.get_binary_stream("stdout").write(results_json(documents))
    else:
        click.echo(CAUTION)
    if failed:
        raise SystemExit(2)


def _assess_path(path: Path, criteria: str | None, target: str | None, prior: Path | None) -> Any:
    """Return the assessment of one study file (with its prior, or ``prior`` instead)."""
    from diagram.inputs import assess_file
    from diagram.reading.load import load_study

    current = load_study(path)
    show_import_notes(current.import_notes)
    return assess_file(current, criteria=criteria, target=target, prior=prior)


@click.group()
def criteria() -> None:
    """List and show criteria sets (shipped, or a lab's own file)."""


@criteria.command("list")
def criteria_list() -> None:
    """List the shipped criteria sets."""
    from diagram.criteria import load_criteria, shipped_names

    sets = [load_criteria(name) for name in shipped_names()]
    name_w = max(len("name"), *(len(c.name) for c in sets))
    kind_w = max(len("applies to"), *(len(c.kind) for c in sets))
    click.echo(f"{'name':<{name_w}}  {'applies to':<{kind_w}}  title")
    for crit in sets:
        click.echo(f"{crit.name:<{name_w}}  {crit.kind:<{kind_w}}  {crit.title}")


@criteria.command("show")
@click.argument("name_or_path")
def criteria_show(name_or_path: str) -> None:
    """Print a criteria set (a shipped NAME or a lab file PATH) as a table, with its sources."""
    from diagram.criteria import criteria_table, load_criteria

    click.echo(criteria_table(load_criteria(name_or_path)))


@click.command()
@click.option("--results", is_flag=True, help="Print the schema of the results document instead.")
@click.option("--lab", is_flag=True, help="Print the schema of a lab profile (lab.yaml) instead.")
def schema(results: bool, lab: bool) -> None:
    """Print the JSON Schema of the study file (or of the results document, or a lab profile)."""
    import json

    if results and lab:
        raise click.UsageError("give --results or --lab, not both.")
    if lab:
        from diagram.drawing.labprofile import lab_profile_schema

        click.echo(json.dumps(lab_profile_schema(), indent=2))
        return
    if results:
        from diagram.output.results import results_schema

        click.echo(json.dumps(results_schema(), indent=2))
        return
    from diagram.reading.load import study_schema

    click.echo(json.dumps(study_schema(), indent=2))


# Every command of the tool, registered here and nowhere else.
@click.group(
    commands=[
        draw,
        check,
        criteria,
        schema,
        segments,
        teach,
        import_report,
        edit,
        *DESIGN_COMMANDS,
    ],
    context_settings={"help_option_names": ["-h", "--help"], "max_content_width": 100},
    epilog=CAUTION,
)
@click.version_option(__version__, prog_name="limbchart")
def cli() -> None:
    """Draw graded leg-artery maps from arterial duplex findings.

    Reads a study file (YAML or JSON), computes velocity ratios and stenosis bands with a
    published criteria set, and draws the bilateral map. Output formats: SVG, PDF, PNG, DICOM
    (.dcm, Encapsulated PDF), JSON (the computed results) and FHIR (.fhir.json, an HL7 FHIR R4
    Bundle).
    """


class Interrupted(KeyboardInterrupt):
    """A stop signal (SIGINT or SIGTERM) taking the Ctrl-C path; ``signum`` says which."""

    def __init__(self, signum: int) -> None:
        super().__init__(signal.Signals(signum).name)
        self.signum = signum


class _StopSignals:
    """While active, turn the first SIGINT or SIGTERM into :class:`Interrupted`.

    A later signal is only noted, so that the cleanup the first one started (a batch finishing
    its studies in progress, temporary files removed) is not cut short. Handlers are installed
    only in the main thread and restored on exit.
    """

    SIGNALS = (signal.SIGINT, signal.SIGTERM)

    def __init__(self) -> None:
        self.signum: int | None = None
        self._pid = os.getpid()
        self._previous: dict[int, Any] = {}

    def __enter__(self) -> _StopSignals:
        if threading.current_thread() is threading.main_thread():
            for signum in self.SIGNALS:
                self._previous[signum] = signal.signal(signum, self._handle)
        return self

    def __exit__(self, kind: type[BaseException] | None, *rest: object) -> bool:
        for signum, handler in self._previous.items():
            signal.signal(signum, handler if handler is not None else signal.SIG_DFL)
        # an interrupt that arrived after the command's own status was settled
        return kind is not None and issubclass(kind, KeyboardInterrupt)

    def _handle(self, signum: int, frame: object) -> None:
        if os.getpid() != self._pid:  # a forked worker that has not set its own handlers yet
            os._exit(128 + signum)
        if self.signum is None:
            self.signum = signum
            raise Interrupted(signum)

    def status(self, code: int | str | None) -> int | str | None:
        """Return the exit status: 128 + the signal number after a stop signal."""
        return 128 + self.signum if self.signum is not None else code


def _usage_line(exc: click.UsageError) -> str:
    """Return a command-line mistake as one line, with where to read the command's options.

    The refusals written for this tool carry their own hint; click's own (an unknown option, a
    missing argument, a value not among the choices) get the command's ``--help`` as the hint.
    """
    message = " ".join(exc.format_message().split())
    own = type(exc) is click.UsageError and not message.startswith("No such command")
    if own or isinstance(exc, HintedParameter) or exc.ctx is None:
        return f"Error: {message}"
    return f"Error: {message} (see {exc.ctx.command_path} --help)"


def _tool_error(exc: Exception) -> int:
    """Print a tool error one line per problem and return its exit status; re-raise a bug."""
    from diagram.errors import DiagramError  # imported here: ``--help`` needs none of it

    if not isinstance(exc, DiagramError):
        raise exc
    for line in exc.lines():
        click.echo(printable(line), err=True)
    return exc.exit_code


def main(args: list[str] | None = None, prog_name: str | None = None) -> None:
    """Run the command line; a tool error prints one line per problem and exits with status 2.

    SIGTERM takes the same path as Ctrl-C: nothing partial is left, a batch prints its summary,
    and the exit status is 128 + the signal number (130 for SIGINT, 143 for SIGTERM).
    """
    code: int | str | None = 130  # if a stop signal cuts in before a status is settled
    with _StopSignals() as stop:
        try:
            try:
                result: Any = cli.main(
                    args=args, prog_name=prog_name or "limbchart", standalone_mode=False
                )
                code = result if isinstance(result, int) else 0
            except click.exceptions.Abort:  # Ctrl-C or SIGTERM inside a command
                click.echo("interrupted", err=True)
                code = 130
            except click.UsageError as exc:
                click.echo(printable(_usage_line(exc)), err=True)
                code = exc.exit_code
            except click.ClickException as exc:
                exc.show()
                code = exc.exit_code
            except Exception as exc:
                code = _tool_error(exc)
            except SystemExit as exc:  # a command's own status, e.g. a batch's summary
                code = exc.code
        except KeyboardInterrupt:  # a stop signal while a message above was printed
            click.echo("interrupted", err=True)
            code = 130
    sys.exit(stop.status(code))
