"""Every problem is a NetlistError or LimitError naming file:line:column.

What ngspice-39 rejects or silently accepts is listed in
shared/reference/spice-dialect.md; the checker rejects both kinds here.
"""

import os

import pytest

from drc.errors import DrcError, LimitError, NetlistError
from drc.netlist.includes import NOT_READ
from drc.netlist.reader import ReaderOptions, read_netlist, read_netlist_text


def error_at(text, cls=NetlistError, **kw):
    with pytest.raises(cls) as info:
        read_netlist_text(text, "board.cir", **kw)
    loc = info.value.location
    return (loc.file, loc.line, loc.column), info.value


@pytest.mark.parametrize("text, where, words", [
    ("t\n.subckt s a\nR1 a 0 1\n", (2, 1), "missing .ends"),
    ("t\nR1 a b 1\nr1 c d 2\n", (3, 1), "duplicate designator"),
    ("t\nX1 a b s\nX2 c d s\n.subckt s p q\nR1 p q 1\n.ends\nX1/R1 a b 1\n", (7, 1), "duplicate"),
    ("t\nX1 a s\n.subckt s p\nX2 p s\n.ends\n", (4, 1), "recursion"),
    ("t\n.subckt\nR1 a b 1\n.ends\n", (2, 1), ".subckt needs a name"),
    ("t\n.subckt s a a\n.ends\n", (2, 13), "appears twice"),
])
def test_located_errors(text, where, words):
    """What makes the rest of the file unreadable (where a definition starts or
    ends, which element a designator names) stays a located error, exit 2."""
    (file, line, column), exc = error_at(text)
    assert file == "board.cir"
    assert (line, column) == where, exc.render()
    assert words in exc.message
    rendered = exc.render()
    assert rendered.startswith(f"board.cir:{line}:{column}: ")
    assert rendered.splitlines()[-1].strip() == "^"


# One bad line never sinks the board (issue 12): an element line that cannot
# be read or evaluated is kept, unevaluated, with its nodes and a problem,
# and a warning located where the old error pointed.
@pytest.mark.parametrize("text, where, words, designator, nodes", [
    ("t\nR8 vcc n8\n", (2, 9), "missing value", "R8", ("vcc", "n8")),
    ("t\nC1 a 1u\n", (2, 6), "only one node", "C1", ("a", "1u")),
    ("t\nR1 a b 1k * note\n", (2, 11), "comment", "R1", ("a", "b")),
    ("t\nR1 a b {rx}\n", (2, 9), "undefined parameter", "R1", ("a", "b")),
    ("t\nX1 a b c s\n.subckt s p q\nR1 p q 1\n.ends\n", (2, 1), "port", "X1", ("a", "b", "c")),
    ("t\nR1 a b {1/0}\n", (2, 10), "division", "R1", ("a", "b")),
    ("t\nQ1 c b\n", (2, 1), "3 to 5 nodes", "Q1", ("c", "b")),
    ("t\nS1 a b c d\n", (2, 1), "contact", "S1", ("a", "b", "c", "d")),
    ("t\nZZ\n", (2, 1), "needs", "ZZ", ()),
    ("t\nR1 a b 4k7x-\n", (2, 8), "not a number", "R1", ("a", "b")),
    ("t\nR1 a b {2*(3}\n", (2, 13), "expected ')'", "R1", ("a", "b")),
    ("t\nR1 a\n+ b {1\n", (3, 5), "unclosed", "R1", ("a", "b")),
    ("t\nR1 a b 1e999\n", (2, 8), "not a number", "R1", ("a", "b")),
])
def test_unevaluable_elements_are_kept_with_a_located_warning(text, where, words, designator,
                                                             nodes):
    netlist = read_netlist_text(text, "board.cir")
    element = netlist.by_designator()[designator.casefold()]
    assert element.problem is not None and words in element.problem
    assert element.nodes == nodes and element.value is None
    hits = [d for d in netlist.diagnostics if words in d.message]
    assert len(hits) == 1, netlist.diagnostics
    assert hits[0].message.startswith(designator + ": ")
    assert (hits[0].location.file, hits[0].location.line, hits[0].location.column) == \
        ("board.cir",) + where


@pytest.mark.parametrize("text, where, words", [
    ("t\n.param a={b}\n.param b={a+1}\nR1 x y {a}\n", (2, 8), "parameter cycle"),
    ("t\nR1 a b 1k\n+\n.ends\n", (4, 1), ".ends without"),
    ("t\n%R1 a b 1\n", (2, 1), "not a statement"),
    ("t\n+ R1 a b 1\n", (2, 1), "continuation"),
    ("t\n.endc\n", (2, 1), ".endc without"),
    ("t\n.model\n", (2, 6), ".model line not read (statement ends too early)"),
    ("t\n.param x={1\n", (2, 11), "expected '}'"),
    ("t\n.subckt s p\n.ends t\n", (3, 7), "names another subcircuit"),
    ("t\n.subckt s p\nR1 p 0 1\n.ends\n.subckt s p\nR2 p 0 1\n.ends\nX1 a s\n", (5, 1),
     "defined again"),
])
def test_bad_directives_are_located_warnings(text, where, words):
    netlist = read_netlist_text(text, "board.cir")
    hits = [d for d in netlist.diagnostics if words in d.message]
    assert len(hits) == 1, netlist.diagnostics
    assert (hits[0].location.line, hits[0].location.column) == where


def test_a_parameter_cycle_leaves_its_users_unevaluated():
    netlist = read_netlist_text("t\n.param a={b}\n.param b={a+1}\nR1 x y {a}\nR2 x y 1k\n")
    elements = netlist.by_designator()
    assert "'a' has no value" in elements["r1"].problem
    assert elements["r2"].problem is None and elements["r2"].value.si == 1000
    # the cycle is told once, at the parameter; R1 once, at its value
    assert [d.location.line for d in netlist.diagnostics] == [2, 4]


def test_a_redefined_subcircuit_uses_the_first_definition():
    # ngspice-39: "redefinition of .subckt s, ignored" (the first is used).
    netlist = read_netlist_text("t\n.subckt s p\nR1 p 0 1\n.ends\n.subckt s p\nR2 p 0 1\n"
                                ".ends\nX1 a s\n")
    assert [e.designator for e in netlist.elements] == ["X1/R1"]


def test_deep_expression_is_a_netlist_and_limit_error():
    where, exc = error_at("t\nR1 a b {" + "(" * 10_000 + "1" + ")" * 10_000 + "}\n")
    assert isinstance(exc, LimitError) and isinstance(exc, NetlistError)
    assert where[1] == 2 and "ReaderOptions.max_expression" in exc.message
    netlist = read_netlist_text("t\n.param big=10**10**10\nR1 a b {big}\n", "board.cir")
    first = netlist.diagnostics[0]   # not a limit: the parameter has no value (a warning)
    assert (first.location.line, first.location.column) == (2, 14)   # the outer `**`
    assert "overflow" in first.message and netlist.elements[0].problem is not None


@pytest.mark.parametrize("text, option, field", [
    ("t\nX1 a s1\n.subckt s1 p\nX2 p s2\n.ends\n.subckt s2 p\nX3 p s3\n.ends\n"
     ".subckt s3 p\nR1 p 0 1\n.ends\n", ReaderOptions(max_subckt_depth=2), "max_subckt_depth"),
    ("t\n" + "".join(f"R{i} a b 1\n" for i in range(20)), ReaderOptions(max_elements=10),
     "max_elements"),
    ("t\nR1 a b " + "1" * 200 + "\n", ReaderOptions(max_line_length=100), "max_line_length"),
    ("t\n.subckt a p\n.subckt b p\n.subckt c p\n.ends\n.ends\n.ends\n",
     ReaderOptions(max_subckt_depth=2), "max_subckt_depth"),
])
def test_limits_name_their_option(text, option, field):
    with pytest.raises(LimitError) as info:
        read_netlist_text(text, options=option)
    assert f"ReaderOptions.{field}" in info.value.message
    assert info.value.location.line > 0


def test_file_size_limit(write):
    path = write("big.cir", "t\n" + "R1 a b 1\n" * 100)
    with pytest.raises(LimitError) as info:
        read_netlist(path, options=ReaderOptions(max_file_bytes=100))
    assert "max_file_bytes" in info.value.message


def test_missing_file_and_special_files(tmp_path):
    with pytest.raises(NetlistError):
        read_netlist(tmp_path / "nope.cir")
    with pytest.raises(NetlistError) as info:
        read_netlist(tmp_path)
    assert "regular file" in info.value.message
    with pytest.raises(NetlistError):
        read_netlist("/dev/null")  # a character device
    fifo = tmp_path / "pipe.cir"
    os.mkfifo(fifo)
    with pytest.raises(NetlistError) as info:
        read_netlist(fifo)  # must not block waiting for a writer
    assert "regular file" in info.value.message


# ---------------------------------------------------------------- sandbox

def test_include_cycle(write):
    write("b/a.cir", "t\n.include inc1.cir\n")
    write("b/inc1.cir", ".include inc2.cir\n")
    write("b/inc2.cir", "R1 a b 1\n.include inc1.cir\n")
    with pytest.raises(NetlistError) as info:
        read_netlist(write("b/a.cir", "t\n.include inc1.cir\n"))
    assert "include cycle" in info.value.message
    assert info.value.location.file.endswith("inc2.cir") and info.value.location.line == 2


def test_include_depth_limit(write):
    for i in range(5):
        write(f"d/i{i}.cir", f".include i{i + 1}.cir\n")
    write("d/i5.cir", "R1 a b 1\n")
    top = write("d/top.cir", "t\n.include i0.cir\n")
    assert len(read_netlist(top).elements) == 1
    with pytest.raises(LimitError) as info:
        read_netlist(top, options=ReaderOptions(max_include_depth=3))
    assert "max_include_depth" in info.value.message


@pytest.mark.parametrize("include", ["../outside.cir", "sub/../../outside.cir"])
def test_include_leaving_the_project_is_refused(write, include):
    write("outside.cir", "R9 a b 1\n")
    top = write("board/top.cir", f"t\n.include {include}\n")
    with pytest.raises(NetlistError) as info:
        read_netlist(top)
    assert "leaves the project" in info.value.message
    assert (info.value.location.line, info.value.location.column) == (2, 10)


# A library line pointing into a simulator's installation (or anywhere the
# project does not hold) is not read: one note naming the line, the same
# message whatever the path looks like (issue 12).
@pytest.mark.parametrize("line", [
    ".include C:\\boards\\x.cir",
    ".include \\\\server\\share\\x.cir",
    '.lib "C:\\Program Files (x86)\\LTC\\LTspiceXVII\\lib\\cmp\\standard.bjt"',
    ".lib C:\\Program Files (x86)\\LTC\\LTspiceXVII\\lib\\cmp\\standard.dio",
    ".lib /usr/share/ngspice/models/std.lib typ",
    ".include /opt/spice/lib/cmos.lib",
    ".inc ~/spice/opamps.lib",
    ".lib LTC.lib",
    '.include "missing folder/cells.lib"',
])
def test_library_lines_outside_the_project_are_one_note(write, line):
    top = write("board/top.cir", f"t\nR1 a b 1k\n{line}\nQ1 c b e 2N3904\n")
    netlist = read_netlist(top)
    notes = [d for d in netlist.diagnostics if d.group == "library-not-read"]
    assert len(notes) == 1
    note = notes[0]
    assert note.severity == "note" and note.location.line == 3
    assert note.message == f"`{line}`: " + NOT_READ
    assert [e.designator for e in netlist.elements] == ["R1", "Q1"]


def test_include_absolute_inside_and_symlink(write, tmp_path):
    outside = write("outside.cir", "R9 a b 1\n")
    inside = write("board/lib/in.cir", "R8 a b 1\n")
    top = write("board/top.cir", f"t\n.include {outside}\n.include {inside}\n")
    netlist = read_netlist(top)
    assert [e.designator for e in netlist.elements] == ["R8"]   # outside: a note, not read
    link = tmp_path / "board" / "link.cir"
    link.symlink_to(outside)
    top = write("board/top.cir", "t\n.include link.cir\n")
    with pytest.raises(NetlistError) as info:
        read_netlist(top)
    assert "symlink" in info.value.message
    # allowed once its folder is configured
    n = read_netlist(top, options=ReaderOptions(include_folders=(str(tmp_path),)))
    assert [e.designator for e in n.elements] == ["R9"]


@pytest.mark.parametrize("marker, text", [
    ("drc.toml", ""), ("pyproject.toml", "[tool.drc]\n"), ("pyproject.toml", "[tool.drc.limits]\n"),
    (".git/HEAD", "ref: main\n"),
])
def test_sandbox_is_the_project_root(write, marker, text):
    # A project keeps boards and shared libraries side by side (issue 12).
    write(f"proj/{marker}", text)
    write("proj/lib/cells.lib", ".subckt cell a\nR1 a 0 1k\n.ends\n")
    top = write("proj/boards/panel/top.cir", "t\n.include ../../lib/cells.lib\nX1 n cell\n")
    assert [e.designator for e in read_netlist(top).elements] == ["X1/R1"]


def test_a_pyproject_without_tool_drc_is_not_a_project_root(write):
    write("proj/pyproject.toml", "[tool.black]\n")
    write("proj/lib/cells.lib", ".subckt cell a\nR1 a 0 1k\n.ends\n")
    top = write("proj/boards/top.cir", "t\n.include ../lib/cells.lib\nX1 n cell\n")
    with pytest.raises(NetlistError, match="leaves the project"):
        read_netlist(top)


def test_every_error_is_a_drc_error():
    assert issubclass(LimitError, DrcError) and issubclass(NetlistError, DrcError)


def test_library_section_missing_and_unclosed_blocks(write):
    write("lb/models.lib", ".lib typ\n.model d D\n.endl\n")
    top = write("lb/top.cir", "t\n.lib models.lib fast\nR1 a b 1\n")
    netlist = read_netlist(top)
    assert [(d.location.line, "'fast' not found" in d.message) for d in netlist.diagnostics] == \
        [(2, True)]
    assert not netlist.models and len(netlist.elements) == 1
    # a .control block left open at the end of the file runs to the end
    netlist = read_netlist_text("t\nR1 a b 1\n.control\nrun\n")
    assert [s.name for s in netlist.skipped] == ["control"] and not netlist.diagnostics


def test_end_in_included_file_does_not_warn(write):
    write("e/inc.cir", "R1 a b 1\n.end\n")
    n = read_netlist(write("e/top.cir", "t\n.include inc.cir\nR2 a b 1\n.end\n"))
    assert not n.diagnostics and len(n.elements) == 2
