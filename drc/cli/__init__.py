"""The `drc` command line (argument parsing in `parser`, sub-commands in `commands`)."""

from drc.cli.parser import main

__all__ = ["main"]
