"""Design-rule checker for the switch inputs of electronic boards.

The pipeline runs in one direction: read a netlist, classify its parts into a
board, trace every contact-to-receiver path, recognise each path's stage,
analyse the stage at its tolerance corners, check the rules, report.
Heavy libraries are imported lazily so that the command-line gate starts fast.
"""

__version__ = "0.1.0"
