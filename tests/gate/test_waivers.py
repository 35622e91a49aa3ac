"""Waiver and annotation flows: live, expired, stale, unreadable date, board globs.

The flows follow the gate conventions of reference/ci-formats.md (common
practice among checkers, no source): an expired waiver stops suppressing
and says so, an unreadable date counts as expired, matching is by
designators, not lines.
"""

from datetime import date

from drc.config.settings import PartsMatch, Waiver
from drc.errors import SourceLocation
from drc.gate.decision import apply_annotations, apply_waivers, combine_notes
from tests.gate.builders import BOARD, finding

TODAY = date(2025, 3, 1)


def waiver(rule="bounce-window", parts=("SW1",), expires=date(2025, 12, 31), board=None, line=10,
           match=PartsMatch.ALL):
    return Waiver(rule=rule, parts=parts, reason="accepted for the prototype", author="A. Designer",
                  expires=expires, board=board, origin=f"drc.toml:{line}", match=match)


def test_live_waiver_suppresses_with_justification():
    outcome = apply_waivers([finding(), finding("slow-edge")], [waiver()], BOARD, TODAY)
    waived, other = sorted(outcome.findings, key=lambda f: f.rule)
    assert waived.suppression == "waiver"
    assert "accepted for the prototype" in waived.justification
    assert "A. Designer" in waived.justification and "2025-12-31" in waived.justification
    assert other.suppression is None  # other rule: untouched
    assert outcome.notes == ()


def test_every_glob_must_match_a_designator():
    f = finding(parts=("R1", "C1"))
    assert apply_waivers([f], [waiver(parts=("SW1", "R*"))], BOARD, TODAY).findings[0].suppression == "waiver"
    assert apply_waivers([f], [waiver(parts=("u1",))], BOARD, TODAY).findings[0].suppression == "waiver"
    assert apply_waivers([f], [waiver(parts=("U1:1",))], BOARD, TODAY).findings[0].suppression == "waiver"
    outcome = apply_waivers([f], [waiver(parts=("SW1", "R9"))], BOARD, TODAY)
    assert outcome.findings[0].suppression is None
    assert [n.kind for n in outcome.notes] == ["stale"]


def test_waiver_is_live_through_its_expiry_day():
    f = finding()
    assert apply_waivers([f], [waiver(expires=TODAY)], BOARD, TODAY).findings[0].suppression == "waiver"


def test_expired_waiver_stops_suppressing_and_is_reported():
    outcome = apply_waivers([finding()], [waiver(expires=date(2025, 2, 28))], BOARD, TODAY)
    assert outcome.findings[0].suppression is None
    (note,) = outcome.notes
    assert note.kind == "expired" and note.hits == 1
    assert "expired on 2025-02-28" in note.message and "1 finding no longer waived" in note.message
    assert "drc.toml:10" in note.message


def test_unreadable_date_counts_as_expired():
    outcome = apply_waivers([finding()], [waiver(expires=None)], BOARD, TODAY)
    assert outcome.findings[0].suppression is None
    (note,) = outcome.notes
    assert note.kind == "expired" and "unreadable expiry date" in note.message


def test_stale_waiver_is_reported():
    outcome = apply_waivers([finding()], [waiver(rule="slow-edge")], BOARD, TODAY)
    assert outcome.findings[0].suppression is None
    assert [n.kind for n in outcome.notes] == ["stale"]
    assert "matches no finding" in outcome.notes[0].message


def test_board_glob():
    f = finding()
    assert apply_waivers([f], [waiver(board="boards/*.cir")], BOARD, TODAY).findings[0].suppression == "waiver"
    assert apply_waivers([f], [waiver(board="panel.cir")], BOARD, TODAY).findings[0].suppression == "waiver"
    other = apply_waivers([f], [waiver(board="other/*.cir")], BOARD, TODAY)
    assert other.findings[0].suppression is None
    assert other.notes == ()  # not for this board: neither used nor stale here


def test_combine_notes_across_boards():
    waivers = [waiver(board="a.cir", line=1), waiver(board="b.cir", line=2),
               waiver(expires=date(2024, 1, 1), line=3)]
    on_a = apply_waivers([finding(board="a.cir")], waivers, "a.cir", TODAY)
    on_b = apply_waivers([finding("slow-edge", board="b.cir")], waivers, "b.cir", TODAY)
    notes = combine_notes(waivers, [on_a, on_b], TODAY)
    assert [(n.kind, n.origin) for n in notes] == [("stale", "drc.toml:2"), ("expired", "drc.toml:3")]
    assert notes[1].hits == 1  # the expired waiver would have covered a.cir's finding


def test_annotations():
    location = SourceLocation(BOARD, 4, 1)
    annotations = [("bounce-window", ["SW1"], "checked on the bench", location),
                   ("slow-edge", ["SW7"], "nothing", SourceLocation(BOARD, 6, 1))]
    outcome = apply_annotations([finding()], annotations)
    f = outcome.findings[0]
    assert f.suppression == "annotation" and "checked on the bench" in f.justification
    assert [n.kind for n in outcome.notes] == ["unused-annotation"]
    assert f"{BOARD}:6:1" in outcome.notes[0].message


def test_annotation_first_then_waiver_keeps_annotation():
    annotated = apply_annotations([finding()], [("bounce-window", ["SW1"], "r", SourceLocation(BOARD, 4))])
    outcome = apply_waivers(annotated.findings, [waiver()], BOARD, TODAY)
    assert outcome.findings[0].suppression == "annotation"
    assert outcome.notes == ()  # the waiver matched, so it is not stale


def test_parts_any_waives_each_finding_with_one_of_its_designators():
    """The user who wrote SW1 and SW4 meaning either: parts-any says so."""
    on_sw1 = finding("undebounced-input", "SW1", "U1:1", ())
    on_sw4 = finding("undebounced-input", "SW4", "U2:3", ())
    both = [on_sw1, on_sw4]
    any_of = apply_waivers(both, [waiver("undebounced-input", ("SW1", "SW4"), match=PartsMatch.ANY)],
                           BOARD, TODAY)
    assert [f.suppression for f in any_of.findings] == ["waiver", "waiver"] and any_of.notes == ()
    all_of = apply_waivers(both, [waiver("undebounced-input", ("SW1", "SW4"))], BOARD, TODAY)
    assert [f.suppression for f in all_of.findings] == [None, None]


def test_near_misses_are_reported():
    on_sw1 = finding("undebounced-input", "SW1", "U1:1", ())
    on_sw4 = finding("pullup-waste", "SW4", "U2:3", ("R4",))
    outcome = apply_waivers([on_sw1, on_sw4], [waiver("undebounced-input", ("SW1", "SW4")),
                                               waiver("slow-edge", ("R4",), line=20)], BOARD, TODAY)
    first, second = outcome.notes
    assert first.kind == second.kind == "stale"
    assert "undebounced-input at SW1 → U1:1 involves SW1 but not SW4" in first.message
    assert "parts-any waives each finding with one" in first.message
    assert "pullup-waste at SW4 → U2:3 involves R4 but is another rule" in second.message
    # Across boards, the run's note keeps the near misses it saw.
    waivers = [waiver("undebounced-input", ("SW1", "SW4"))]
    notes = combine_notes(waivers, [apply_waivers([on_sw1], waivers, BOARD, TODAY)], TODAY)
    assert "involves SW1 but not SW4" in notes[0].message
