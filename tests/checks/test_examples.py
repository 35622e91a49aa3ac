"""Every rule's documented examples, through the whole pipeline.

The failing example must fire its rule and the passing one must not; the
two are written so that only that rule's verdict changes between them. The
findings it fires hold what the report schema promises (docs/report-schema.md,
"Finding object" and "Figure object").
"""

from __future__ import annotations

import pytest

from drc.checks import all_rules
from drc.checks.findings import SEVERITIES, Figure
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


SI_UNITS = {"V", "A", "s", "Ω", "F", "s/V"}  # the units the schema names, and a transition rate
# The reasons docs/report-schema.md lists for an unchecked input ("reason"; null for other rules).
REASONS = {"unknown-receiver", "unknown-pin-order", "unevaluable-element", "no-path", "isolated-input",
           "supply-out-of-range", "unknown-supply", "analog-input", "discrete-input", "feedback-input",
           "unknown-threshold"}


@pytest.mark.parametrize("rule", RULES, ids=[r.id for r in RULES])
def test_a_finding_holds_what_the_schema_promises(rule):
    path = f"<{rule.id}:failing>"
    _fired_ids, findings = _fired(rule.doc.failing_example, path)
    own = [f for f in findings if f.rule == rule.id]
    assert own
    for f in own:
        assert f.board == path and f.severity in SEVERITIES
        assert isinstance(f.message, str) and f.message and isinstance(f.fix, str) and f.fix
        assert f.location is not None and f.location.file == path and f.location.line >= 1
        assert all(isinstance(p, str) and p for p in f.parts) and all(isinstance(n, str) for n in f.nets)
        assert f.reason in REASONS if rule.id == "unchecked-input" else f.reason is None
        for fig in (f.measured, f.limit):
            assert fig is None or (isinstance(fig, Figure) and isinstance(fig.value, float)
                                   and fig.unit in SI_UNITS and isinstance(fig.text, str) and fig.text)
