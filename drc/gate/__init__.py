"""The gate: which findings count and what the run exits with.

Every decision (rule selection, severities, waivers and annotations, the
baseline, the fail level, the exit status) lives in `decision`; `baseline`
reads and writes the baseline file those decisions use.
"""
