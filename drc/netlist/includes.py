"""Included files: the sandbox they must stay in, reading them, `.lib` sections.

A board's netlist may `.include` files, `.lib file` (one argument: the whole
file, as several simulators write it) and `.lib file section` sections of
files. All are read only from inside a sandbox: the board's project (the
nearest folder above the board holding a drc.toml, a pyproject.toml with a
[tool.drc] table, or a .git; the board's own folder when there is none)
and the configured include folders. So a project that keeps boards and
shared libraries side by side reads `.include ../lib/cells.lib`.

What stays out: a relative path whose `..` leaves the project, and a
symbolic link leading outside, are refused (located errors). A library line
that points into a simulator's own installation (an absolute path outside
the project, a drive letter or network path, a file that is not there) is
not read: one note names the line, with the same message whatever the path
looks like; the models such a library holds are not needed to judge logic
inputs, and a subcircuit it would define stays an unknown part.

An included file is read and split into statements once, however often it
is included; including it again into the same place is warned about and
skipped; include cycles and nesting past the limit are refused. Every
statement read counts, a file read again counting again, so an include bomb
(files including files many times over) stops at the element limit, at the
`.include` line that crossed it.
"""

from __future__ import annotations

import os
import re
from collections.abc import Iterator, Sequence
from contextlib import contextmanager

from drc.errors import LimitError, NetlistError, SourceLocation
from drc.netlist.lines import LogicalLine, SourceFile, limit_hint, logical_lines, read_source
from drc.netlist.options import ReaderOptions
from drc.netlist.tokens import Token, item_text, offset_of, strip_quotes

# A Windows drive letter or a network path: never inside the sandbox.
_DRIVE = re.compile(r"^(?:[A-Za-z]:|\\\\|//)")


# A `[tool.drc]` table (or one of its sub-tables) in a pyproject.toml.
_TOOL_DRC = re.compile(r"^\s*\[\s*tool\s*\.\s*drc\s*[\].]", re.M)
# The one message of a library line that is not read (whatever its path looks like).
NOT_READ = ("not read: the file is outside the project or not found (a simulator's own "
            "library?); its models are not needed to judge logic inputs, and a subcircuit "
            "it defines stays an unknown part")


def _marks_project(folder: str) -> bool:
    """True when `folder` holds a drc.toml, a pyproject.toml with [tool.drc], or a .git."""
    if os.path.isfile(os.path.join(folder, "drc.toml")) or \
            os.path.exists(os.path.join(folder, ".git")):
        return True
    pyproject = os.path.join(folder, "pyproject.toml")
    if not os.path.isfile(pyproject):
        return False
    try:
        with open(pyproject, encoding="utf-8", errors="replace") as handle:
            return _TOOL_DRC.search(handle.read(1_000_000)) is not None
    except OSError:
        return False


def project_root(board_dir: str) -> str:
    """The board's project: the nearest folder at or above `board_dir` that holds a
    drc.toml, a pyproject.toml with [tool.drc], or a .git; else `board_dir` itself."""
    folder = os.path.realpath(board_dir)
    while True:
        if _marks_project(folder):
            return folder
        parent = os.path.dirname(folder)
        if parent == folder:
            return os.path.realpath(board_dir)
        folder = parent


def sandbox_roots(top_dir: str, options: ReaderOptions) -> list[str]:
    """The folders includes may be read from: the board's project, then the configured ones."""
    roots = [project_root(top_dir)]
    roots.extend(os.path.realpath(folder) for folder in options.include_folders)
    return roots


def _one_argument_lib(text: str) -> bool:
    """True for a `.lib X` line with a single unquoted argument."""
    words = text.split()
    return len(words) == 2 and words[0].lower() == ".lib" and words[1][0] not in "'\""


def find_section(lines: list[LogicalLine], section: str) -> int | None:
    """Index of the first statement of `.lib section` in `lines` (after its
    `.lib` line), or None when there is none."""
    wanted = section.casefold()
    for index, line in enumerate(lines):
        text = line.text
        if text[0] == "." and text[1:4].lower() == "lib" and _one_argument_lib(text):
            if text.split()[1].casefold() == wanted:
                return index + 1
    return None


def opens_section(lines: list[LogicalLine], index: int) -> bool:
    """True when the `.lib X` at `lines[index]` opens a `.lib X ... .endl` section
    (an `.endl` follows before any other one-argument `.lib`); else a one-argument
    `.lib` is a whole-file include."""
    if not _one_argument_lib(lines[index].text):
        return False
    for line in lines[index + 1:]:
        text = line.text
        if text[0] != "." or (text[1:4].lower() != "lib" and text[1:5].lower() != "endl"):
            continue
        keyword = text.split(None, 1)[0].lower()
        if keyword == ".endl":
            return True
        if _one_argument_lib(text):
            return False
    return False


def path_and_section(args: Sequence[Token], with_section: bool) -> tuple[str | None, str | None]:
    """(path, section) of an `.include` (`with_section` False) or `.lib` line, from its
    one argument: the rest of the line. A quoted path ends at its quote (a `.lib`
    section may follow); an unquoted one is the whole rest for `.include`, and for
    `.lib` everything but a last word (the section) when there are several."""
    rest = item_text(args[0]).strip() if args else ""
    if not rest:
        return None, None
    if rest[0] in "'\"":
        end = rest.find(rest[0], 1)
        if end > 0:
            section = rest[end + 1:].strip()
            return rest[1:end], (section or None) if with_section else None
    words = rest.split()
    if not with_section or len(words) == 1:
        return rest, None
    return " ".join(words[:-1]), words[-1]


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

    def open(self, line: LogicalLine, raw: str) -> tuple[str, str] | None:
        """Real and shown path of the include `raw` on `line`, checked for
        cycles and nesting depth; None for a library that is not read."""
        resolved = self.resolve(line, raw)
        if resolved is None:
            return None
        real, shown = resolved
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

    def resolve(self, line: LogicalLine, raw: str) -> tuple[str, str] | None:
        """Real and shown path of an include, or None for a library that is not read
        (outside the project by an absolute path, a drive letter or network path, or
        not found); refuse relative paths leaving the project, and symlinks out."""
        name = strip_quotes(raw)
        offset = offset_of(line, raw, 1)
        if _DRIVE.match(name) or name.startswith("~"):
            return None
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
            if os.path.isabs(name):
                return None
            raise line.error(f"include path {name!r} uses `..` and leaves the project "
                             f"({self.roots[0]}: the nearest folder above the board with a "
                             "drc.toml, a pyproject.toml with [tool.drc] or a .git); add its "
                             "folder to include_folders to allow it", offset)
        real = os.path.realpath(candidate)
        if not self.inside(real):
            raise line.error(f"include path {name!r} is a symlink leading outside the "
                             "project (add its folder to include_folders)", offset)
        if not os.path.lexists(candidate):
            return None
        return real, shown

    def inside(self, path: str) -> bool:
        """True when `path` is one of the sandbox's folders or below one."""
        for root in self.roots:
            if path == root or path.startswith(root.rstrip(os.sep) + os.sep):
                return True
        return False
