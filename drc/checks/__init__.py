"""The rule catalogue and the engine that runs it.

Importing this package registers the built-in rules, one module each, in
catalogue order. `run_rules` runs the selected rules over a board's stage
results (stage rules) and its netlist (board rules) and returns immutable
Findings; rules never parse, solve or print. An outside rule pack registers
with the same `rule` decorator (see `registry`) and is picked up by
`all_rules` as soon as its module is imported.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping

from drc.checks.findings import Finding
from drc.analysis.results import StageResult
from drc.checks.context import RuleContext, locations_of
from drc.checks.registry import Rule, registered_rules, rule

# Built-in rules, imported in catalogue order (registration order = catalogue order).
from drc.checks import (  # noqa: E402,F401  (imported for their registration)
    undebounced_input, floating_input, bounce_window, slow_edge, response_latency,
    leakage_headroom, pullup_waste, resistance_range, contact_wetting, contact_surge,
    rail_mismatch, ambiguous_value,
)

__all__ = ["Rule", "RuleContext", "rule", "all_rules", "get_rule", "run_rules", "run_stage_rules"]


def all_rules() -> tuple[Rule, ...]:
    """Every registered rule, built-ins first in catalogue order, then outside packs."""
    return registered_rules()


def get_rule(rule_id: str) -> Rule:
    """The rule `rule_id`; KeyError names the known ids."""
    for r in registered_rules():
        if r.id == rule_id:
            return r
    raise KeyError(f"unknown rule id {rule_id!r}; known: {', '.join(r.id for r in registered_rules())}")


def _contexts(rules: Iterable[Rule], board_name: str, limits: Mapping[str, float],
              severities: Mapping[str, str] | None, locations) -> list[tuple[Rule, RuleContext]]:
    severities = severities or {}
    return [(r, RuleContext(rule_id=r.id, default_severity=r.severity, board_name=board_name,
                            limits=limits, severity_override=severities.get(r.id),
                            locations=locations)) for r in rules]


def _selected(selected_ids: Iterable[str] | None, kind: str | None = None) -> list[Rule]:
    chosen = None if selected_ids is None else set(selected_ids)
    return [r for r in registered_rules()
            if (chosen is None or r.id in chosen) and (kind is None or r.kind == kind)]


def run_rules(board, results: Iterable[StageResult], limits: Mapping[str, float],
              severities: Mapping[str, str] | None = None,
              selected_ids: Iterable[str] | None = None) -> list[Finding]:
    """Run the selected rules (None = all) on one board; findings in a stable order.

    Order: stage by stage (in the order of `results`), rules in catalogue
    order within a stage; then the board rules. severities: rule id -> the
    user's severity, overriding the rule's default.
    """
    rules = _selected(selected_ids)
    locations = locations_of(board)
    board_name = getattr(board, "path", "") or ""
    contexts = _contexts(rules, board_name, limits, severities, locations)
    stage_rules = [(r, c) for r, c in contexts if r.kind == "stage"]
    findings: list[Finding] = []
    for result in results:
        for r, ctx in stage_rules:
            findings.extend(r.check(result, ctx))
    for r, ctx in contexts:
        if r.kind == "board" and board is not None:
            findings.extend(r.check(board, ctx))
    return findings


def run_stage_rules(result: StageResult, limits: Mapping[str, float],
                    selected_ids: Iterable[str] | None = None, board=None,
                    severities: Mapping[str, str] | None = None) -> list[Finding]:
    """The stage rules alone on one result (what the fix solver re-runs)."""
    if board is None and not severities:
        contexts = _bare_contexts(limits, selected_ids)
    else:
        rules = _selected(selected_ids, kind="stage")
        contexts = _contexts(rules, getattr(board, "path", "") or "", limits, severities,
                             locations_of(board) if board is not None else {})
    out: list[Finding] = []
    for r, ctx in contexts:
        out.extend(r.check(result, ctx))
    return out


# The fix search re-runs the stage rules thousands of times with one limits
# mapping and no board: their contexts are built once. Keyed by the mapping's
# identity (each context holds the mapping and its rule, so the ids stay theirs
# while cached) and by the rules registered.
_BARE: dict[tuple, list[tuple[Rule, RuleContext]]] = {}


def _bare_contexts(limits: Mapping[str, float], selected_ids) -> list[tuple[Rule, RuleContext]]:
    selected = None if selected_ids is None else tuple(sorted(selected_ids))
    memo = (id(limits), selected, tuple(id(r) for r in registered_rules()))
    found = _BARE.get(memo)
    if found is None:
        if len(_BARE) > 64:
            _BARE.clear()
        found = _BARE[memo] = _contexts(_selected(selected_ids, kind="stage"), "", limits, None, {})
    return found
