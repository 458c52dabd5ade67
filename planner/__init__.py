"""phasewise: plan photometric campaigns on comets and asteroids from several telescopes.

The import package is ``planner``; the command is ``phasewise``. Computation lives in pure
functions over numpy arrays (see docs/architecture.md); files and printing stay at the edge.
"""

__version__ = "0.1.0"
