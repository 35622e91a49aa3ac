"""Results kept on disk between runs, and never trusted blindly.

Re-checking an unchanged board should cost next to nothing, so a run keeps
each board's report record (and the parsed rule library) in the user's cache
folder (platformdirs; `DRC_CACHE_DIR` overrides it, which the tests use),
under a key that is a digest of everything the result depends on. The
caller builds the key's material; this module digests it, adds the tool's
own fingerprint (its version and the size and time of every source file, so
an edited checkout never reads what older code wrote), and stores and loads
entries.

An entry is one file: a header line (format tag, kind, the full key, a
SHA-256 of the payload, and the files the result was read from with their
own digests) and the payload. Loading checks all of it (a damaged,
truncated, foreign or stale entry is a miss, never an error) and re-hashes
the listed files, so a change to an included file misses too. The payload
is JSON in a typed form read by `decode`, which builds only the frozen
records and enums of the drc package (by name, checked to be a dataclass or
an enum defined in drc) and plain data: no pickle, no code named by the
file is ever run. Writing is best effort (temp file and rename); a cache
folder that cannot be written simply caches nothing.
"""

from __future__ import annotations

import dataclasses
import hashlib
import importlib
import math
import os
import stat
import sys
import tempfile
from collections.abc import Callable, Iterable
from datetime import date
from enum import Enum
from pathlib import Path, PurePath
from typing import Any

from drc import __version__
from drc.caching import memoized

FORMAT = "drc-cache/1"
CACHE_ENV = "DRC_CACHE_DIR"
# The cache of one kind is pruned back to three quarters of this, least recently
# used entries first, at most once an hour (when an entry is stored).
MAX_CACHE_BYTES = 1 << 30
PRUNE_EVERY_S = 3600.0
_PACKAGE = Path(__file__).resolve().parent


def cache_folder() -> Path:
    """`$DRC_CACHE_DIR`, else the user's cache folder for drc (platformdirs)."""
    override = os.environ.get(CACHE_ENV)
    if override:
        return Path(override)
    import platformdirs
    return Path(platformdirs.user_cache_dir("drc", appauthor=False))


@memoized(1)
def tool_fingerprint() -> str:
    """The version, the Python running it, and every source file's name, size and time."""
    digest = hashlib.sha256(f"{__version__}\0{sys.version}\0{_PACKAGE}".encode())
    for folder, dirs, files in os.walk(_PACKAGE):
        dirs[:] = sorted(d for d in dirs if d != "__pycache__")
        for name in sorted(files):
            if name.endswith((".py", ".lark", ".toml", ".j2", ".css")):
                stat = os.stat(os.path.join(folder, name))
                digest.update(f"{folder}/{name}\0{stat.st_size}\0{stat.st_mtime_ns}\0".encode())
    return digest.hexdigest()


def file_digest(path: str | os.PathLike) -> str:
    """SHA-256 of a regular file's bytes; OSError for anything else (a FIFO or a
    device is never read here: opened without blocking, refused by its type)."""
    fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    try:
        if not stat.S_ISREG(os.fstat(fd).st_mode):
            raise OSError(f"{os.fspath(path)}: not a regular file")
        with os.fdopen(fd, "rb", closefd=False) as handle:
            return hashlib.file_digest(handle, "sha256").hexdigest()
    finally:
        os.close(fd)


def folder_digest(folder: Path, pattern: str = "*.toml") -> str:
    """A digest of the names and bytes of the folder's files matching `pattern`."""
    digest = hashlib.sha256()
    for path in sorted(folder.glob(pattern)):
        digest.update(path.name.encode() + b"\0" + file_digest(path).encode() + b"\0")
    return digest.hexdigest()


def make_key(kind: str, material: Iterable[object]) -> str:
    """The key of an entry: a digest of its kind, the tool's fingerprint and `material`
    (each item by its repr: give plain values)."""
    digest = hashlib.sha256(f"{FORMAT}\0{kind}\0{tool_fingerprint()}".encode())
    for item in material:
        digest.update(b"\0" + repr(item).encode())
    return digest.hexdigest()


# ------------------------------------------------------------------ entries

def _entry_path(kind: str, key: str) -> Path:
    return cache_folder() / kind / key[:2] / f"{key}.json"


def load(kind: str, key: str) -> Any | None:
    """The value stored under `key`, or None (no entry, or one that fails any check)."""
    import orjson
    try:
        with open(_entry_path(kind, key), "rb") as handle:
            data = handle.read()
        head, sep, payload = data.partition(b"\n")
        if not sep:
            return None
        header = orjson.loads(head)
        if (type(header) is not dict or header.get("format") != FORMAT or header.get("kind") != kind
                or header.get("key") != key or header.get("sha256") != hashlib.sha256(payload).hexdigest()):
            return None
        for path, digest in header.get("files", ()):
            if file_digest(path) != digest:
                return None
        value = decode(orjson.loads(payload))
    except Exception:  # a damaged or foreign entry is a miss, whatever is wrong with it
        return None
    try:
        os.utime(_entry_path(kind, key))  # used now: pruned last
    except OSError:
        pass
    return value


def store(kind: str, key: str, value: Any, files: Iterable[str] = ()) -> bool:
    """Keep `value` under `key` (with the digests of `files`, checked on loading);
    False when it could not be encoded or written (nothing is kept then)."""
    import orjson
    try:
        payload = orjson.dumps(encode(value))
        header = {"format": FORMAT, "kind": kind, "key": key,
                  "sha256": hashlib.sha256(payload).hexdigest(),
                  "files": [[str(f), file_digest(f)] for f in files]}
        target = _entry_path(kind, key)
        target.parent.mkdir(parents=True, exist_ok=True)
        fd, temp = tempfile.mkstemp(dir=target.parent, prefix=".entry.", suffix=".tmp")
        try:
            with os.fdopen(fd, "wb") as handle:
                handle.write(orjson.dumps(header) + b"\n" + payload)
            os.replace(temp, target)
        except BaseException:
            os.unlink(temp)
            raise
        prune(kind)
        return True
    except Exception:  # best effort: a read-only or full cache folder caches nothing
        return False


def prune(kind: str, limit: int | None = None, force: bool = False) -> None:
    """Delete the least recently used entries of `kind` until they take at most three
    quarters of `limit` bytes (default MAX_CACHE_BYTES); at most once per
    PRUNE_EVERY_S unless `force`."""
    import time
    limit = MAX_CACHE_BYTES if limit is None else limit
    folder = cache_folder() / kind
    marker = folder / ".pruned"
    try:
        if not force and time.time() - marker.stat().st_mtime < PRUNE_EVERY_S:
            return
    except OSError:
        pass
    marker.touch()
    entries: list[tuple[float, int, str]] = []
    for sub in os.scandir(folder):
        if sub.is_dir(follow_symlinks=False):
            for entry in os.scandir(sub.path):
                if entry.name.endswith(".json") and entry.is_file(follow_symlinks=False):
                    info = entry.stat(follow_symlinks=False)
                    entries.append((info.st_mtime, info.st_size, entry.path))
    total = sum(size for _, size, _ in entries)
    if total <= limit:
        return
    for _, size, path in sorted(entries):
        if total <= limit * 3 // 4:
            break
        try:
            os.unlink(path)
            total -= size
        except OSError:
            pass


# ------------------------------------------------------------------ typed JSON

def encode(value: Any) -> Any:
    """`value` as JSON data that `decode` turns back into an equal value.

    Handles None, bool, int, str, float (non-finite too; a subclass such as numpy's
    float64 as the plain float it equals), list, tuple, dict,
    set, frozenset, date, paths, enums and dataclasses of the drc package;
    TypeError for anything else. A record met again (the same object: one
    receiver's data shared by a thousand stages) is written once and then
    referred to by its number, so the entry stays small and reads back shared.
    """
    return _Encoder().value(value)


def decode(data: Any) -> Any:
    """The value `encode` wrote (ValueError, TypeError, KeyError or IndexError on anything else)."""
    return _Decoder().value(data)


def _class_name(kind: type) -> str:
    if not kind.__module__.startswith("drc.") or "<" in kind.__qualname__:
        raise TypeError(f"not a drc record: {kind.__module__}.{kind.__qualname__}")
    return f"{kind.__module__}:{kind.__qualname__}"


# type -> ("record", name, fields) | ("enum", name) | ("set", tag) | ("date",) | ("path",)
_KINDS: dict[type, tuple] = {}


def _kind_of(kind: type) -> tuple:
    known = _KINDS.get(kind)
    if known is None:
        if issubclass(kind, Enum):
            known = ("enum", _class_name(kind))
        elif dataclasses.is_dataclass(kind):
            known = ("record", _class_name(kind), tuple(f.name for f in dataclasses.fields(kind)))
        elif issubclass(kind, (set, frozenset)):
            known = ("set", "~s" if issubclass(kind, frozenset) else "~S")
        elif kind is date:
            known = ("date",)
        elif issubclass(kind, PurePath):
            known = ("path",)
        else:
            raise TypeError(f"cannot keep a {kind.__name__} in the cache")
        _KINDS[kind] = known
    return known


class _Encoder:
    """One encoding: the records written so far, numbered in the order they were finished."""

    __slots__ = ("numbers", "alive")

    def __init__(self) -> None:
        self.numbers: dict[int, int] = {}  # id(record) -> its number
        self.alive: list[object] = []  # keeps each numbered record alive (so its id stays its own)

    def value(self, value: Any) -> Any:
        kind = type(value)
        if kind is str or kind is int or kind is bool or value is None:
            return value
        if kind is float:
            return value if math.isfinite(value) else {"~f": repr(value)}
        if isinstance(value, float):  # a float subclass (numpy's float64): kept as the float it equals
            return self.value(float(value))
        if kind is list:
            return [self.value(v) for v in value]
        if kind is tuple:
            return {"~t": [self.value(v) for v in value]}
        if kind is dict:
            return {"~m": [[self.value(k), self.value(v)] for k, v in value.items()]}
        known = _kind_of(kind)
        tag = known[0]
        if tag == "record":
            return self.record(value, known[1], known[2])
        if tag == "enum":
            return {"~e": known[1], "v": value.value}
        if tag == "set":
            return {known[1]: [self.value(x) for x in value]}
        if tag == "date":
            return {"~date": value.isoformat()}
        return {"~p": str(value)}

    def record(self, value: Any, name: str, fields: tuple[str, ...]) -> Any:
        number = self.numbers.get(id(value))
        if number is not None:
            return {"~r": number}
        data = {"~d": name, "v": [self.value(getattr(value, f)) for f in fields]}
        self.numbers[id(value)] = len(self.alive)
        self.alive.append(value)
        return data


_CLASSES: dict[str, tuple[type, tuple[str, ...] | None]] = {}


def _record_class(name: str) -> tuple[type, tuple[str, ...] | None]:
    """The drc dataclass or enum called `name` ("module:Qualname") and its fields;
    ValueError for any other name."""
    known = _CLASSES.get(name)
    if known is not None:
        return known
    module, _, qualname = name.partition(":")
    # Only drc's own modules, never a private one (drc.cli.__main__ would run the program).
    parts = module.split(".")
    if parts[0] != "drc" or not all(p.isidentifier() and not p.startswith("_") for p in parts[1:]) \
            or not qualname.isidentifier():
        raise ValueError(f"not a drc record: {name}")
    kind = getattr(importlib.import_module(module), qualname)
    if not isinstance(kind, type) or kind.__module__ != module:
        raise ValueError(f"not a drc record: {name}")
    if issubclass(kind, Enum):
        found: tuple[type, tuple[str, ...] | None] = (kind, None)
    elif dataclasses.is_dataclass(kind):
        found = (kind, tuple(f.name for f in dataclasses.fields(kind)))
    else:
        raise ValueError(f"not a drc record: {name}")
    _CLASSES[name] = found
    return found


_new = object.__new__
_set = object.__setattr__


def _float(text: str) -> float:
    if text not in ("nan", "inf", "-inf"):
        raise ValueError("not a float")
    return float(text)


class _Decoder:
    """One decoding: the records read so far, numbered as `_Encoder` numbered them."""

    __slots__ = ("records", "tags")

    def __init__(self) -> None:
        self.records: list[object] = []
        # tag -> how to read its value (records and enums, with two keys, are read apart)
        self.tags: dict[str, Callable[[Any], Any]] = {
            "~r": self.reference,
            "~t": lambda v: tuple(self.value(x) for x in v),
            "~m": lambda v: {self.value(k): self.value(x) for k, x in v},
            "~f": _float,
            "~s": lambda v: frozenset(self.value(x) for x in v),
            "~S": lambda v: {self.value(x) for x in v},
            "~date": date.fromisoformat,
            "~p": Path,
        }

    def value(self, data: Any) -> Any:
        kind = type(data)
        if kind is list:
            return [self.value(v) for v in data]
        if kind is not dict:
            if data is None or kind is str or kind is int or kind is float or kind is bool:
                return data
            raise TypeError(f"unexpected {kind.__name__}")
        if len(data) == 2:
            if "~d" in data:
                return self.record(data)
            if "~e" in data:
                return self.enum(data)
        if len(data) == 1:
            ((tag, value),) = data.items()
            return self.tags[tag](value)
        raise ValueError("unknown tag")

    def reference(self, number: Any) -> object:
        if type(number) is not int or number < 0:
            raise ValueError("not a record number")
        return self.records[number]

    def record(self, data: dict) -> object:
        cls, fields = _record_class(data["~d"])
        values = data["v"]
        if fields is None or type(values) is not list or len(values) != len(fields):
            raise ValueError("a record does not match its class")
        decoded = [self.value(v) for v in values]
        record: object = _new(cls)
        for field, value in zip(fields, decoded, strict=True):
            _set(record, field, value)
        self.records.append(record)
        return record

    def enum(self, data: dict) -> object:
        cls, fields = _record_class(data["~e"])
        if fields is not None:
            raise ValueError("not an enum")
        return cls(data["v"])
