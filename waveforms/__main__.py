"""``python -m waveforms`` runs the command-line tool."""

from .cli import main

main()
