"""One module per command; each exposes ``register(app)``. Add new commands to COMMAND_MODULES."""

from planner.commands import check, demo, ephem, init, plan, report, validate, windows

COMMAND_MODULES = [ephem, windows, check, plan, report, demo, init, validate]
