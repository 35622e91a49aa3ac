"""Config entries scoped to boards: one config file at a repository's root serves many boards.

A `[[contacts]]`, `[[parts]]` or `[[mcu]]` entry may name the boards it is
for (`board = "panels/*.cir"` or a list of globs); without it an entry
applies to every board the config reaches. A designator such as U5 means a
different part on every board, so an unscoped entry that re-defines a part
is a trap (one board's 74HC04 turned into a microcontroller, hiding a
contact); scoping keeps each entry on its own boards, and the board
classification warns when an entry overrides a part number written in the
netlist (drc.board.overrides).

A glob is matched, case-insensitively, against the board's path relative to
the config file's folder, against the path as given, and (a glob without a
slash) against the file name alone.
"""

from __future__ import annotations

import os
from collections.abc import Iterable
from dataclasses import replace
from fnmatch import fnmatchcase
from pathlib import Path, PurePath

from drc.config.settings import Config


def board_candidates(board_path: str, config_path: str | None) -> tuple[str, ...]:
    """The spellings of a board's path a glob may match (posix, case-folded)."""
    path = PurePath(board_path).as_posix()
    out = [path, path.removeprefix("./"), PurePath(path).name]
    if config_path:
        try:
            relative = os.path.relpath(Path(board_path).resolve(), Path(config_path).resolve().parent)
        except ValueError:  # another drive
            relative = None
        if relative is not None and not relative.startswith(".."):
            out.append(PurePath(relative).as_posix())
    return tuple(dict.fromkeys(c.casefold() for c in out))


def applies_to(globs: Iterable[str] | None, board_path: str, config_path: str | None) -> bool:
    """Whether an entry with these board globs applies to the board (None: every board)."""
    if globs is None:
        return True
    candidates = board_candidates(board_path, config_path)
    name = PurePath(board_path).name.casefold()
    for glob in globs:
        pattern = glob.replace("\\", "/").casefold()
        if "/" not in pattern and fnmatchcase(name, pattern):
            return True
        if any(fnmatchcase(c, pattern) for c in candidates):
            return True
    return False


def for_board(config: Config, board_path: str) -> Config:
    """The config as one board sees it: entries scoped to other boards left out."""
    scoped = [entry for entries in (config.contacts, config.parts, config.mcus) for entry in entries
              if entry.boards is not None]
    if not scoped:
        return config

    def keep(entries):
        return tuple(e for e in entries if applies_to(e.boards, board_path, config.path))

    return replace(config, contacts=keep(config.contacts), parts=keep(config.parts), mcus=keep(config.mcus))
