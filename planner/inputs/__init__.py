"""Stage 1, inputs: site, target, campaign and observation-log files, validated on load; the settings types."""
