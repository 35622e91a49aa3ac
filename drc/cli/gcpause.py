"""Pausing Python's cyclic garbage collector while the pipeline builds records.

A 100k-element board keeps several hundred thousand small objects alive;
every full collection triggered by our allocations walks all of them, which
measured on such a board tripled the time of tracing and cost a third of the
reader's time. The records the pipeline builds hold no reference cycles, so
nothing is lost by deferring collection to the end of a step.

The pause belongs to the command line, which owns its process: `drc.cli.parser.main`
runs each command inside `collection_paused()`, and the worker processes
of `drc check --jobs N` start with `pause_collection_in_worker`. The Python
API (drc.pipeline) never touches the collector of its host application.
"""

from __future__ import annotations

import gc
from collections.abc import Iterator
from contextlib import contextmanager


@contextmanager
def collection_paused() -> Iterator[None]:
    """Disable the collector inside the block; restore its previous state after."""
    enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if enabled:
            gc.enable()


def pause_collection_in_worker() -> None:
    """Disable the collector for the rest of this process: the initializer of the
    command line's worker processes, whose whole life is checking boards."""
    gc.disable()
