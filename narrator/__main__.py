"""``python -m narrator`` runs the command line."""

from narrator.cli import run

run()
