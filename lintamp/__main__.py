"""``python -m lintamp`` runs the command line."""

from lintamp.cli import run

run()
