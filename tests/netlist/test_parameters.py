"""Parameter scopes of instances (drc/netlist/parameters.py): evaluations are
shared between instances only when what they are evaluated over is the same."""

from __future__ import annotations

import pytest

from drc.netlist.reader import read_netlist_text

_NESTED = """t
.subckt inner a b params: r=1
R1 a b {r*k}
.ends
.subckt outer a b params: k=1
X1 a b inner r=2
.ends
X1 n 0 outer k=10
X2 n 0 outer k=20
X3 n 0 outer k=10
"""


def test_same_overrides_in_different_parent_scopes_are_evaluated_apart():
    values = {e.designator: e.value.si for e in read_netlist_text(_NESTED).elements
              if e.kind == "R"}
    assert values == {"X1/X1/R1": pytest.approx(20), "X2/X1/R1": pytest.approx(40),
                      "X3/X1/R1": pytest.approx(20)}


def test_undeclared_instance_parameter_is_warned_and_ignored():
    netlist = read_netlist_text("t\n.subckt s a b params: r=1\nR1 a b {r}\n.ends\n"
                                "X1 n 0 s r=5 q=2\n")
    assert [e.value.si for e in netlist.elements] == [5]
    assert [d.message for d in netlist.diagnostics] == [
        "X1: parameter q is not declared by subcircuit s; ignored"]
