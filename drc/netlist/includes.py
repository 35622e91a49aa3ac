"""Included files: the sandbox they must stay in, reading them, `.lib` sections.

A board's netlist may `.include` files and `.lib file section` sections of
files. Both are read only from inside a sandbox: the board's folder tree and
the configured include folders (no drive letters or network paths, no `..`
or symlink leading out). An included file is read and split into statements
once, however often it is included; including it again into the same place
is warned about and skipped; include cycles and nesting past the limit are
refused. Every statement read counts, a file read again counting again, so
an include bomb (files including files many times over) stops at the
element limit, at the `.include` line that crossed it.
"""

from __future__ import annotations

import os
import re
from collections.abc import Iterator
from contextlib import contextmanager

from drc.errors import LimitError, NetlistError, SourceLocation
from drc.netlist.lines import LogicalLine, SourceFile, limit_hint, logical_lines, read_source
from drc.netlist.options import ReaderOptions
from drc.netlist.tokens import offset_of, strip_quotes

# A Windows drive letter or a network path: never inside the sandbox.
_DRIVE = re.compile(r"^(?:[A-Za-z]:|\\\\|//)")


def sandbox_roots(top_dir: str, options: ReaderOptions) -> list[str]:
    """The folders includes may be read from: the board's, then the configured ones."""
    roots = [os.path.realpath(top_dir)]
    roots.extend(os.path.realpath(folder) for folder in options.include_folders)
    return roots


def find_section(lines: list[LogicalLine], section: str) -> int:
    """Index of the first statement of `.lib section` in `lines` (after its
    `.lib` line); NetlistError, without a location, when there is none."""
    wanted = section.casefold()
    for index, line in enumerate(lines):
        text = line.text
        if text[0] == "." and text[1:4].lower() == "lib":
            words = text.split()
            if words[0].lower() == ".lib" and len(words) == 2 and words[1].casefold() == wanted:
                return index + 1
    raise NetlistError(f"library section {section!r} not found", None)


class IncludeSandbox:
    """The included files of one read: where they may come from, what is open."""

    def __init__(self, options: ReaderOptions, roots: list[str]) -> None:
        self.options = options
        self.roots = roots
        self.stack: list[str] = []    # real paths of the files being read, top first
        self.sources: dict[str, SourceFile] = {}
        self.statements: dict[str, list[LogicalLine]] = {}   # statements of each file read
        self.included: dict[tuple[str, str | None, tuple[str, ...]], SourceLocation] = {}
        self.count = 0

    def enter_top(self, real: str | None) -> None:
        """Start with the top file (`real` None for text without a file)."""
        if real:
            self.stack.append(real)

    @property
    def depth(self) -> int:
        """How many files are being read (the top file counts when it is one)."""
        return len(self.stack)

    def open(self, line: LogicalLine, raw: str) -> tuple[str, str]:
        """Real and shown path of the include `raw` on `line`, checked for
        cycles and nesting depth."""
        real, shown = self.resolve(line, raw)
        if real in self.stack:
            chain = " -> ".join(os.path.basename(p) for p in self.stack + [real])
            raise line.error(f"include cycle: {chain}")
        if len(self.stack) > self.options.max_include_depth:
            raise line.error(f"includes nest deeper than {self.options.max_include_depth} "
                             + limit_hint("max_include_depth"), cls=LimitError)
        return real, shown

    def earlier_inclusion(self, real: str, section: str | None, place: tuple[str, ...],
                          line: LogicalLine) -> SourceLocation | None:
        """Where the same file (and section) was already included into definition
        `place`, or None (and `line` is remembered as the first time)."""
        once = (real, section.casefold() if section else None, place)
        earlier = self.included.get(once)
        if earlier is None:
            self.included[once] = line.location()
        return earlier

    def source(self, line: LogicalLine, real: str, shown: str) -> SourceFile:
        """The included file, read once per read of the board."""
        source = self.sources.get(real)
        if source is None:
            try:
                source = read_source(real, shown, self.options.max_file_bytes)
            except NetlistError as exc:
                if exc.location is not None and exc.location.line > 0:
                    raise
                raise line.error(f"cannot read included file {shown}: {exc.message}") from None
            self.sources[real] = source
        return source

    @contextmanager
    def reading(self, real: str) -> Iterator[None]:
        """Inside the block, `real` is the file being read (for relative paths and cycles)."""
        self.stack.append(real)
        try:
            yield
        finally:
            self.stack.pop()

    def statements_of(self, line: LogicalLine, real: str, source: SourceFile) -> list[LogicalLine]:
        """The statements of an included file, split once, counted each time."""
        lines = self.statements.get(real)
        if lines is None:
            lines = self.statements[real] = logical_lines(source, 0, self.options.max_line_length)
        self.count_statements(len(lines), line)
        return lines

    def count_statements(self, count: int, line: LogicalLine) -> None:
        """Statements read from included files, a file read again counting again:
        an include bomb stops at the element limit, at the `.include` line that
        crossed it."""
        self.count += count
        limit = self.options.max_elements
        if self.count > limit:
            message = (f"more than {limit} statements read (included files counted each time "
                       "they are read) " + limit_hint("max_elements"))
            raise line.error(message, cls=LimitError)

    def resolve(self, line: LogicalLine, raw: str) -> tuple[str, str]:
        """Real and shown path of an include; refuse paths leaving the sandbox."""
        name = strip_quotes(raw)
        offset = offset_of(line, raw, 1)
        if not name:
            raise line.error("empty include path", offset)
        if _DRIVE.match(name):
            raise line.error(f"include path {name!r} uses a drive letter or network path; "
                             "only paths inside the board's folder are read", offset)
        name = name.replace("\\", "/")
        base_shown = os.path.dirname(line.source.path)
        base_real = os.path.dirname(self.stack[-1]) if self.stack else self.roots[0]
        if os.path.isabs(name):
            candidate = os.path.normpath(name)
            shown = candidate
        else:
            candidate = os.path.normpath(os.path.join(base_real, name))
            shown = os.path.normpath(os.path.join(base_shown, name))
        if not self.inside(os.path.abspath(candidate)):
            how = "is absolute and" if os.path.isabs(name) else "uses `..` and"
            raise line.error(f"include path {name!r} {how} leaves the board's folder tree "
                             "(add its folder to include_folders to allow it)", offset)
        real = os.path.realpath(candidate)
        if not self.inside(real):
            raise line.error(f"include path {name!r} is a symlink leading outside the "
                             "board's folder tree (add its folder to include_folders)", offset)
        if not os.path.exists(real):
            raise line.error(f"included file {name!r} not found", offset)
        return real, shown

    def inside(self, path: str) -> bool:
        """True when `path` is one of the sandbox's folders or below one."""
        for root in self.roots:
            if path == root or path.startswith(root.rstrip(os.sep) + os.sep):
                return True
        return False
