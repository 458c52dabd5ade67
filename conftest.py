# Lets pytest import the ``planner`` package from a plain checkout (no install needed).
