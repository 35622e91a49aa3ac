"""The rule catalogue and the engine that runs it.

Importing this package registers the built-in rules, one module each, in
catalogue order. `run_rules` runs the selected rules over a board's stage
results (stage rules) and its netlist (board rules) and returns immutable
Findings with each rule's own severity; rules never parse, solve or print,
and never decide what a finding counts for (the user's severities, waivers
and the fail level are the gate's: drc.gate.decision). Outside rule packs
register with the same `rule` decorator and load through the "drc.rules"
entry-point group when the registry is first read (see `registry`).
"""

from __future__ import annotations

import importlib
from collections.abc import Iterable, Mapping

from drc.analysis.results import StageResult
from drc.caching import Memo
from drc.checks.context import RuleContext, locations_of
from drc.checks.findings import Finding
from drc.checks.registry import Rule, RuleKind, registered_rules, registry_generation, rule

# The built-in rules in catalogue order: importing a module registers its rule,
# and the registration order is the catalogue order.
BUILT_IN_RULE_MODULES = (
    "unchecked_input", "undebounced_input", "floating_input", "bounce_window", "slow_edge",
    "response_latency", "leakage_headroom", "shorted_pull", "pullup_waste", "resistance_range",
    "contact_wetting", "contact_surge",
    "rail_mismatch", "ambiguous_value", "empty_netlist",
)
for _module in BUILT_IN_RULE_MODULES:
    importlib.import_module(f"drc.checks.{_module}")

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
              locations: Mapping) -> list[tuple[Rule, RuleContext]]:
    return [(r, RuleContext(rule_id=r.id, default_severity=r.severity, board_name=board_name,
                            limits=limits, locations=locations)) for r in rules]


def _selected(selected_ids: Iterable[str] | None, kind: str | None = None) -> list[Rule]:
    chosen = None if selected_ids is None else set(selected_ids)
    return [r for r in registered_rules()
            if (chosen is None or r.id in chosen) and (kind is None or r.kind == kind)]


def run_rules(board, results: Iterable[StageResult], limits: Mapping[str, float],
              selected_ids: Iterable[str] | None = None, unchecked: Iterable = (),
              near: Iterable = ()) -> list[Finding]:
    """Run the selected rules (None = all) on one board; findings in a stable order.

    Order: stage by stage (in the order of `results`), rules in catalogue
    order within a stage; then the input rules over `unchecked` (the
    UncheckedInputs of drc/board/coverage.py); then the board rules. Each
    finding has its rule's severity; the user's overrides are the gate's
    (drc.gate.decision). near: the netlist elements the findings are most likely
    about (those on the checked paths): their locations are found without an index
    of every element of the board.
    """
    rules = _selected(selected_ids)
    locations = locations_of(board, near)
    board_name = getattr(board, "path", "") or ""
    contexts = _contexts(rules, board_name, limits, locations)
    stage_rules = [(r, c) for r, c in contexts if r.kind == RuleKind.STAGE]
    results = list(results)
    for r, ctx in stage_rules:
        if r.prepare is not None:
            r.prepare(results, ctx)
    findings: list[Finding] = []
    for result in results:
        for r, ctx in stage_rules:
            findings.extend(r.check(result, ctx))
    input_rules = [(r, c) for r, c in contexts if r.kind == RuleKind.INPUT]
    for item in unchecked if input_rules else ():
        for r, ctx in input_rules:
            findings.extend(r.check(item, ctx))
    for r, ctx in contexts:
        if r.kind == RuleKind.BOARD and board is not None:
            findings.extend(r.check(board, ctx))
    return findings


def run_stage_rules(result: StageResult, limits: Mapping[str, float],
                    selected_ids: Iterable[str] | None = None, board=None) -> list[Finding]:
    """The stage rules alone on one result (what the fix solver re-runs)."""
    if board is None:
        contexts = _bare_contexts(limits, selected_ids)
    else:
        rules = _selected(selected_ids, kind=RuleKind.STAGE)
        contexts = _contexts(rules, getattr(board, "path", "") or "", limits, locations_of(board))
    out: list[Finding] = []
    for r, ctx in contexts:
        out.extend(r.check(result, ctx))
    return out


# The fix search re-runs the stage rules thousands of times with one limits
# mapping and no board: their contexts are built once per limits (by value),
# selection and state of the registry. Each holds its own copy of the limits.
_BARE: Memo[tuple, list[tuple[Rule, RuleContext]]] = Memo("checks.bare-contexts", 64)


def _bare_contexts(limits: Mapping[str, float], selected_ids) -> list[tuple[Rule, RuleContext]]:
    selected = None if selected_ids is None else tuple(sorted(selected_ids))
    key = (tuple(limits.items()), selected, registry_generation())
    found = _BARE.get(key)
    if found is None:
        found = _BARE.put(key, _contexts(_selected(selected_ids, kind=RuleKind.STAGE), "", dict(limits), {}))
    return found
