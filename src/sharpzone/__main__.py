"""``python -m sharpzone`` runs the command line."""

from sharpzone.cli.main import run

run()
