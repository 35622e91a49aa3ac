"""One error hierarchy for everything a user can get wrong.

Every error carries enough to point at the cause: a file, and where the
cause is inside a file, a line and a column. The command line maps the whole
hierarchy to exit status 2 and one clean message; nothing below it prints.
The exit statuses themselves are here too (the contract with shells and CI
jobs), and the "did you mean" wording every unknown name gets.
"""

from __future__ import annotations

import difflib
import re
import sys
from collections.abc import Iterable
from dataclasses import dataclass
from enum import IntEnum


class ExitStatus(IntEnum):
    """What a `drc` process exits with."""

    OK = 0  # nothing at or above the fail level
    FINDINGS = 1  # findings at or above the fail level
    ERROR = 2  # bad input, config or usage (any DrcError), a report that could not be written, or an internal error
    HANGUP = 129  # SIGHUP (the terminal went away), as shells report it
    INTERRUPTED = 130  # Ctrl-C, as shells report SIGINT
    TERMINATED = 143  # SIGTERM, as shells report it


def suggest(name: str, candidates: Iterable[str]) -> str | None:
    """The candidate nearest to `name` (difflib), or None when nothing is close."""
    matches = difflib.get_close_matches(name, sorted(candidates), n=1, cutoff=0.6)
    return str(matches[0]) if matches else None  # a plain string, also for StrEnum candidates


def unknown_name_message(kind: str, name: str, candidates: Iterable[str]) -> str:
    """`unknown rule id 'bounce-windw'; did you mean 'bounce-window'?`"""
    candidates = list(candidates)
    nearest = suggest(name, candidates)
    hint = f"; did you mean {nearest!r}?" if nearest else f"; known: {', '.join(sorted(candidates))}"
    return f"unknown {kind} {name!r}{hint}"


# Control characters (C0, DEL, C1) and the Unicode line and paragraph separators.
_UNPRINTABLE = re.compile("[\x00-\x1f\x7f-\x9f\u2028\u2029\udc80-\udcff]")
_ESCAPES = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}


def _escape(match: re.Match[str]) -> str:
    char = match.group()
    code = ord(char)
    if code >= 0xDC80:  # a byte of a name that is not UTF-8, kept by Python as a surrogate
        return f"\\x{code - 0xDC00:02x}"
    return _ESCAPES.get(char) or (f"\\x{code:02x}" if code <= 0xFF else f"\\u{code:04x}")


def printable(text: str) -> str:
    """`text` (a file name, usually) as one printable line: a newline, tab or other
    control character becomes an escape (\\n, \\t, \\x1b) and a byte that is not
    UTF-8 becomes \\xNN, so a strange name can neither split a report's line nor
    stop it from being written."""
    return _UNPRINTABLE.sub(_escape, text) if _UNPRINTABLE.search(text) else text


def long_number(text: str, file: str) -> tuple[str, SourceLocation, str | None]:
    """(message, location, line) for a text whose integer has more digits than the
    interpreter converts (sys.get_int_max_str_digits, 4300 by default): where the
    longest run of digits starts."""
    limit = getattr(sys, "get_int_max_str_digits", lambda: 4300)() or 4300
    runs = list(re.finditer(r"[0-9][0-9_]*", text))
    longest = max(runs, key=lambda m: m.end() - m.start(), default=None)
    message = f"a number has more than {limit} digits (the largest this tool reads)"
    if longest is None:
        return message, SourceLocation(file), None
    before = text[:longest.start()]
    line = before.count("\n") + 1
    column = longest.start() - (before.rfind("\n") + 1) + 1
    source = text.splitlines()[line - 1] if text else None
    if source is not None and len(source) > 200:
        source = None  # the number itself is the line: the location says enough
    return message, SourceLocation(file, line, column), source


@dataclass(frozen=True, slots=True)
class SourceLocation:
    """A 1-based position in an input file."""

    file: str
    line: int = 0
    column: int = 0

    def __str__(self) -> str:
        file = printable(self.file)
        if self.line <= 0:
            return file
        if self.column <= 0:
            return f"{file}:{self.line}"
        return f"{file}:{self.line}:{self.column}"


class DrcError(Exception):
    """Base of every error the tool reports to a user (exit status 2)."""

    def __init__(self, message: str, location: SourceLocation | None = None,
                 source_line: str | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.location = location
        self.source_line = source_line

    def render(self) -> str:
        """`FILE:LINE:COLUMN: message`, then the offending line with a caret."""
        head = f"{self.location}: {self.message}" if self.location else self.message
        if self.source_line is None or not self.location or self.location.line <= 0:
            return head
        text = self.source_line.rstrip("\r\n").expandtabs(1)
        if len(text) > 200:
            start = max(0, self.location.column - 100)
            text = text[start:start + 200]
            caret_at = self.location.column - start
        else:
            caret_at = self.location.column
        caret = " " * max(0, caret_at - 1) + "^" if caret_at > 0 else ""
        return f"{head}\n    {text}\n    {caret}".rstrip()

    def __str__(self) -> str:
        return self.render()


class NetlistError(DrcError):
    """The netlist text is malformed or inconsistent."""


class LimitError(DrcError):
    """A resource limit (include depth, nesting, element count, file size...) was hit."""


class ConfigError(DrcError):
    """A configuration, waiver or baseline file is malformed."""


class UsageError(DrcError):
    """The command line asks for something impossible."""


class LibraryError(DrcError):
    """The engineering data under rules/ is malformed (a bug in a shipped file)."""


class RulePackError(DrcError):
    """An outside rule pack (entry-point group "drc.rules") cannot be loaded."""
