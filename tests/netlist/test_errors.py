"""Every problem is a NetlistError or LimitError naming file:line:column.

What ngspice-39 rejects or silently accepts is listed in
shared/reference/spice-dialect.md; the checker rejects both kinds here.
"""

import os

import pytest

from drc.errors import DrcError, LimitError, NetlistError
from drc.netlist.reader import ReaderOptions, read_netlist, read_netlist_text


def error_at(text, cls=NetlistError, **kw):
    with pytest.raises(cls) as info:
        read_netlist_text(text, "board.cir", **kw)
    loc = info.value.location
    return (loc.file, loc.line, loc.column), info.value


@pytest.mark.parametrize("text, where, words", [
    ("t\nR8 vcc n8\n", (2, 9), "missing value"),
    ("t\nC1 a 1u\n", (2, 6), "only one node"),
    ("t\nR1 a b 1k * note\n", (2, 11), "comment"),
    ("t\nR1 a b {rx}\n", (2, 9), "undefined parameter"),
    ("t\n.subckt s a\nR1 a 0 1\n", (2, 1), "missing .ends"),
    ("t\nR1 a b 1\nr1 c d 2\n", (3, 1), "duplicate designator"),
    ("t\nX1 a b s\nX2 c d s\n.subckt s p q\nR1 p q 1\n.ends\nX1/R1 a b 1\n", (7, 1), "duplicate"),
    ("t\nX1 a b c s\n.subckt s p q\nR1 p q 1\n.ends\n", (2, 3), "port"),
    ("t\nX1 a s\n.subckt s p\nX2 p s\n.ends\n", (4, 1), "recursion"),
    ("t\n.param a={b}\n.param b={a+1}\nR1 x y {a}\n", (2, 8), "cycle"),
    ("t\nR1 a b {1/0}\n", (2, 10), "division"),
    ("t\nR1 a b 1k\n+\n.ends\n", (4, 1), ".ends without"),
    ("t\nQ1 c b\n", (2, 1), "3 to 5 nodes"),
    ("t\nS1 a b c d\n", (2, 1), "contact"),
    ("t\nZZ\n%R1 a b 1\n", (2, 1), "needs"),
    ("t\n%R1 a b 1\n", (2, 1), "unknown element letter"),
    ("t\nR1 a b 4k7x-\n", (2, 8), "not a number"),
    ("t\nR1 a b {2*(3}\n", (2, 13), "expected ')'"),
    ("t\nR1 a\n+ b {1\n", (3, 5), "unclosed"),
    ("t\n+ R1 a b 1\n", (2, 1), "continuation"),
    ("t\nR1 a b 1e999\n", (2, 8), "not a number"),
])
def test_located_errors(text, where, words):
    (file, line, column), exc = error_at(text)
    assert file == "board.cir"
    assert (line, column) == where, exc.render()
    assert words in exc.message
    rendered = exc.render()
    assert rendered.startswith(f"board.cir:{line}:{column}: ")
    assert rendered.splitlines()[-1].strip() == "^"


def test_deep_expression_is_a_netlist_and_limit_error():
    where, exc = error_at("t\nR1 a b {" + "(" * 10_000 + "1" + ")" * 10_000 + "}\n")
    assert isinstance(exc, LimitError) and isinstance(exc, NetlistError)
    assert where[1] == 2 and "ReaderOptions.max_expression" in exc.message
    where, exc = error_at("t\n.param big=10**10**10\nR1 a b {big}\n")
    assert where[1:] == (2, 14) and "overflow" in exc.message  # the outer `**`


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


@pytest.mark.parametrize("include, words", [
    ("../outside.cir", "leaves the board's folder"),
    ("sub/../../outside.cir", "leaves the board's folder"),
    ("C:\\boards\\x.cir", "drive letter"),
    ("\\\\server\\share\\x.cir", "network path"),
])
def test_include_sandbox(write, include, words):
    write("outside.cir", "R9 a b 1\n")
    top = write("board/top.cir", f"t\n.include {include}\n")
    with pytest.raises(NetlistError) as info:
        read_netlist(top)
    assert words in info.value.message
    assert (info.value.location.line, info.value.location.column) == (2, 10)


def test_include_absolute_and_symlink(write, tmp_path):
    outside = write("outside.cir", "R9 a b 1\n")
    top = write("board/top.cir", f"t\n.include {outside}\n")
    with pytest.raises(NetlistError) as info:
        read_netlist(top)
    assert "absolute" in info.value.message
    link = tmp_path / "board" / "link.cir"
    link.symlink_to(outside)
    top = write("board/top.cir", "t\n.include link.cir\n")
    with pytest.raises(NetlistError) as info:
        read_netlist(top)
    assert "symlink" in info.value.message
    # allowed once its folder is configured
    n = read_netlist(top, options=ReaderOptions(include_folders=(str(tmp_path),)))
    assert [e.designator for e in n.elements] == ["R9"]


def test_include_inside_tree_and_missing(write):
    write("board/sub/part.cir", "R1 a b 1\n")
    top = write("board/top.cir", "t\n.include sub/part.cir\n.inc \"sub/part2.cir\"\n")
    with pytest.raises(NetlistError) as info:
        read_netlist(top)
    assert "not found" in info.value.message and info.value.location.line == 3


def test_every_error_is_a_drc_error():
    assert issubclass(LimitError, DrcError) and issubclass(NetlistError, DrcError)


def test_library_section_missing_and_unclosed_blocks(write):
    write("lb/models.lib", ".lib typ\n.model d D\n.endl\n")
    top = write("lb/top.cir", "t\n.lib models.lib fast\n")
    with pytest.raises(NetlistError) as info:
        read_netlist(top)
    assert "'fast' not found" in info.value.message and info.value.location.line == 2
    where, exc = error_at("t\n.control\nrun\n")
    assert where[1:] == (2, 1) and ".endc" in exc.message


def test_end_in_included_file_does_not_warn(write):
    write("e/inc.cir", "R1 a b 1\n.end\n")
    n = read_netlist(write("e/top.cir", "t\n.include inc.cir\nR2 a b 1\n.end\n"))
    assert not n.diagnostics and len(n.elements) == 2
