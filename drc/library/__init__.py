"""The engineering library: rules/*.toml read into typed records.

Logic families, contact classes, part types and pinouts, default limits
(`catalogue`), and the IEC 60063 preferred-number series (`eseries`).
"""
