"""``python -m integrity`` runs the command line."""

from integrity.cli import main

main(prog_name="integrity")
