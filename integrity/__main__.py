"""``python -m integrity`` runs the command line."""

from .cli import main

main(prog_name="integrity")
