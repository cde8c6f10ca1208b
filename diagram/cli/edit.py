"""``limbchart edit``: the local browser editor for one study (the work is in diagram.editor)."""

from __future__ import annotations

import importlib.util
from pathlib import Path

import click

from diagram.errors import ExportError

INSTALL_HINT = "the editor needs its optional packages: pip install 'limbchart[edit]'"


def _missing(module: str) -> bool:
    try:
        return importlib.util.find_spec(module) is None
    except ModuleNotFoundError:  # a dotted name whose parent package is not there
        return True


@click.command()
@click.argument("study", required=False, type=click.Path(dir_okay=False, path_type=Path))
@click.option(
    "--port",
    type=click.IntRange(0, 65535),
    default=0,
    show_default=True,
    help="Port to listen on (0: any free port).",
)
@click.option(
    "--host",
    default="127.0.0.1",
    show_default=True,
    help="Address to listen on; anything but 127.0.0.1 lets other machines reach the editor.",
)
@click.option("--no-browser", is_flag=True, help="Print the address; do not open a browser.")
def edit(study: Path | None, port: int, host: str, no_browser: bool) -> None:
    """Edit a STUDY on its map in the browser (a new study when STUDY is left out or not there yet).

    Prints the editor's address (with its access token) as the first line, opens it in the
    default browser, and serves until Ctrl-C. Only this study file is read and written.
    """
    missing = [m for m in ("starlette", "uvicorn", "ruamel.yaml") if _missing(m)]
    if missing:
        raise click.ClickException(f"{INSTALL_HINT} ({' and '.join(missing)} missing).")
    from diagram.editor.serve import LOOPBACK, Address, bind, serve
    from diagram.editor.study_edit import open_study

    edited = open_study(study)
    try:
        sock = bind(host, port)
    except OSError as exc:
        raise ExportError(f"{host}:{port}: cannot listen there: {exc.strerror}.") from None
    if host != LOOPBACK:
        click.echo(
            f"warning: listening on {host}, not only on this machine: anyone who can reach it "
            "and has the address can read and change the study.",
            err=True,
        )

    def ready(address: Address) -> None:
        click.echo(address.url)
        if not no_browser:
            import webbrowser

            webbrowser.open(address.url)
        click.echo("editing; press Ctrl-C to stop.", err=True)

    serve(edited, sock, on_ready=ready)
    click.echo("stopped.", err=True)
