"""The gate's matching rules case by case: which waiver, annotation or baseline entry takes a finding.

Source: the gate's documented conventions (drc/gate/decision.py module text,
README "Waivers and baselines"; common practice among checkers, no source):
a waiver or annotation takes a finding of its own rule whose designators
match every glob; the first live covering waiver is the one quoted; an
expired one counts the findings it would have taken; a baseline entry takes
one finding of the same identity on the same board, never one already
waived (its entry is then waived, not fixed: fixed means gone); the fixed
entries come out in file order; an unknown rule id or
severity is an error at the place it was written.
"""

from __future__ import annotations

from datetime import date

import pytest

from drc.config.settings import Waiver
from drc.errors import ConfigError, SourceLocation, UsageError
from drc.gate.baseline import Baseline, BaselineEntry
from drc.gate.decision import (
    apply_annotations,
    apply_baseline,
    apply_waivers,
    board_matches,
    check_rule_ids,
    combine_notes,
    exit_status,
    judge_against_baseline,
    judge_board,
    resolve_selection,
    run_waiver_notes,
)
from tests.gate.builders import BOARD, RULE_IDS, finding

TODAY = date(2025, 3, 1)
LATER, EARLIER = date(2025, 12, 31), date(2025, 1, 1)


def waiver(rule="bounce-window", parts=("SW1",), expires=LATER, board=None, line=10, reason="r"):
    return Waiver(rule=rule, parts=parts, reason=reason, author="A. Designer",
                  expires=expires, board=board, origin=f"drc.toml:{line}")


def test_the_first_covering_waiver_is_quoted_and_every_covering_one_is_used():
    waivers = [waiver("slow-edge", line=1), waiver(parts=("SW9",), line=2), waiver(reason="second", line=3),
               waiver(reason="third", line=4)]
    outcome = apply_waivers([finding()], waivers, BOARD, TODAY)
    assert "second" in outcome.findings[0].justification
    assert outcome.used == frozenset({2, 3})
    assert outcome.applicable == frozenset({0, 1, 2, 3})
    assert [n.origin for n in outcome.notes] == ["drc.toml:1", "drc.toml:2"]  # stale: matched nothing


def test_an_expired_waiver_does_not_hide_a_live_one_behind_it():
    waivers = [waiver(expires=EARLIER, line=1), waiver(reason="live", line=2)]
    outcome = apply_waivers([finding(), finding(contact_ref="SW1", receiver_ref="U1:2")], waivers, BOARD, TODAY)
    assert [f.suppression for f in outcome.findings] == ["waiver", "waiver"]
    assert all("live" in f.justification for f in outcome.findings)
    [note] = outcome.notes
    assert note.kind == "expired" and note.hits == 2 and note.origin == "drc.toml:1"


def test_expired_hits_are_counted_per_waiver_and_summed_over_boards():
    waivers = [waiver(expires=EARLIER, line=1), waiver("slow-edge", expires=EARLIER, line=2)]
    a = apply_waivers([finding(board="a.cir"), finding(board="a.cir")], waivers, "a.cir", TODAY)
    b = apply_waivers([finding(board="b.cir")], waivers, "b.cir", TODAY)
    assert [(n.origin, n.hits) for n in a.notes] == [("drc.toml:1", 2), ("drc.toml:2", 0)]
    combined = combine_notes(waivers, [a, b], TODAY)
    assert [(n.origin, n.hits) for n in combined] == [("drc.toml:1", 3), ("drc.toml:2", 0)]
    assert combine_notes(waivers, [], TODAY)[0].hits == 0


def test_applicable_waivers_follow_the_board_glob():
    waivers = [waiver(board="boards/*.cir"), waiver(board="other/*.cir"), waiver()]
    assert apply_waivers([finding()], waivers, BOARD, TODAY).applicable == frozenset({0, 2})


@pytest.mark.parametrize("glob, path, matches", [
    (None, "anything.cir", True),
    ("boards\\*.cir", "boards/panel.cir", True),      # a Windows-style glob
    ("boards/*.cir", "./boards/panel.cir", True),      # a path given with ./
    ("panel.cir", "deep/boards/panel.cir", True),      # a bare glob also tries the file name
    ("boards/panel.cir", "deep/boards/panel.cir", False),
    ("PANEL.CIR", "boards/panel.cir", True),           # case-insensitive
    ("*.net", "boards/panel.cir", False),
])
def test_board_globs(glob, path, matches):
    assert board_matches(glob, path) is matches


def test_an_annotation_takes_only_findings_of_its_own_rule():
    at = SourceLocation(BOARD, 4, 1)
    findings = [finding("bounce-window"), finding("slow-edge"), finding("bounce-window", contact_ref="SW2")]
    outcome = apply_annotations(findings, [("bounce-window", ["SW1"], "bench", at)])
    assert [f.suppression for f in outcome.findings] == ["annotation", None, None]
    assert outcome.used == frozenset({0}) and outcome.applicable == frozenset({0})
    assert outcome.notes == ()
    unused = apply_annotations(findings, [("slow-edge", ["SW9"], "x", at)])
    [note] = unused.notes
    assert (note.kind, note.origin, note.rule, note.parts) == \
        ("unused-annotation", f"{BOARD}:4:1", "slow-edge", ("SW9",))
    assert unused.used == frozenset()


def test_judge_board_without_annotations_or_waivers():
    judged = judge_board([finding()], BOARD, TODAY)
    assert judged.annotation_notes == () and judged.waiver_outcome is None
    assert judged.findings[0].suppression is None


def test_judge_board_applies_board_globbed_waivers_to_its_own_board():
    judged = judge_board([finding()], BOARD, TODAY, waivers=[waiver(board="boards/*.cir")])
    assert judged.findings[0].suppression == "waiver"
    elsewhere = judge_board([finding(board="x/y.cir")], "x/y.cir", TODAY, waivers=[waiver(board="boards/*.cir")])
    assert elsewhere.findings[0].suppression is None


def entry(board, rule="bounce-window", contact="SW1", receiver="U1:1", parts=("C1", "R1")):
    return BaselineEntry(board, rule, contact, receiver, parts, "error", "m")


def test_a_baseline_never_takes_a_waived_finding():
    base = Baseline("/x/base.json", "/x", (entry("b.cir"),))
    waived = finding(board="/x/b.cir", suppression="waiver", justification="w")
    got = apply_baseline([waived], base, "/x/b.cir")
    assert got.findings[0].suppression == "waiver" and got.findings[0].justification == "w"
    assert [e.board for e in got.waived] == ["b.cir"] and got.fixed == ()  # still there: waived, not fixed
    gone = apply_baseline([], base, "/x/b.cir")
    assert [e.board for e in gone.fixed] == ["b.cir"] and gone.waived == ()


def test_baselined_findings_say_which_baseline_and_fixed_entries_come_in_file_order():
    base = Baseline("/x/base.json", "/x", (entry("b.cir", "slow-edge"), entry("b.cir", "bounce-window", "SW9"),
                                            entry("b.cir", "bounce-window", "SW3"), entry("b.cir")))
    got = apply_baseline([finding(board="/x/b.cir")], base, "/x/b.cir")
    assert got.findings[0].suppression == "baseline" and "/x/base.json" in got.findings[0].justification
    assert [(e.rule, e.contact) for e in got.fixed] == [("bounce-window", "SW3"), ("bounce-window", "SW9"),
                                                    ("slow-edge", "SW1")]


def test_unknown_rule_ids_are_errors_where_they_were_written():
    here = SourceLocation("drc.toml", 7, 3)
    with pytest.raises(ConfigError) as caught:
        resolve_selection(RULE_IDS, ["bounce-window"], ["slow-edg"], where="skip-rules", location=here)
    assert caught.value.location == here and caught.value.message.startswith("skip-rules: ")
    with pytest.raises(ConfigError) as caught:
        resolve_selection(RULE_IDS, ["bounce-windo"], location=here)
    assert caught.value.location == here and "bounce-window" in caught.value.message
    with pytest.raises(UsageError) as caught:
        check_rule_ids(["nope"], RULE_IDS, error=UsageError)
    assert caught.value.location is None and not caught.value.message.startswith(":")


def test_an_unknown_fail_level_is_an_error_naming_the_choices():
    with pytest.raises(ConfigError) as caught:
        exit_status([finding()], "fatal", False)
    assert "fail level" in caught.value.message and "'fatal'" in caught.value.message


def test_run_waiver_notes_combines_boards_that_share_waivers():
    shared = [waiver(board="a.cir", line=1), waiver(board="b.cir", line=2), waiver(expires=EARLIER, line=3)]
    own = [waiver("slow-edge", line=9)]
    on_a = apply_waivers([finding(board="a.cir")], shared, "a.cir", TODAY)
    on_b = apply_waivers([finding(board="b.cir")], shared, "b.cir", TODAY)
    on_c = apply_waivers([finding(board="c.cir")], own, "c.cir", TODAY)
    messages = run_waiver_notes([(shared, on_a), (shared, on_b), (own, on_c), ((), None), (shared, None)], TODAY)
    assert len(messages) == 2
    assert "drc.toml:3" in messages[0] and "2 findings no longer waived" in messages[0]
    assert "drc.toml:9" in messages[1] and "matches no finding" in messages[1]
    assert run_waiver_notes([], TODAY) == []


def test_waived_entries_are_those_of_waived_findings_in_file_order():
    base = Baseline("/x/base.json", "/x", (entry("b.cir", "slow-edge"), entry("b.cir", "bounce-window", "SW3")))
    findings = [finding("slow-edge", board="/x/b.cir", suppression="annotation", justification="a"),
                finding("bounce-window", contact_ref="SW3", board="/x/b.cir", suppression="waiver", justification="w"),
                finding("undebounced-input", contact_ref="SW7", board="/x/b.cir", suppression="waiver",
                        justification="w")]  # waived, but no entry of its own
    got = apply_baseline(findings, base, "/x/b.cir")
    assert [(e.rule, e.contact) for e in got.waived] == [("bounce-window", "SW3"), ("slow-edge", "SW1")]
    assert got.fixed == () and [f.suppression for f in got.findings] == ["annotation", "waiver", "waiver"]
    judged = judge_against_baseline([("/x/b.cir", findings), ("/x/c.cir", [finding(board="/x/c.cir")])], base)
    assert [(e.rule, e.contact) for e in judged.waived] == [("bounce-window", "SW3"), ("slow-edge", "SW1")]
    assert (judged.matched, judged.new, judged.fixed) == (0, 1, ())


def test_notes_name_the_waiver_they_are_about():
    waivers = [waiver("slow-edge", parts=("SW9", "R*"), expires=EARLIER, line=1), waiver("slow-edge", line=2)]
    notes = apply_waivers([finding()], waivers, BOARD, TODAY).notes
    assert [(n.kind, n.rule, n.parts) for n in notes] == [("expired", "slow-edge", ("SW9", "R*")),
                                                          ("stale", "slow-edge", ("SW1",))]
    combined = combine_notes(waivers, [], TODAY)
    assert [(n.kind, n.rule, n.parts) for n in combined] == [("expired", "slow-edge", ("SW9", "R*")),
                                                             ("stale", "slow-edge", ("SW1",))]
