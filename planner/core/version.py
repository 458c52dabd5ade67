"""The one version number of phasewise: packaging reads it (pyproject), the CLI shows it, outputs carry it."""

__version__ = "0.2.0"
