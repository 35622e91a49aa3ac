"""Design-rule checker for the switch inputs of electronic boards.

The pipeline runs in one direction: read a netlist, classify its parts into a
board, trace every contact-to-receiver path, recognise each path's stage,
analyse the stage at its tolerance corners, check the rules, report.
Heavy libraries are imported lazily so that the command-line gate starts fast.
"""

__version__ = "0.1.0"


# The public API, all in drc.pipeline: check_board(path) -> BoardSummary (its
# .report is the board's BoardReport), audit(paths) -> RunReport, and
# check_netlist_text(text) -> (board, stage results, findings).
_API = ("check_board", "audit", "check_netlist_text", "CheckOptions", "board_files",
        "BoardSummary")


def __getattr__(name: str):
    """The public API, imported on first use so `import drc` stays cheap."""
    if name in _API:
        import importlib
        return getattr(importlib.import_module("drc.pipeline"), name)
    raise AttributeError(f"module 'drc' has no attribute {name!r}")


__all__ = ["__version__", *_API]
