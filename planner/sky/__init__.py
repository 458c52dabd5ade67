"""Stage 2, sky: the bundled planetary ephemeris, orbit propagation, brightness laws and the target's geometry."""
