"""``python -m planner`` runs the ``phasewise`` command."""

from planner.cli import main

main()
