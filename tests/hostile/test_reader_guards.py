"""In-process checks of the reader's guards that the console output does not show."""

from __future__ import annotations

import pytest

from drc.errors import LimitError
from drc.netlist.lines import SourceFile, logical_lines
from drc.netlist.reader import ReaderOptions, read_netlist


def test_a_file_included_twice_into_one_definition_is_read_once(tmp_path):
    (tmp_path / "m.inc").write_text(".model D1 D\nR1 a b 1k\n")
    (tmp_path / "b.cir").write_text("t\n.include m.inc\n.include m.inc\n")
    netlist = read_netlist(tmp_path / "b.cir")
    assert [e.designator for e in netlist.elements] == ["R1"]
    assert any("included once only" in d.message and d.location.line == 3
               for d in netlist.diagnostics)


def test_the_same_file_into_two_definitions_is_read_twice(tmp_path):
    (tmp_path / "body.inc").write_text("R1 a b 1k\n")
    (tmp_path / "b.cir").write_text("t\n.subckt A a b\n.include body.inc\n.ends\n"
                                    ".subckt B a b\n.include body.inc\n.ends\n"
                                    "X1 n1 0 A\nX2 n1 0 B\n")
    netlist = read_netlist(tmp_path / "b.cir")
    assert sorted(e.designator for e in netlist.elements) == ["X1/R1", "X2/R1"]


def test_explosion_is_refused_before_anything_is_built(tmp_path):
    levels = "".join(f".subckt L{k} a\n" + "".join(f"X{j} a L{k - 1}\n" for j in range(10))
                     + ".ends\n" for k in range(1, 11))
    (tmp_path / "b.cir").write_text("t\n.subckt L0 a\nR1 a 0 1\n.ends\n" + levels + "XT n L10\n")
    # 10**10 resistors plus 10 + 100 + ... + 10**10 instances plus XT itself
    expected = 10**10 + sum(10**k for k in range(1, 11)) + 1
    with pytest.raises(LimitError, match=f"XT alone expands to {expected}") as info:
        read_netlist(tmp_path / "b.cir", options=ReaderOptions(max_elements=1000))
    assert info.value.location.line == 125 and "--max-elements" in info.value.message


def test_continuations_join_with_positions_in_linear_time():
    # 200,000 continuation pieces: quadratic joining would take minutes.
    source = SourceFile("x.cir", ["t", "R1 a b"] + ["+ 1"] * 200_000)
    (line,) = logical_lines(source, 1, 10_000_000)
    assert len(line.text) == len("R1 a b") + 2 * 200_000
    assert line.position(len("R1 a b") + 2 * 150_000 - 1) == (150_002, 3)
