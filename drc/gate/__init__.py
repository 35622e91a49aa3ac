"""The gate: which findings count and what the run exits with.

Rule selection and severities (`selection`), waivers (`waivers`) and
baselines (`baseline`).
"""
