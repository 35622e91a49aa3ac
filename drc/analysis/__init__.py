"""Analysis of recognised stages: levels, edge times and currents at worst case.

`receiver` is the electrical view of one input pin; `physics/` solves circuits
(nodal analysis, exact transients, corners, batches); `stage_analysis` turns a
Stage into the `StageResult` (`results`) that the rules read.
"""
