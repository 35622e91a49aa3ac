"""Writing output safely: never half a file, never over an input, never over a device.

A report or baseline replaces a regular file atomically: it is written to a
temporary file in the destination's own folder (the final rename stays on
one filesystem) and moved into place with os.replace, so a reader sees the
old file or the new one, never a mixture, and an interrupted or failed run
leaves the old file and no temporary one. The replaced file keeps its
permission bits. Anything else at the destination is handled for what it
is, because a rename would destroy it:

- a symbolic link is followed: its target is replaced (the link stays), and
  a dangling link's target is created;
- a character device (/dev/null, /dev/full, a terminal) or a FIFO is written
  through, in place;
- a folder, a block device or a socket is refused with a message.

Input files are never modified, so a destination that resolves to any
input file, or an existing netlist or config, is refused too.

Text leaves the tool through this module's "drc-plain" codec error handler
(registered on import): characters the output cannot encode become plain
ASCII (Ω -> ohm, µ -> u, → -> ->, box drawing -> - | +, others \\uXXXX), and
a byte of a file name that is not UTF-8 (held as a lone surrogate) becomes
the replacement character, valid in JSON and XML alike. Standard output and
error use it too (drc.cli.process), so an ASCII or Latin-1 console never
meets a character it cannot print.
"""

from __future__ import annotations

import codecs
import errno
import os
import secrets
import stat
from collections.abc import Iterable
from enum import StrEnum
from pathlib import Path

from drc.errors import UsageError, printable

# ------------------------------------------------------------------ plain text

PLAIN_ERRORS = "drc-plain"  # the codec error handler registered below

# What a character becomes where the output encoding lacks it.
PLAIN_SYMBOLS = {
    "\u2126": "ohm", "\u03a9": "ohm", "µ": "u", "μ": "u", "τ": "tau", "°": " deg", "±": "+/-",
    "×": "x", "·": ".", "−": "-", "–": "-", "—": "--", "…": "...", "≈": "~", "≥": ">=",
    "≤": "<=", "≠": "!=", "∞": "inf", "→": "->", "←": "<-", "↑": "^", "↓": "v", "↔": "<->",
    "‘": "'", "’": "'", "“": '"', "”": '"', "•": "*", "✓": "ok", "✗": "x", "✔": "ok",
    "✘": "x", "⚑": "!", "\u00a0": " ",
}


def _plain_symbol(char: str) -> str:
    """ASCII for `char` (codecs take only ASCII text from an error handler)."""
    code = ord(char)
    if char in PLAIN_SYMBOLS:
        return PLAIN_SYMBOLS[char]
    if 0x2500 <= code <= 0x257F:  # box drawing: lines and their joints
        name = _box_name(char)
        if "HORIZONTAL" in name and "VERTICAL" not in name:
            return "-"
        if "VERTICAL" in name and "HORIZONTAL" not in name:
            return "|"
        return "+"
    if 0x2580 <= code <= 0x259F:  # block elements (bars)
        return "#"
    if code <= 0xFFFF:
        return f"\\u{code:04x}"
    high, low = divmod(code - 0x10000, 0x400)  # a UTF-16 pair: also a valid JSON escape
    return f"\\u{0xD800 + high:04x}\\u{0xDC00 + low:04x}"


def _replacement(encoding: str) -> bytes:
    try:
        return "\ufffd".encode(encoding)
    except (UnicodeError, LookupError):
        return b"?"


def _box_name(char: str) -> str:
    import unicodedata
    return unicodedata.name(char, "")


def _plain(error: UnicodeError) -> tuple[bytes, int]:
    if not isinstance(error, UnicodeEncodeError):
        raise error
    # Bytes of a file name that is not UTF-8 (Python holds them as lone
    # surrogates) become the replacement character, valid in every format;
    # people see the bytes themselves (drc.errors.printable writes \xNN).
    out = b"".join(_replacement(error.encoding) if 0xD800 <= ord(char) <= 0xDFFF
                   else _plain_symbol(char).encode("ascii")
                   for char in error.object[error.start:error.end])
    return out, error.end


codecs.register_error(PLAIN_ERRORS, _plain)


# ------------------------------------------------------------------ destinations

class Destination(StrEnum):
    """What an output path holds, and so how it is written."""

    NEW = "new"            # nothing yet: created (atomically)
    REGULAR = "regular"    # a regular file: replaced atomically, permission bits kept
    STREAM = "stream"      # a character device or a FIFO: written through in place


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


def _cannot(path: str | os.PathLike, exc: OSError) -> UsageError:
    return UsageError(f"cannot write {printable(os.fspath(path))}: {exc.strerror or exc}")


def check_not_input(path: str | os.PathLike, inputs: Iterable[str | os.PathLike]) -> None:
    """Raise UsageError when `path` is one of the input files (also via links), or an
    existing netlist or config file."""
    try:
        target = Path(path).resolve()
        for item in inputs:
            if _same_file(target, Path(item).resolve()):
                raise UsageError(f"refusing to write {printable(os.fspath(path))}: it is an input "
                                 "file (input files are never modified); choose another output path")
        existing = target.exists()
    except OSError as exc:  # a name too long, a loop of links: nothing can be written there
        raise _cannot(path, exc) from None
    if existing and (target.name.lower() in INPUT_NAMES or target.suffix.lower() in INPUT_SUFFIXES):
        raise UsageError(f"refusing to write {printable(os.fspath(path))}: it is an existing "
                         "netlist or config file, an input of some run (input files are never "
                         "modified); choose another output path")


def destination(path: str | os.PathLike) -> tuple[str, Destination, os.stat_result | None]:
    """Where writing `path` really lands (a symbolic link's target), what is there,
    and its status (None when nothing is). Refuses what must not be written."""
    shown = printable(os.fspath(path))
    target = os.fspath(path)
    try:
        if stat.S_ISLNK(os.lstat(target).st_mode):
            target = os.path.realpath(target)  # the link stays; its target is written
        info = os.stat(target)
    except FileNotFoundError:
        return target, Destination.NEW, None
    except OSError as exc:
        raise _cannot(path, exc) from None
    mode = info.st_mode
    if stat.S_ISREG(mode):
        return target, Destination.REGULAR, info
    if stat.S_ISCHR(mode) or stat.S_ISFIFO(mode):
        return target, Destination.STREAM, info
    what = ("a folder" if stat.S_ISDIR(mode) else "a block device" if stat.S_ISBLK(mode)
            else "a socket" if stat.S_ISSOCK(mode) else "not a regular file")
    raise UsageError(f"refusing to write {shown}: it is {what}; reports go to regular files, "
                     "character devices (such as /dev/null) or FIFOs")


def check_outputs(outputs: Iterable[tuple[str, str | os.PathLike]],
                  inputs: Iterable[str | os.PathLike] = ()) -> None:
    """Refuse, before any work is done, outputs that cannot be written: onto an
    input, onto a folder or socket, or two outputs (named by how they were asked
    for, e.g. "-o json:x") onto one file, where the second would replace the first."""
    inputs = list(inputs)
    seen: dict[tuple, str] = {}
    for asked, path in outputs:
        check_not_input(path, inputs)
        target, kind, info = destination(path)
        if kind is Destination.STREAM:
            continue  # a device or FIFO takes each output in turn
        key = (info.st_dev, info.st_ino) if info is not None else ("new", os.path.abspath(target))
        if key in seen:
            raise UsageError(f"{seen[key]} and {asked} both write {printable(os.fspath(path))}; "
                             "give each output its own file")
        seen[key] = asked


# ------------------------------------------------------------------ writing

def write_atomic(path: str | os.PathLike, text: str,
                 inputs: Iterable[str | os.PathLike] = ()) -> None:
    """Write `text` (UTF-8, newlines as given) to `path`: a regular file atomically,
    a device or FIFO through, a symbolic link's target in its place.

    inputs: every file the run read (netlists, includes, config, baseline
    being applied); writing over one of them is a UsageError, as is any
    failure to write (with the system's reason).
    """
    check_not_input(path, inputs)
    data = text.encode("utf-8", PLAIN_ERRORS)
    target, kind, info = destination(path)
    if kind is Destination.STREAM:
        _write_through(path, target, data)
    else:
        _replace(path, target, data, info)


def write_all(fd: int, data: bytes) -> None:
    """Every byte of `data` to `fd` (a partial write is continued; a failure raises)."""
    view = memoryview(data)
    while view:
        written = os.write(fd, view)
        view = view[written:]


def _write_through(path: str | os.PathLike, target: str, data: bytes) -> None:
    """A character device or FIFO: opened as it is (never created, never truncated)."""
    try:
        fd = os.open(target, os.O_WRONLY | getattr(os, "O_NOCTTY", 0))
    except OSError as exc:
        raise _cannot(path, exc) from None
    try:
        write_all(fd, data)
    except OSError as exc:
        raise _cannot(path, exc) from None
    finally:
        os.close(fd)


def _replace(path: str | os.PathLike, target: str, data: bytes,
             info: os.stat_result | None) -> None:
    """A regular file (or none yet) replaced whole through a temporary file beside it."""
    folder = os.path.dirname(target) or "."
    fd, temporary = _temporary(path, folder, os.path.basename(target))
    replaced = False
    try:
        try:
            if info is not None:
                _keep_permissions(fd, info)
            write_all(fd, data)
            os.fsync(fd)
        finally:
            os.close(fd)
        os.replace(temporary, target)
        replaced = True
    except OSError as exc:
        raise _cannot(path, exc) from None
    finally:
        # Interrupted (Ctrl-C, SIGTERM, SIGHUP) or failed: the destination keeps
        # its previous content and no temporary file is left behind.
        if not replaced:
            _discard(temporary)


def _keep_permissions(fd: int, info: os.stat_result) -> None:
    """The replaced file's permission bits (and, where allowed, its owner) on the new one."""
    os.fchmod(fd, stat.S_IMODE(info.st_mode))
    if hasattr(os, "fchown") and (info.st_uid, info.st_gid) != (os.getuid(), os.getgid()):
        try:
            os.fchown(fd, info.st_uid, info.st_gid)
        except OSError:
            pass  # only the superuser may give a file away; the bits are what matters


def _name_max(folder: str) -> int:
    try:
        return os.pathconf(folder, "PC_NAME_MAX")
    except (OSError, ValueError, AttributeError):
        return 255


def _temporary(path: str | os.PathLike, folder: str, name: str) -> tuple[int, str]:
    """A new, empty temporary file in `folder` named after `name`: ".NAME.XXXXXXXX.tmp",
    with NAME cut short so the whole stays within the folder's name limit (a legal
    254-byte report name must not fail for its temporary file's sake)."""
    raw = os.fsencode(name)
    if len(raw) > _name_max(folder):  # the destination itself cannot exist: say so plainly
        raise _cannot(path, OSError(errno.ENAMETOOLONG, os.strerror(errno.ENAMETOOLONG)))
    room = max(0, _name_max(folder) - len(b"..12345678.tmp"))
    while 0 < room < len(raw) and raw[room] & 0xC0 == 0x80:
        room -= 1  # never cut a UTF-8 character in two
    stem = os.fsdecode(raw[:room])
    for _ in range(100):
        candidate = os.path.join(folder, f".{stem}.{secrets.token_hex(4)}.tmp")
        try:
            flags = os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_NOFOLLOW", 0)
            return os.open(candidate, flags, 0o666), candidate
        except FileExistsError:
            continue
        except OSError as exc:
            raise _cannot(path, exc) from None
    raise _cannot(path, OSError(errno.EEXIST, "no free temporary file name"))


def _discard(name: str) -> None:
    try:
        os.unlink(name)
    except OSError:
        pass
