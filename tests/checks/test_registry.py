"""The rule catalogue: ids, severities, documentation, registration and selection."""

from __future__ import annotations

import tomllib

import pytest

from drc.checks import all_rules, get_rule, run_rules, run_stage_rules
from drc.checks.registry import rule, unregister
from drc.checks.ruledoc import RuleDoc
from drc.datafiles import rules_path
from drc.errors import LibraryError
from tests.checks.builders import LIMITS, result

# The catalogue of DESIGN.md section 7, in its order, with its default severities;
# the fail-closed rule of issue 12 first.
CATALOGUE = [
    ("unchecked-input", "error"), ("undebounced-input", "error"), ("floating-input", "error"),
    ("bounce-window", "error"),
    ("slow-edge", "error"), ("response-latency", "warning"), ("leakage-headroom", "error"),
    ("shorted-pull", "error"),  # issue 13, item 7: a pull resistor that reads as a short
    ("pullup-waste", "warning"), ("resistance-range", "note"), ("contact-wetting", "warning"),
    ("contact-surge", "warning"), ("rail-mismatch", "error"), ("ambiguous-value", "warning"),
]


def test_catalogue_order_ids_and_severities():
    built_in = [(r.id, r.severity) for r in all_rules()][:len(CATALOGUE)]
    assert built_in == CATALOGUE


@pytest.mark.parametrize("rule_id", [rid for rid, _ in CATALOGUE])
def test_every_rule_documents_itself(rule_id):
    doc = get_rule(rule_id).doc
    assert "\n" not in doc.title and doc.title
    for text in (doc.what, doc.why, doc.how, doc.fix):
        assert len(text) > 30, f"{rule_id}: documentation section too short: {text!r}"
    for example in (doc.failing_example, doc.passing_example):
        assert example.rstrip().endswith(".end") and "XU1" in example
        instance = next(line for line in example.splitlines() if line.startswith("XU1"))
        # 14-pin instance: designator, 14 nets, subcircuit name
        assert len(instance.split()) == 16, instance
    assert doc.failing_example != doc.passing_example


def test_limit_keys_exist_in_the_shipped_limits_file():
    with open(rules_path("limits.toml"), "rb") as fh:
        shipped = tomllib.load(fh)
    for r in all_rules():
        for key in r.limits:
            assert key in shipped, f"{r.id} uses limit {key!r}, missing from rules/limits.toml"


def test_an_outside_rule_pack_registers_the_same_way():
    doc = RuleDoc(id="test-pack-always", title="fires on every stage", severity="note",
                  what="w" * 40, why="w" * 40, how="w" * 40, fix="w" * 40,
                  failing_example="", passing_example="")

    @rule(doc, kind="stage")
    def always(res, ctx):
        yield ctx.stage_finding(res, measured=None, limit=None, message="m", fix="f")

    try:
        assert all_rules()[-1].id == "test-pack-always"
        found = run_stage_rules(result(), LIMITS, selected_ids={"test-pack-always"})
        assert [f.rule for f in found] == ["test-pack-always"] and found[0].severity == "note"
        with pytest.raises(ValueError):
            rule(doc)(lambda res, ctx: ())  # the same id twice is refused
    finally:
        unregister(["test-pack-always"])


def test_unknown_kind_or_severity_is_refused():
    doc = get_rule("bounce-window").doc
    with pytest.raises(ValueError):
        rule(doc, kind="netlist")
    from dataclasses import replace
    with pytest.raises(ValueError):
        rule(replace(doc, id="x-bad", severity="fatal"))


def test_a_prepare_step_sees_every_stage_before_the_check_and_only_stage_rules_have_one():
    # The engine's promise (checks/registry.Rule.prepare): one call with all the results,
    # before the first check, and only for a selected rule.
    doc = RuleDoc(id="test-pack-prepared", title="counts what it was prepared for", severity="note",
                  what="w" * 40, why="w" * 40, how="w" * 40, fix="w" * 40,
                  failing_example="", passing_example="")
    calls = []

    def prepare(results, ctx):
        calls.append(("prepare", len(results)))

    @rule(doc, kind="stage", prepare=prepare)
    def counted(res, ctx):
        calls.append(("check", 1))
        return ()

    try:
        results = [result(), result(pull_a=5e-3)]
        run_rules(None, iter(results), LIMITS, selected_ids={"test-pack-prepared"})
        assert calls == [("prepare", 2), ("check", 1), ("check", 1)]
        calls.clear()
        run_rules(None, results, LIMITS, selected_ids={"pullup-waste"})
        assert calls == []
    finally:
        unregister(["test-pack-prepared"])
    with pytest.raises(ValueError):
        rule(doc, kind="board", prepare=prepare)


def test_selection():
    res = result(pull_a=5e-3)  # over the 1 mA budget
    everything = run_rules(None, [res], LIMITS)
    assert [f.rule for f in everything] == ["pullup-waste"]
    assert run_rules(None, [res], LIMITS, selected_ids={"bounce-window"}) == []


def test_a_missing_limit_is_a_clear_library_error():
    limits = dict(LIMITS)
    del limits["pull_current_budget"]
    with pytest.raises(LibraryError, match="pull_current_budget"):
        run_rules(None, [result()], limits)


@pytest.mark.parametrize("rule_id", [rid for rid, _ in CATALOGUE])
def test_get_rule_finds_the_rule_it_is_asked_for(rule_id):
    assert get_rule(rule_id).id == rule_id


def test_an_unknown_rule_id_names_the_known_ones():
    # get_rule's contract (its docstring): the KeyError names the known ids.
    with pytest.raises(KeyError) as err:
        get_rule("no-such-rule")
    text = str(err.value)
    assert "no-such-rule" in text and all(rid in text for rid, _ in CATALOGUE)


def test_a_refused_rule_is_named_in_the_refusal():
    # A pack author reads this through RulePackError: it must say which rule was refused.
    from dataclasses import replace
    doc = get_rule("bounce-window").doc
    with pytest.raises(ValueError, match="x-bad-kind"):
        rule(replace(doc, id="x-bad-kind"), kind="netlist")
    with pytest.raises(ValueError, match="x-bad-severity"):
        rule(replace(doc, id="x-bad-severity", severity="fatal"))
    with pytest.raises(ValueError, match="bounce-window"):
        rule(doc)(lambda res, ctx: ())
    with pytest.raises(ValueError, match="x-board-prepare"):  # a prepare step is a stage rule's only
        rule(replace(doc, id="x-board-prepare"), kind="board", prepare=lambda results, ctx: None)


def test_an_unknown_rule_id_lists_every_known_id():
    with pytest.raises(KeyError) as err:
        get_rule("no-such-rule")
    listed = str(err.value).split("known: ")[1].rstrip("'\"").split(", ")
    assert listed == [r.id for r in all_rules()]
