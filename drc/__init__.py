"""Design-rule checker for the switch inputs of electronic boards.

The pipeline runs in one direction: read a netlist, classify its parts into a
board, trace every contact-to-receiver path, recognise each path's stage,
analyse the stage at its tolerance corners, check the rules, report.
Heavy libraries are imported lazily so that the command-line gate starts fast.
"""

__version__ = "0.1.0"


def __getattr__(name: str):
    """The public API, imported on first use so `import drc` stays cheap."""
    api = {"check_board": "pipeline", "audit": "pipeline", "check_text": "pipeline",
           "CheckOptions": "pipeline", "board_files": "pipeline"}
    if name in api:
        import importlib
        return getattr(importlib.import_module(f"drc.{api[name]}"), name)
    raise AttributeError(f"module 'drc' has no attribute {name!r}")


__all__ = ["__version__", "check_board", "audit", "check_text", "CheckOptions", "board_files"]
