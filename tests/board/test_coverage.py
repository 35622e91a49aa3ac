"""The survey of every contact (drc/board/coverage.py): checked, non-logic load, or not checked.

Structural cases, each built so its outcome follows from the circuit: an
element the reader could not evaluate on a contact's path makes that
contact's stages unchecked and keeps them out of the analysis; the same
element off every path changes nothing; a contact with a checked stage and
an unknown part on its net is not checked; loads are named.
"""

from __future__ import annotations

from drc.board.board import UncheckedReason
from drc.board.coverage import ContactStatus, survey_board
from drc.config.settings import Config
from drc.pipeline import CheckOptions, check_netlist_in_memory

STAGE = """* reference stage plus a second key
V1 vcc 0 DC 5
R1 vcc n1 8.2k
SW1 n1 0 TACTILE
R2 n1 in 39k
C1 in 0 1u
XU1 in y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 vcc 74HC14
R9 vcc spare_a 10k
R10 spare_a spare_b 10k
.end
"""


def _mark(board, designator: str, problem: str) -> None:
    # What the reader does with a value it cannot compute: the element stays, with its reason.
    element = next(e for e in board.netlist.elements if e.designator == designator)
    element.problem = problem


def test_an_unevaluable_element_on_the_path_makes_the_stage_unchecked(board_of, lib):
    board = board_of(STAGE)
    _mark(board, "R2", "value {rseries} cannot be computed: rseries is not defined")
    survey = survey_board(board, lib)
    assert survey.paths == ()
    (item,) = survey.unchecked
    assert (item.contact.designator, item.receiver, item.reason) == \
        ("SW1", "U1:1", UncheckedReason.UNEVALUABLE_ELEMENT)
    assert "R2" in item.detail and "rseries" in item.detail
    (outcome,) = survey.outcomes
    assert outcome.status == ContactStatus.NOT_CHECKED


def test_an_unevaluable_element_off_every_path_changes_nothing(board_of, lib):
    board = board_of(STAGE)
    _mark(board, "R10", "value cannot be computed")
    survey = survey_board(board, lib)
    assert [p.receiver.ref for p in survey.paths] == ["U1:1"]
    assert survey.unchecked == ()
    assert survey.outcomes[0].status == ContactStatus.CHECKED


def test_the_pipeline_does_not_analyse_an_unchecked_stage(board_of):
    board = board_of(STAGE)
    _mark(board, "R2", "value cannot be computed")
    check = check_netlist_in_memory(board.netlist, Config(), CheckOptions(propose_fixes=False), "<test>")
    assert check.results == []
    assert [(f.rule, f.reason) for f in check.findings] == [("unchecked-input", "unevaluable-element")]


def test_a_checked_stage_beside_an_unknown_part_is_not_checked(board_of, lib):
    board = board_of(STAGE.replace(".end", "XU9 in ctl MYSTERY_BOX\n.end"))
    survey = survey_board(board, lib)
    assert [p.receiver.ref for p in survey.paths] == ["U1:1"]
    assert [(u.receiver, u.reason) for u in survey.unchecked] == [("U9", UncheckedReason.UNKNOWN_RECEIVER)]
    assert survey.outcomes[0].status == ContactStatus.NOT_CHECKED
    assert survey.outcomes[0].receivers == ("U1:1",)


def test_connectors_and_test_points_are_passed_by(board_of, lib):
    board = board_of(STAGE.replace(".end", "XJ1 n1 vcc 0 CONN_01x03\nXTP1 in TESTPOINT\n.end"))
    survey = survey_board(board, lib)
    assert survey.unchecked == () and survey.outcomes[0].status == ContactStatus.CHECKED


def test_loads_only(board_of, lib):
    board = board_of("""* a relay coil and a motor
V1 v24 0 DC 24
SW1 v24 coil TOGGLE
XK1 coil 0 G2R_COIL_24V
SW2 v24 fan TOGGLE
XM1 fan 0 DC_MOTOR_24V
.end
""")
    survey = survey_board(board, lib)
    assert [(o.contact, o.status, o.loads) for o in survey.outcomes] == [
        ("SW1", ContactStatus.LOAD_ONLY, ("relay coil K1",)),
        ("SW2", ContactStatus.LOAD_ONLY, ("motor M1",))]
    assert survey.unchecked == ()


def test_a_contact_reaching_nothing_has_no_path(board_of, lib):
    board = board_of("* nothing\nV1 vcc 0 DC 5\nR1 vcc a 10k\nSW1 a 0 TACTILE\n.end\n")
    survey = survey_board(board, lib)
    (item,) = survey.unchecked
    assert item.reason == UncheckedReason.NO_PATH and item.receiver is None


def test_an_mcu_pin_the_config_does_not_describe(board_of, lib):
    from drc.config.settings import McuConfig, McuPinConfig
    config = Config(mcus=(McuConfig(part="U1", family="MCU-3V3", supply_v=3.3,
                                    pins=(McuPinConfig(part="U1", pin=2, family="MCU-3V3"),)),))
    board = board_of("""* key on an undescribed MCU pin
V1 v33 0 DC 3.3
R1 v33 k 10k
SW1 k 0 TACTILE
XU1 v33 other k 0 STM_LIKE
.end
""", config)
    survey = survey_board(board, lib)
    assert [(u.receiver, u.reason) for u in survey.unchecked] == [("U1:3", UncheckedReason.UNKNOWN_RECEIVER)]


def test_a_switched_logic_supply_is_a_load(board_of, lib):
    board = board_of("""* a power switch in front of a gate's supply
V1 v5 0 DC 5
SW1 v5 vsw TOGGLE
XU1 0 y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 vsw 74HC14
.end
""")
    survey = survey_board(board, lib)
    assert [(o.contact, o.status, o.loads) for o in survey.outcomes] == [
        ("SW1", ContactStatus.LOAD_ONLY, ("supply of U1",))]


def test_a_switch_between_rails_is_a_power_switch(board_of, lib):
    board = board_of("* battery switch\nV1 vbat 0 DC 9\nV2 v5 0 DC 5\nSW1 vbat v5 TOGGLE\n.end\n")
    survey = survey_board(board, lib)
    assert [(o.status, o.loads) for o in survey.outcomes] == [
        (ContactStatus.LOAD_ONLY, ("supply rail v5", "supply rail vbat"))]
