"""Lexical layer: comments, continuation, line endings and encodings.

Behaviour checked against ngspice-39 observations in
shared/reference/spice-dialect.md (inline `;` `$` `//`, `N$12` a node, `#`
not a comment, `+` across comment and blank lines, CRLF, UTF-8 µ).
"""

import codecs

import pytest

from drc.errors import NetlistError
from drc.netlist.reader import read_netlist, read_netlist_text


def element(netlist, designator):
    return netlist.by_designator()[designator.casefold()]


def test_inline_comments_and_dollar_names():
    n = read_netlist_text("t\nR1 N$12 b 1k ; c\nR2 a#1 b 2k $ c\nR3 a b 3k // c\nR4 a;b c 4k\n")
    assert element(n, "R1").nodes == ("N$12", "b")
    assert element(n, "R2").nodes == ("a#1", "b")
    assert element(n, "R3").value.si == 3000
    assert element(n, "R4").nodes == ("a;b", "c")


def test_continuation_across_comments_and_blank_lines():
    text = "t\nR1 a\n* comment between\n\n+ b\n  ; only a comment\n+ 4k7\nR2 a b 1\n"
    n = read_netlist_text(text)
    r1 = element(n, "R1")
    assert r1.nodes == ("a", "b") and r1.value.si == 4700
    assert r1.location.line == 2 and r1.location.column == 1


def test_trailing_backslash_is_not_continuation():
    n = read_netlist_text("t\nR1 a b \\\n4k7\n")
    assert "is not a number" in element(n, "R1").problem
    assert [d.location.line for d in n.diagnostics] == [2, 3]   # R1, and `4k7` alone
    assert "not a statement" in n.diagnostics[1].message


def test_title_is_line_one_even_if_it_looks_like_an_element():
    n = read_netlist_text("R1 a b 1k\nR2 a b 2k\n")
    assert n.title == "R1 a b 1k"
    assert [e.designator for e in n.elements] == ["R2"]
    n = read_netlist_text("first\n.title Real title\nR2 a b 2k\n")
    assert n.title == "Real title"


@pytest.mark.parametrize("ending", ["\n", "\r\n", "\r"])
def test_line_endings(write, ending):
    path = write("e.cir", ending.join(["t", "R1 a b 1k", "+ tc1=0", "R2 b 0 2k", ""]))
    n = read_netlist(path)
    assert [e.designator for e in n.elements] == ["R1", "R2"]
    assert element(n, "R2").location.line == 4


@pytest.mark.parametrize("encoding, bom", [
    ("utf-8", b""), ("utf-8", codecs.BOM_UTF8), ("utf-16-le", codecs.BOM_UTF16_LE),
    ("utf-16-be", codecs.BOM_UTF16_BE), ("latin-1", b""),
])
def test_encodings(tmp_path, encoding, bom):
    text = "titlé\r\nC1 a 0 4.7µ\nR1 a b 1k\n"
    path = tmp_path / "enc.cir"
    path.write_bytes(bom + text.encode(encoding))
    n = read_netlist(path)
    assert n.title == "titlé"
    assert element(n, "C1").value.si == pytest.approx(4.7e-6)


def test_nul_byte_is_a_located_error(tmp_path):
    path = tmp_path / "nul.cir"
    path.write_bytes(b"t\nR1 a b 1k\nR2 a\x00 b 1k\n")
    with pytest.raises(NetlistError) as info:
        read_netlist(path)
    assert (info.value.location.line, info.value.location.column) == (3, 5)


def test_input_file_is_not_modified(write):
    path = write("keep.cir", "t\nR1 a b 1k\n")
    before = path.read_bytes(), path.stat().st_mtime_ns
    read_netlist(path)
    assert (path.read_bytes(), path.stat().st_mtime_ns) == before
