"""``python -m cabletheory`` runs the command line."""

from .cli import entry

entry()
