"""``python -m logbook`` runs the command line."""

from logbook.cli import main

main()
