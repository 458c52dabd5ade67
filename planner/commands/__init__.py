"""One module per command; each exposes ``register(app)``. Add new commands to COMMAND_MODULES."""

from planner.commands import check, demo, ephem, fit, init, plan, report, validate, windows

COMMAND_MODULES = [ephem, windows, check, fit, plan, report, demo, init, validate]
