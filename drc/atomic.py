"""Writing output files safely: never half a file, never over an input.

Reports and baselines are written to a temporary file in the destination's
own folder (so the final rename stays on one filesystem) and moved into
place with os.replace, which is atomic on POSIX and Windows: a reader sees
the old file or the new one, never a mixture. Because input files are never
modified, a destination that resolves to any input file is refused.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterable
from pathlib import Path

from drc.errors import UsageError


def _same_file(a: Path, b: Path) -> bool:
    if a == b:
        return True
    try:
        return a.exists() and b.exists() and os.path.samefile(a, b)
    except OSError:
        return False


# Existing files with these names or suffixes are inputs of some run (netlists,
# included libraries, configs): never replaced, even when a caller forgot to
# list them among its inputs (a config found by discovery, an included file).
INPUT_NAMES = frozenset({"drc.toml", "pyproject.toml"})
INPUT_SUFFIXES = frozenset({".cir", ".sp", ".spice", ".net", ".ckt", ".inc", ".lib", ".mod",
                            ".sub", ".subckt"})


def check_not_input(path: str | os.PathLike, inputs: Iterable[str | os.PathLike]) -> None:
    """Raise UsageError when `path` is one of the input files (also via links), or an
    existing netlist or config file."""
    target = Path(path).resolve()
    for item in inputs:
        if _same_file(target, Path(item).resolve()):
            raise UsageError(f"refusing to write {os.fspath(path)}: it is an input file "
                             f"(input files are never modified); choose another output path")
    if target.exists() and (target.name.lower() in INPUT_NAMES
                            or target.suffix.lower() in INPUT_SUFFIXES):
        raise UsageError(f"refusing to write {os.fspath(path)}: it is an existing netlist or "
                         "config file, an input of some run (input files are never modified); "
                         "choose another output path")


def write_atomic(path: str | os.PathLike, text: str,
                 inputs: Iterable[str | os.PathLike] = ()) -> None:
    """Write `text` (UTF-8, newlines as given) to `path` atomically.

    inputs: every file the run read (netlists, includes, config, baseline
    being applied); writing over one of them is a UsageError.
    """
    check_not_input(path, inputs)
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    try:
        handle = tempfile.NamedTemporaryFile("w", encoding="utf-8", newline="", dir=folder,
                                             prefix=f".{target.name}.", suffix=".tmp", delete=False)
    except OSError as exc:
        raise UsageError(f"cannot write {os.fspath(path)}: {exc.strerror or exc}") from None
    replaced = False
    try:
        with handle:
            handle.write(text)
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(handle.name, target)
        replaced = True
    except OSError as exc:
        raise UsageError(f"cannot write {os.fspath(path)}: {exc.strerror or exc}") from None
    finally:
        # Interrupted (Ctrl-C) or failed: the destination keeps its previous
        # content and no temporary file is left behind.
        if not replaced:
            _discard(handle.name)


def _discard(name: str) -> None:
    try:
        os.unlink(name)
    except OSError:
        pass
