"""Shared plumbing at the bottom of the pipeline: errors, constants, bands, time, TOML, atomic files, formatting, safety wording."""
