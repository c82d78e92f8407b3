"""``python -m prismfab`` runs the command line."""

from prismfab.cli import entry

entry()
