"""Diagnostics at scale: alike warnings are one line with a count (issue 12, item 5).

The reader groups alike diagnostics (the same `group`) when there are more
than GROUP_ABOVE of them: one diagnostic stands for the group, at the first
one's place, with its message and the count. The elements themselves keep
their own `problem`, so nothing is lost for whoever checks a path.
"""

import pickle

from drc.errors import SourceLocation
from drc.netlist.elements import GROUP_ABOVE, Diagnostic, Element, group_diagnostics
from drc.netlist.reader import read_netlist_text


def _diagnostic(line, group):
    return Diagnostic(f"message {line}", SourceLocation("b.cir", line, 1), group=group)


def test_groups_above_the_threshold_become_one_with_a_count():
    diagnostics = [_diagnostic(1, None)] + [_diagnostic(n, "g") for n in range(2, 12)] + \
        [_diagnostic(20, "h"), _diagnostic(21, "h")]
    grouped = group_diagnostics(diagnostics)
    assert [(d.location.line, d.count) for d in grouped] == [(1, 1), (2, 10), (20, 1), (21, 1)]
    assert grouped[1].message == "message 2 (grouped: 10 alike, the first shown)"
    # grouping again changes nothing (the count is carried)
    assert group_diagnostics(grouped) == grouped


def test_a_small_group_is_kept_as_it_is():
    diagnostics = [_diagnostic(n, "g") for n in range(1, GROUP_ABOVE + 1)]
    assert group_diagnostics(diagnostics) == diagnostics


def test_thousands_of_unevaluated_elements_are_one_warning_but_each_keeps_its_problem():
    lines = ["t"] + [f"R{k} a{k} 0 {{rmissing}}" for k in range(3000)] + ["R9999 a 0 1k"]
    netlist = read_netlist_text("\n".join(lines) + "\n", "b.cir")
    assert len(netlist.diagnostics) == 1
    only = netlist.diagnostics[0]
    assert only.count == 3000 and (only.location.line, only.location.column) == (2, 10)
    assert only.message.startswith("R0: undefined parameter 'rmissing'")
    assert "3,000 alike" in only.message
    assert sum(1 for e in netlist.elements if e.problem) == 3000


def test_an_element_with_a_problem_pickles_and_compares():
    element = Element("R1", "R", ("a", "b"), None, None, SourceLocation("b.cir", 2, 1),
                      text="R1 a b {x}", problem="undefined parameter 'x'")
    again = pickle.loads(pickle.dumps(element))
    assert again == element and again.problem == "undefined parameter 'x'"
    assert again != Element("R1", "R", ("a", "b"), None, None, SourceLocation("b.cir", 2, 1),
                            text="R1 a b {x}")
