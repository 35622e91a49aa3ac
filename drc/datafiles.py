"""Where the shipped grammar and engineering data live.

In the repository they are the top-level folders grammars/ and rules/; in an
installed wheel they are copied to drc/_data/. Code asks here, never guesses.
"""

from __future__ import annotations

from functools import cache
from pathlib import Path

_PACKAGE = Path(__file__).resolve().parent


@cache
def data_folder(name: str) -> Path:
    """The folder `grammars` or `rules`, installed or in the source tree."""
    for candidate in (_PACKAGE / "_data" / name, _PACKAGE.parent / name):
        if candidate.is_dir():
            return candidate
    raise FileNotFoundError(f"drc installation is missing its {name}/ folder")


def grammar_path(name: str = "spice.lark") -> Path:
    return data_folder("grammars") / name


def rules_path(name: str) -> Path:
    return data_folder("rules") / name
