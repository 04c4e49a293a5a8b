"""``python -m zwitter`` runs the command line."""

from .cli import main

main()
