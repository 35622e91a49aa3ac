"""From bytes on disk to logical netlist lines, with positions.

This is the lexical layer under the grammar: it decodes a file (UTF-8 with
or without BOM, UTF-16 with BOM, else Latin-1), splits it on any mix of
CRLF/CR/LF, drops full-line comments (`*` as first non-blank character) and
blank lines, cuts inline comments (`;`, `$` or `//` at the start of a line's
content or after a blank, outside braces and quotes, so `N$12` stays a node),
and joins `+` continuation lines onto the line they continue, across comment
and blank lines (ngspice-39 behaviour, shared/reference/spice-dialect.md); a
`+` line holding only a comment (`+ ; note`, `+;note`) adds nothing, and a
`+` line with no statement before it (only the title) is a statement of its
own, which the loader warns about and skips.
Each logical line keeps where every piece came from, so an error anywhere in
it can point at the physical line and column. Files are opened read-only and
must be regular files.
"""

from __future__ import annotations

import codecs
import os
import re
import stat

from drc.errors import LimitError, NetlistError, SourceLocation


class SourceFile:
    """One input file: the name shown in locations and its text.

    `text` has its line endings normalised to LF; `lines` (the physical
    lines) is split from it on first use and kept, so a file that is only
    streamed through once never holds a second copy of itself as a list.
    Either `lines` or `text` may be given.
    """

    __slots__ = ("path", "_lines", "_text")

    def __init__(self, path: str, lines: list[str] | None = None, text: str | None = None) -> None:
        self.path = path
        self._lines = lines
        self._text = text

    @property
    def lines(self) -> list[str]:
        lines = self._lines
        if lines is None:
            lines = self._lines = (self._text or "").split("\n")
        return lines

    @property
    def text(self) -> str:
        text = self._text
        if text is None:
            text = self._text = "\n".join(self._lines or ())
        return text

    def line(self, number: int) -> str:
        """Physical line `number` (1-based), or "" outside the file."""
        return physical_line(self, number)

    def __repr__(self) -> str:
        return f"SourceFile({self.path!r})"


class LogicalLine:
    """A statement after continuation joining and comment removal.

    `text` starts at the first non-blank character of physical line `line`,
    column `column` (1-based). `pieces` is None for a one-line statement, else
    a tuple of (offset in text, physical line, column) for every piece.
    """

    __slots__ = ("text", "line", "column", "pieces", "source", "record")

    def __init__(self, text: str, line: int, column: int,
                 pieces: list[tuple[int, int, int]] | None, source: SourceFile) -> None:
        self.text = text
        self.line = line
        self.column = column
        self.pieces = pieces
        self.source = source
        self.record: tuple | None = None  # the parsed record, kept for a file included again

    def position(self, offset: int) -> tuple[int, int]:
        """Physical (line, column) of character `offset` of `text`."""
        if self.pieces is None:
            return self.line, self.column + offset
        line, column, start = self.line, self.column, 0
        for piece_offset, piece_line, piece_column in self.pieces:
            if piece_offset > offset:
                break
            line, column, start = piece_line, piece_column, piece_offset
        return line, column + (offset - start)

    def location(self, offset: int = 0) -> SourceLocation:
        line, column = self.position(offset)
        return SourceLocation(self.source.path, line, column)

    def source_line(self, offset: int = 0) -> str:
        line, _ = self.position(offset)
        return physical_line(self.source, line)

    def error(self, message: str, offset: int = 0, cls: type = NetlistError) -> Exception:
        """A located error pointing at character `offset` of this statement."""
        return cls(message, self.location(offset), self.source_line(offset))

    def __repr__(self) -> str:
        return f"LogicalLine({self.text!r}, line={self.line}, column={self.column})"


def limit_hint(field: str) -> str:
    """How a limit message names its limit: the command-line option and the API field."""
    return f"(limit {field.replace('_', '-')}: raise it with --{field.replace('_', '-')} " \
           f"or ReaderOptions.{field})"


def physical_line(source: SourceFile, line: int) -> str:
    if 1 <= line <= len(source.lines):
        return source.lines[line - 1]
    return ""


def decode(data: bytes) -> str:
    """Text of a netlist file: BOM-marked UTF-8/UTF-16, else UTF-8, else Latin-1."""
    if data.startswith(codecs.BOM_UTF8):
        data = data[len(codecs.BOM_UTF8):]
    elif data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        return data.decode("utf-16")
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        # Latin-1 maps every byte, so old exports with a µ byte still read.
        return data.decode("latin-1")


def normalise_newlines(text: str) -> str:
    """`text` with every CRLF and CR line ending turned into LF."""
    if "\r" in text:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    return text


# Comment lines carrying instructions to drc (parsed by drc/config/annotations.py).
ANNOTATION_MARK = "*@drc"
_ANNOTATION_LINE = re.compile(r"^[^\S\n]*\*@drc.*$", re.M)


def annotation_lines(text: str) -> list[tuple[int, str]]:
    """(line number, line) of every `*@drc` line of `text` (LF line endings): one
    scan, nothing when the mark does not occur."""
    if ANNOTATION_MARK not in text:
        return []
    out = []
    number, last = 1, 0
    for match in _ANNOTATION_LINE.finditer(text):
        number += text.count("\n", last, match.start())
        last = match.start()
        out.append((number, match.group()))
    return out


def split_lines(text: str) -> list[str]:
    """Physical lines on any mix of CRLF, CR and LF endings."""
    return normalise_newlines(text).split("\n")


def check_nul(source: SourceFile) -> None:
    """A NUL character is never valid netlist text: report where it is."""
    for number, line in enumerate(source.lines, 1):
        column = line.find("\x00")
        if column >= 0:
            raise NetlistError("NUL byte in netlist text (is this a binary file?)",
                               SourceLocation(source.path, number, column + 1), line)


def read_regular(path: str, shown: str, max_bytes: int, error: type = NetlistError,
                 limit_name: str | None = "max_file_bytes") -> bytes:
    """The bytes of the regular file `path`, refusing devices, FIFOs, folders and big files.

    Opened non-blocking, so a FIFO never hangs the open; checked with fstat
    on the open descriptor, so a file swapped for a device after a check is
    still refused. `error` is the DrcError class raised (located at `shown`);
    `limit_name` the ReaderOptions field named when the file is too big
    (None: a fixed limit).
    """
    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0))
    except FileNotFoundError:
        raise error("file not found", SourceLocation(shown)) from None
    except OSError as exc:
        raise error(f"cannot open file: {exc.strerror or exc}", SourceLocation(shown)) from None
    hint = limit_hint(limit_name) if limit_name else "(a fixed limit)"
    too_big = LimitError if error is NetlistError else error
    try:
        info = os.fstat(fd)
        if not stat.S_ISREG(info.st_mode):
            raise error("not a regular file (a folder, device, FIFO or socket); "
                        "only plain files are read", SourceLocation(shown))
        if info.st_size > max_bytes:
            raise too_big(f"file is {info.st_size} bytes, above the limit of {max_bytes} "
                          + hint, SourceLocation(shown))
        data = _read_sized(fd, info.st_size, max_bytes)
    except OSError as exc:
        raise error(f"cannot read file: {exc.strerror or exc}", SourceLocation(shown)) from None
    finally:
        os.close(fd)
    if len(data) > max_bytes:
        raise too_big(f"file is larger than the limit of {max_bytes} bytes " + hint,
                      SourceLocation(shown))
    return data


def _read_sized(fd: int, size: int, max_bytes: int) -> bytes:
    """Up to `max_bytes + 1` bytes of `fd`, asking for a buffer of the file's own size.

    The first read asks for `size + 1` bytes (the extra byte sees the end of
    a file that did not change); a file growing meanwhile is read on in
    1 MiB steps. Memory follows what is really there, never the limit: a
    buffer of the limit costs its address space even when it stays unused.
    """
    want = min(size, max_bytes) + 1
    chunks: list[bytes] = []
    total = 0
    while total <= max_bytes:
        step = want - total if total < want else min(1 << 20, max_bytes + 1 - total)
        chunk = os.read(fd, step)
        if not chunk:
            break
        chunks.append(chunk)
        total += len(chunk)
    return chunks[0] if len(chunks) == 1 else b"".join(chunks)


def read_source(path: str, shown: str, max_bytes: int) -> SourceFile:
    """Read and decode one regular file, refusing devices, FIFOs and big files."""
    data = read_regular(path, shown, max_bytes)
    try:
        text = decode(data)
    except UnicodeDecodeError as exc:
        raise NetlistError(f"file has a UTF-16 byte-order mark but is not valid UTF-16 "
                           f"({exc.reason})", SourceLocation(shown)) from None
    del data  # the bytes are not needed once decoded (a large file's peak memory)
    return source_from_text(text, shown)


def source_from_text(text: str, shown: str) -> SourceFile:
    """A SourceFile for `text` (line endings normalised; physical lines split on demand)."""
    source = SourceFile(shown, None, normalise_newlines(text))
    if "\x00" in text:
        check_nul(source)
    return source


# PSpice's global and digital-constant nodes (`$G_DPWR`, `$D_HI`): names, not comments.
_PSPICE_NODE = re.compile(r"[GgDd]_\w")


def strip_comment(text: str) -> str:
    """`text` without an inline comment (`;`, `$`, `//` after a blank).

    `text` starts at a non-blank character; a marker at position 0 makes the
    whole line a comment. Markers inside `{...}` or quotes do not count, nor
    a `$` starting PSpice's `$G_...` and `$D_...` node names (ngspice-39 reads
    those as comments; PSpice digital primitives need them as nodes).
    """
    depth = 0
    quote = ""
    previous = " "
    for index, char in enumerate(text):
        if quote:
            if char == quote:
                quote = ""
        elif char == "{":
            depth += 1
        elif char == "}":
            depth = max(0, depth - 1)
        elif char in "'\"":
            quote = char
        elif depth == 0 and previous in " \t" and (
                char == ";" or (char == "$" and not _PSPICE_NODE.match(text, index + 1))
                or (char == "/" and text.startswith("//", index))):
            return text[:index].rstrip()
        previous = char
    return text.rstrip()


def logical_lines(source: SourceFile, first: int, max_length: int, stop: int | None = None,
                  lines: list[str] | None = None) -> list[LogicalLine]:
    """The statements of `source`, from physical line index `first` (0-based)
    up to index `stop` (excluded; default the end). `lines` are the file's
    physical lines when the caller already split them.

    Continuation pieces are collected in a list and joined once per
    statement, so a million `+` lines cost linear time; every length is
    checked before any per-character work (comment stripping), so a 100 MB
    line fails fast with a located LimitError.
    """
    out: list[LogicalLine] = []
    current: LogicalLine | None = None
    parts: list[str] = []       # text pieces of `current` not yet joined
    pieces: list | None = None
    length = 0                  # length of `current` once joined
    append = out.append
    if lines is None:
        lines = source.lines
    if stop is None:
        stop = len(lines)

    def too_long(number: int, column: int, raw: str, what: str) -> LimitError:
        return LimitError(f"{what} is longer than {max_length} characters "
                          + limit_hint("max_line_length"),
                          SourceLocation(source.path, number, column), raw)

    def close() -> None:
        if current is not None and len(parts) > 1:
            current.text = " ".join(parts)
            current.pieces = pieces

    for index in range(first, stop):
        raw = lines[index]
        text = raw.lstrip()
        if not text:
            continue
        head = text[0]
        if head == "*":
            continue
        column = len(raw) - len(text) + 1
        if len(text) > max_length and len(text.rstrip()) > max_length:
            # Checked before comment stripping: a line this long is refused
            # whatever it holds (comment lines starting `*` were skipped above).
            raise too_long(index + 1, column, raw, "line")
        if ";" in text or "$" in text or "//" in text:
            text = strip_comment(text)
            if not text:
                continue
            head = text[0]
        else:
            text = text.rstrip()
        if head == "+":
            if current is None:
                # Continues nothing but the title: a statement of its own, which
                # the loader warns about and skips (later `+` lines join it).
                current = LogicalLine(text, index + 1, column, None, source)
                parts = [text]
                pieces = None
                length = len(text)
                append(current)
                continue
            body = text[1:]
            stripped = body.lstrip()
            if not stripped or _comment_only(stripped):
                continue   # `+`, or `+;note`: a continuation holding only a comment
            if pieces is None:
                pieces = [(0, current.line, current.column)]
            offset = length + 1
            pieces.append((offset, index + 1, column + 1 + len(body) - len(stripped)))
            parts.append(stripped)
            length = offset + len(stripped)
            if length > max_length:
                raise too_long(current.line, current.column, physical_line(source, current.line),
                               "statement (with its `+` continuation lines)")
            continue
        close()
        current = LogicalLine(text, index + 1, column, None, source)
        parts = [text]
        pieces = None
        length = len(text)
        append(current)
    close()
    return out


def _comment_only(text: str) -> bool:
    """True when `text` (left-stripped, non-empty) is all inline comment."""
    return text[0] in ";$" or text.startswith("//")


def continuation_zones(lines: list[str], first: int, text: str) -> list[tuple[int, int]]:
    """The physical line ranges (first index, last index) that hold a statement
    continued by `+` lines: from the statement's first line to its last `+` line.

    Everything outside these ranges is one statement per physical line, so
    the reader can take those lines one at a time. Found with one regular
    expression over the whole `text` (the file's text, LF endings, the same
    text `lines` was split from): a file without `+` lines costs one scan.
    """
    zones: list[tuple[int, int]] = []
    index = 0
    last = 0
    count = text.count
    for match in _CONTINUATION.finditer(text):
        position = match.start()
        index += count("\n", last, position)
        last = position
        if index < first:
            continue
        if zones and zones[-1][1] >= index:
            continue
        owner = index - 1
        floor = zones[-1][1] if zones else first - 1
        while owner > floor:
            stripped = lines[owner].lstrip()
            if stripped and stripped[0] not in "*+" and not _comment_only(stripped):
                break
            owner -= 1
        if zones and owner <= floor:
            zones[-1] = (zones[-1][0], index)   # continues the statement of the last zone
        else:
            zones.append((max(owner, first), index))
    return zones


# A physical line whose first non-blank character is `+` (a continuation).
_CONTINUATION = re.compile(r"^[^\S\n]*\+", re.M)


def statement_at(source: SourceFile, raw: str, index: int, max_length: int) -> LogicalLine | None:
    """The one-line statement `raw` on physical line index `index` (0-based), or
    None for a blank or comment line: `logical_lines` for a line that neither
    continues nor is continued (see `continuation_zones`)."""
    text = raw.lstrip()
    if not text or text[0] == "*":
        return None
    column = len(raw) - len(text) + 1
    if len(text) > max_length and len(text.rstrip()) > max_length:
        raise LimitError(f"line is longer than {max_length} characters "
                         + limit_hint("max_line_length"),
                         SourceLocation(source.path, index + 1, column), raw)
    if ";" in text or "$" in text or "//" in text:
        text = strip_comment(text)
        if not text:
            return None
    else:
        text = text.rstrip()
    return LogicalLine(text, index + 1, column, None, source)
