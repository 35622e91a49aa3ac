"""How a rule names its headline figure: "margin -3.7 V (min 0.25 V)".

Source: the convention RuleDoc documents (drc/checks/ruledoc.py, and
DEVELOPERS.md, "Data flow": a rule names its headline figure in its RuleDoc,
`figure` and `bound`): the figure's name, the measured text, and the bound
word with the limit in brackets; a finding with a limit but no figure reads
the rule's `unmeasured` word ("never"); without a name the bare figure; without
a limit no brackets. The texts given here are inputs, written as a report
would show them.
"""

from __future__ import annotations

import pytest

from drc.checks import all_rules
from drc.checks.ruledoc import RuleDoc

DOCS = {r.id: r.doc for r in all_rules()}


@pytest.mark.parametrize("rule, measured, limit, expected", [
    ("leakage-headroom", "-3.7 V", "0.25 V", "margin -3.7 V (min 0.25 V)"),
    ("pullup-waste", "2.76 mA", "1 mA", "held current 2.76 mA (max 1 mA)"),
    ("shorted-pull", "0.5 A", "0.1 A", "closed current 0.5 A (limit 0.1 A)"),
    # latency's edge that never arrives: the rule's word for the missing figure
    ("response-latency", None, "100 ms", "slowest crossing never (max 100 ms)"),
    ("response-latency", "0.3 s", "100 ms", "slowest crossing 0.3 s (max 100 ms)"),
    # a figure without a limit: no brackets
    ("ambiguous-value", "4.7 kΩ", None, "value 4.7 kΩ"),
    # neither: nothing to say
    ("undebounced-input", None, None, ""),
    # a limit but no figure and no word for it: the bound alone
    ("bounce-window", None, "10 ms", "min 10 ms"),
])
def test_the_headline_names_the_figure_and_its_bound(rule, measured, limit, expected):
    assert DOCS[rule].headline_figure(measured, limit) == expected


def test_a_rule_without_a_figure_name_shows_the_bare_figure():
    doc = RuleDoc(id="x-pack", title="t", severity="note", what="w", why="y", how="h", fix="f",
                  failing_example="", passing_example="")
    assert doc.headline_figure("0.5 V", "1 V") == "0.5 V (limit 1 V)"
    assert doc.headline_figure("0.5 V", None) == "0.5 V"
    assert doc.headline_figure(None, "1 V") == "limit 1 V"
