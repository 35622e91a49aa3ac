"""unchecked-input: the structured fields of its finding (nets, location, related locations).

These fields go into JSON, SARIF and JUnit and feed baselines and waivers, so each is
checked against what the test itself wrote: the netlist's lines and nets, or the
survey's item built by hand (the rule's docstring: the survey finds the reasons, "this
rule only words them", so what the item holds is what the finding must carry).
"""

from __future__ import annotations

import pathlib

from drc.board.board import UncheckedReason
from drc.board.coverage import UncheckedInput
from drc.checks import run_rules
from drc.errors import SourceLocation
from drc.pipeline import check_netlist_text
from tests.checks.builders import LIMITS, contact

EXPORTS = pathlib.Path(__file__).parents[1] / "board" / "exports" / "failclosed"


def test_a_real_export_the_finding_sits_on_the_contact_with_the_unknown_parts_net():
    # unknown_part.cir (read by hand): line 7 is "SW1 panic 0 TACTILE", line 10 is
    # "XU1 panic_f ctl1 ctl2 ctl3 0 vcc DIMMER_ASIC"; the contact reaches the unknown part
    # on net panic_f (through R2 39k).
    _, _, findings = check_netlist_text((EXPORTS / "unknown_part.cir").read_text(encoding="utf-8"))
    [f] = [f for f in findings if f.rule == "unchecked-input"]
    assert f.contact == "SW1" and f.parts == ("SW1", "U1")
    assert f.nets == ("panic_f",)
    assert f.location.line == 7
    assert [loc.line for loc in f.related] == [10]


def _item(**kw) -> UncheckedInput:
    fields = dict(contact=contact(), reason=UncheckedReason.UNEVALUABLE_ELEMENT,
                  detail="an element on the path cannot be evaluated: R7 (bad value)",
                  receiver="U1:1", parts=("R7",), nets=("n1", "in"), related=())
    fields.update(kw)
    return UncheckedInput(**fields)


def _run(item, board=None):
    return run_rules(board, [], LIMITS, selected_ids={"unchecked-input"}, unchecked=[item])


def test_without_a_board_index_the_finding_sits_at_the_contacts_own_line():
    # No board (so no netlist index): the only place known for SW1 is the one the contact
    # carries, test.cir line 4 (builders.contact); a finding with no location cannot be
    # opened at its line in a report, nor matched by a baseline entry.
    sw1 = contact()
    [f] = _run(_item(contact=sw1))
    assert f.location == SourceLocation("test.cir", 4, 1) == sw1.location
    assert f.nets == ("n1", "in")  # the survey's nets, as given


def test_the_related_places_are_the_surveys_less_the_findings_own():
    # The survey relates the element it could not read (R7, line 12 here) to the finding;
    # the contact's own line (4) is the finding's location, not a related place as well.
    r7 = SourceLocation("test.cir", 12, 1)
    [f] = _run(_item(related=(SourceLocation("test.cir", 4, 1), r7)))
    assert f.location == SourceLocation("test.cir", 4, 1)
    assert f.related == (r7,)
