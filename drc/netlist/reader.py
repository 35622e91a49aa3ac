"""Read a SPICE-style board netlist into a flat `Netlist`.

Public entry: `read_netlist(path)` and `read_netlist_text(text)`, with
`ReaderOptions` (drc/netlist/options.py) for the resource limits. Reading
runs in two steps. Loading (drc/netlist/loader.py) walks the logical lines
of the top file (drc/netlist/lines.py), following `.include` and `.lib`
inside a sandbox (drc/netlist/includes.py: the board's folder tree and the
configured include folders), parses each statement (drc/netlist/fastpath.py
for plain lines, else the lark grammar via drc/netlist/grammar.py) and
interprets it (drc/netlist/element_lines.py) into a local element spec inside
the current `.subckt` definition (drc/netlist/specs.py). Flattening
(drc/netlist/flatten.py) then evaluates parameters (drc/netlist/parameters.py
over drc/netlist/expressions.py: order-free, cycles refused) and expands X
instances depth-first, joining designators and local nets with `/`, mapping
ports to the instance's nets, keeping ground ("0", `gnd`) and `.global` nets
global, and canonicalising every net and model name to its first-seen
spelling. X instances of undefined subcircuits, or of names the
`keep_as_part` callback claims, stay as parts (kind "X"). The warnings of
both steps come out in reading order, alike ones grouped
(drc/netlist/elements.py group_diagnostics).
"""

from __future__ import annotations

import os
from collections.abc import Callable

from drc.errors import LimitError, SourceLocation
from drc.netlist.elements import Diagnostic, Netlist, SubcircuitPorts, group_diagnostics
from drc.netlist.flatten import SubcircuitFlattener
from drc.netlist.includes import sandbox_roots
from drc.netlist.lines import SourceFile, limit_hint, read_source, source_from_text
from drc.netlist.loader import NetlistLoader
from drc.netlist.options import ReaderOptions

__all__ = ["ReaderOptions", "read_netlist", "read_netlist_text"]


def sorted_diagnostics(diagnostics: list[Diagnostic], files: list[str]) -> list[Diagnostic]:
    """`diagnostics` in reading order: by file (as first read), line and column."""
    order = {name: index for index, name in enumerate(files)}
    return sorted(diagnostics, key=lambda d: (order.get(d.location.file, len(order)),
                                              d.location.line, d.location.column))


def _read(source: SourceFile, real: str | None, folder: str, shown: str,
          options: ReaderOptions, keep_as_part: Callable[[str], bool] | None) -> Netlist:
    """Load `source` (includes resolve from `folder`), flatten it, build the Netlist."""
    loaded = NetlistLoader(options, sandbox_roots(folder, options)).load_top(source, real)
    flattener = SubcircuitFlattener(loaded, options, keep_as_part)
    elements = flattener.run()
    netlist = Netlist(path=shown, title=loaded.title, elements=elements)
    netlist.models = {card.name: card for card in loaded.models.values()}
    netlist.global_nets = tuple(flattener.canon.get(key, name)
                                for key, name in loaded.globals.items())
    netlist.subcircuit_names = tuple(d.name for d in loaded.definitions)
    for d in loaded.definitions:
        if d.line is not None:
            netlist.subcircuits.setdefault(d.name.casefold(), SubcircuitPorts(
                d.name, tuple(d.ports), frozenset(record.kind for record in d.body),
                SourceLocation(d.line.source.path, d.line.line, d.line.column)))
    netlist.diagnostics = group_diagnostics(sorted_diagnostics(loaded.diagnostics, loaded.files))
    netlist.skipped = loaded.skipped
    netlist.files = tuple(loaded.files)
    netlist.annotation_lines = tuple(loaded.annotation_lines)
    return netlist


def read_netlist(path: str | os.PathLike[str], *, options: ReaderOptions | None = None,
                 keep_as_part: Callable[[str], bool] | None = None) -> Netlist:
    """Read, include and flatten the netlist at `path`.

    Raises NetlistError (or LimitError) with file, line and column on bad input.
    """
    options = options or ReaderOptions()
    shown = os.fspath(path)
    real = os.path.realpath(shown)
    source = read_source(shown, shown, options.max_file_bytes)
    return _read(source, real, os.path.dirname(real), shown, options, keep_as_part)


def read_netlist_text(text: str, path: str = "<text>", *,
                      options: ReaderOptions | None = None,
                      keep_as_part: Callable[[str], bool] | None = None) -> Netlist:
    """Read netlist `text` as if it were the file `path` (includes resolve from
    the folder of `path`, or the working folder for `<text>`)."""
    options = options or ReaderOptions()
    if len(text) > options.max_file_bytes:
        raise LimitError(f"text is longer than {options.max_file_bytes} characters "
                         + limit_hint("max_file_bytes"), SourceLocation(path))
    source = source_from_text(text, path)
    folder = os.getcwd() if path.startswith("<") else os.path.dirname(os.path.abspath(path))
    real = None if path.startswith("<") else os.path.join(os.path.realpath(folder),
                                                           os.path.basename(path))
    return _read(source, real, folder, path, options, keep_as_part)
