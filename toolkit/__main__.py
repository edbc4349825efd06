"""``python -m toolkit`` runs the command line."""

from toolkit.cli import console

console()
