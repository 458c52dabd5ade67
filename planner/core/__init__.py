"""Shared plumbing at the bottom of the pipeline: errors, constants, bands, time, TOML, files, formats, safety."""
