"""Every rule's documented examples, through the whole pipeline.

The failing example must fire its rule and the passing one must not; the
two are written so that only that rule's verdict changes between them.
"""

from __future__ import annotations

import pytest

from drc.checks import all_rules
from drc.pipeline import check_netlist_text

RULES = [r for r in all_rules() if r.doc.failing_example]


def _fired(text: str, path: str) -> tuple[set[str], list]:
    board, results, findings = check_netlist_text(text, path=path)
    return {f.rule for f in findings}, findings


def _show(findings) -> str:
    return "\n".join(f"  {f.rule} [{f.severity}] {f.message}" for f in findings) or "  (no findings)"


@pytest.mark.parametrize("rule", RULES, ids=[r.id for r in RULES])
def test_documented_examples(rule):
    failing, f_findings = _fired(rule.doc.failing_example, f"<{rule.id}:failing>")
    passing, p_findings = _fired(rule.doc.passing_example, f"<{rule.id}:passing>")
    assert rule.id in failing, f"{rule.id} did not fire on its failing example:\n{_show(f_findings)}"
    assert rule.id not in passing, f"{rule.id} fired on its passing example:\n{_show(p_findings)}"
    # Only this rule's verdict may change between the two examples.
    flipped = (failing ^ passing) - {rule.id}
    assert not flipped, (f"{rule.id}: other verdicts changed too: {sorted(flipped)}\n"
                         f"failing:\n{_show(f_findings)}\npassing:\n{_show(p_findings)}")
