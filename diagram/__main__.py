"""``python -m diagram`` runs the same command line as ``limbchart``."""

from diagram.cli.main import main

main(prog_name="limbchart")
