"""One module per command; each exposes ``register(app)``. Add new commands to COMMAND_MODULES."""

from planner.commands import check, ephem, report

COMMAND_MODULES = [ephem, check, report]
