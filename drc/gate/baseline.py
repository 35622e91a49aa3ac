"""Baselines: the findings accepted at a point in time, so that only new ones fail.

A baseline file is JSON ("format": "drc-baseline/1") listing, per finding,
the board, the rule, the contact, the receiver and the passive parts: the
finding's identity, never its line numbers, so the baseline survives edits
that shift lines. Board paths are stored relative to the baseline file's
folder, so the same baseline works from any working directory. This module
reads and writes the file; applying it (which findings it accepts, which
entries are fixed) is a decision of the gate, in drc.gate.decision.
"""

from __future__ import annotations

import codecs
import json
import os
from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path, PurePath
from typing import Any, Protocol

from drc.atomic import write_atomic
from drc.checks.findings import SEVERITIES, Finding, Severity, Suppression
from drc.errors import ConfigError, SourceLocation, long_number
from drc.netlist.lines import read_regular

BASELINE_FORMAT = "drc-baseline/1"
# A baseline of a large audit is megabytes; a fixed cap keeps a wrong path cheap.
MAX_BASELINE_BYTES = 256 * 1024 * 1024
_ENTRY_KEYS = ("board", "rule", "contact", "receiver", "parts", "severity", "message")


@dataclass(frozen=True, slots=True)
class BaselineEntry:
    board: str  # posix path relative to the baseline's folder (or as given)
    rule: str
    contact: str | None
    receiver: str | None
    parts: tuple[str, ...]
    severity: Severity
    message: str

    def identity(self) -> tuple:
        """The same tuple as Finding.identity()."""
        return (self.rule, self.contact or "", self.receiver or "", tuple(sorted(self.parts)))

    def as_json(self) -> dict:
        return {"board": self.board, "rule": self.rule, "contact": self.contact,
                "receiver": self.receiver, "parts": sorted(self.parts),
                "severity": self.severity, "message": self.message}


@dataclass(frozen=True, slots=True)
class Baseline:
    path: str
    root: str  # folder the board paths are relative to
    entries: tuple[BaselineEntry, ...]


def board_key(board: str, root: str | os.PathLike | None) -> str:
    """A board path as a baseline stores it: posix, relative to `root` when possible;
    a byte of the name that is not UTF-8 as \\xNN (text a baseline can hold, and
    the same each time the name is read)."""
    if root is not None:
        try:
            board = os.path.relpath(Path(board).resolve(), Path(root).resolve())
        except ValueError:  # another drive on Windows: keep the absolute path
            board = str(Path(board).resolve())
    key = PurePath(board).as_posix().removeprefix("./")
    return key if key.isascii() else os.fsencode(key).decode("utf-8", "backslashreplace")


def _entry(finding: Finding, root: str | os.PathLike | None) -> BaselineEntry:
    return BaselineEntry(board_key(finding.board, root), finding.rule, finding.contact,
                         finding.receiver, tuple(sorted(finding.parts)), finding.severity,
                         finding.message)


def entry_sort_key(entry: BaselineEntry) -> tuple:
    """Entries in file order: board, identity, severity, message."""
    return (entry.board, entry.identity(), entry.severity, entry.message)


class RunFindings(Protocol):
    """What a baseline is written from: any run that lists its findings (a RunReport)."""

    def findings(self) -> Iterable[Finding]: ...


def baseline_entries(findings: Iterable[Finding], root: str | os.PathLike | None = None
                     ) -> tuple[BaselineEntry, ...]:
    """Entries for the findings to accept: all except those a waiver or annotation covers."""
    chosen = [_entry(f, root) for f in findings if f.suppression in (None, Suppression.BASELINE)]
    return tuple(sorted(chosen, key=entry_sort_key))


def baseline_document(run: RunFindings, root: str | os.PathLike | None = None) -> dict:
    """The JSON document of a baseline accepting every unwaived finding of `run`."""
    return {"format": BASELINE_FORMAT,
            "entries": [e.as_json() for e in baseline_entries(run.findings(), root)]}


def write_baseline(path: str | os.PathLike, run: RunFindings,
                   inputs: Iterable[str | os.PathLike] = ()) -> int:
    """Write the baseline of `run` to `path` atomically (never over an input file);
    the number of findings it recorded."""
    document = baseline_document(run, Path(path).parent)
    text = json.dumps(document, indent=2, sort_keys=True, ensure_ascii=False) + "\n"
    write_atomic(path, text, inputs)
    return len(document["entries"])


def _bad(path: str, message: str, line: int = 0, column: int = 0) -> ConfigError:
    return ConfigError(f"baseline: {message}", SourceLocation(path, line, column))


def _optional_str(value: Any, path: str, where: str) -> str | None:
    if value is None or isinstance(value, str):
        return value
    raise _bad(path, f"{where}: expected a string or null, got {type(value).__name__}")


def load_baseline(path: str | os.PathLike) -> Baseline:
    """Read a baseline file; a malformed one is a located ConfigError."""
    name = os.fspath(path)
    document = _json_document(name, _baseline_text(name))
    if not isinstance(document, dict) or document.get("format") != BASELINE_FORMAT:
        found = document.get("format") if isinstance(document, dict) else None
        raise _bad(name, f"expected \"format\": \"{BASELINE_FORMAT}\", found {found!r}; "
                         f"write a new one with the baseline option")
    raw_entries = document.get("entries")
    if not isinstance(raw_entries, list):
        raise _bad(name, "\"entries\" must be a list")
    entries = tuple(_read_entry(raw, name, f"entries[{i}]") for i, raw in enumerate(raw_entries))
    return Baseline(name, str(Path(path).parent), entries)


def _baseline_text(name: str) -> str:
    """The file's text: UTF-16 with a byte-order mark, else UTF-8 (with or without one)."""
    try:
        data = read_regular(name, name, MAX_BASELINE_BYTES, ConfigError, None)
    except ConfigError as exc:
        raise _bad(name, f"cannot read the file: {exc.message}") from None
    try:
        return data.decode("utf-16") if data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)) \
            else data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        before = data[:exc.start]
        raise _bad(name, f"not UTF-8 text ({exc.reason})", before.count(b"\n") + 1,
                   exc.start - (before.rfind(b"\n") + 1) + 1) from None


def _json_document(name: str, text: str) -> Any:
    try:
        return json.loads(text)
    except RecursionError:
        raise _bad(name, "not valid JSON: arrays or objects nest too deeply") from None
    except json.JSONDecodeError as exc:
        lines = text.splitlines()
        raise ConfigError(f"baseline: not valid JSON: {exc.msg}", SourceLocation(name, exc.lineno, exc.colno),
                          lines[exc.lineno - 1] if exc.lineno <= len(lines) else None) from None
    except ValueError:  # an integer too long to convert (json lets int() raise)
        message, location, source = long_number(text, name)
        raise ConfigError(f"baseline: not valid JSON: {message}", location, source) from None


def _read_entry(raw: Any, name: str, where: str) -> BaselineEntry:
    """One entry of the "entries" list, checked key by key."""
    if not isinstance(raw, dict):
        raise _bad(name, f"{where}: expected an object")
    missing = [k for k in ("board", "rule", "parts") if k not in raw]
    if missing:
        raise _bad(name, f"{where}: missing {', '.join(missing)}")
    unknown = sorted(set(raw) - set(_ENTRY_KEYS))
    if unknown:
        raise _bad(name, f"{where}: unknown key {unknown[0]!r}")
    if not isinstance(raw["board"], str) or not isinstance(raw["rule"], str):
        raise _bad(name, f"{where}: board and rule must be strings")
    parts = raw["parts"]
    if not isinstance(parts, list) or not all(isinstance(p, str) for p in parts):
        raise _bad(name, f"{where}.parts: expected a list of designators")
    severity = raw.get("severity", "error")
    if severity not in SEVERITIES:
        raise _bad(name, f"{where}.severity: expected one of {', '.join(SEVERITIES)}")
    return BaselineEntry(
        raw["board"], raw["rule"], _optional_str(raw.get("contact"), name, where + ".contact"),
        _optional_str(raw.get("receiver"), name, where + ".receiver"), tuple(sorted(parts)),
        Severity(severity), _optional_str(raw.get("message"), name, where + ".message") or "")
