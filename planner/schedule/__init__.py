"""Stage 7, schedule: slots, quality, objective, optimiser, baseline, weather robustness, re-planning, block rows."""
