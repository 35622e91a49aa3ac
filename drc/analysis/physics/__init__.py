"""Circuit physics of a stage: DC nodal analysis, exact transients, corners.

`compiled` compiles a stage circuit into arrays, `mna` solves it (steady
states, Thevenin equivalents, the reduced dynamic system), `transient`
integrates edges exactly and finds threshold crossings, `corners` finds the
worst vertices of the tolerance box, `batch` solves many stages of one shape
together. Nothing here knows about rules or reports, nor imports
`drc.analysis.stage_analysis`, which builds on it.
"""

from drc.analysis.physics.transient import rc_time_to_threshold, rc_voltage

__all__ = ["rc_time_to_threshold", "rc_voltage"]
