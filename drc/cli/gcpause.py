"""Pausing Python's cyclic garbage collector while the pipeline builds records.

A 100k-element board keeps several hundred thousand small objects alive;
every full collection triggered by our allocations walks all of them, which
measured on such a board tripled the time of tracing and cost a third of the
reader's time. The records the pipeline builds hold no reference cycles, so
nothing is lost by deferring collection to the end of a step. Ending the
pause must not cost what the pause saved: the first collection after it
would walk every object the block made (0.13 s of a 2.6 s check at 100k
elements), so they are frozen while the collector is switched back on and
then put back in the oldest generation, which only a full collection walks.

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
            gc.freeze()  # every tracked object out of the young generations (and the count reset) ...
            gc.enable()
            gc.unfreeze()  # ... and into the oldest: none is left out of collection for good


def pause_collection_in_worker() -> None:
    """Disable the collector for the rest of this process: the initializer of the
    command line's worker processes, whose whole life is checking boards."""
    gc.disable()
