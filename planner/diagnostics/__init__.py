"""Stage 5, diagnostics of any list of times: coverage, spectral window, aliases, periodogram, recovery, sensitivity."""
