"""``python -m gapmatch`` runs the command-line interface."""

from .cli import entry

entry()
