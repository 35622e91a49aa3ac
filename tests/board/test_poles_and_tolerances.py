"""Which terminals of a multi-pole switch pack make each pole, and how a `tol=` value reads.

Sources:
- DIP switch packs number their pins around the body (pin 1 top left,
  counter-clockwise to pin 2N top right), so position k joins pin k and
  pin 2N+1-k: the usual DIP package outline (JEDEC MS-001 numbering,
  from memory). A multi-pole changeover pack lists each pole's common,
  normally closed and normally open terminals in turn (common practice, no
  source).
- A tolerance written as a bare number of 1 or more is a percentage, as
  schematic editors export it (`tol=1` for a 1 % part; no resistor or
  capacitor is sold at ±100 %): common practice, no source. A fraction
  below 1 is a fraction.
"""

from __future__ import annotations

import pytest

from drc.board.classify import parse_tolerance
from drc.board.recognise import stages_for_board
from drc.config.settings import Config, ContactConfig

HC14 = "XU1 {a} o1 0 o2 0 o3 0 o4 0 o5 0 o6 0 +5V 74HC14\n"


def test_dip_pack_pole_k_joins_pin_k_and_pin_2n_plus_1_minus_k(board_of):
    board = board_of("dip pack, every pin on its own net\nXSW3 p1 p2 p3 p4 p5 p6 DIP_SW3\n",
                     Config(contacts=(ContactConfig("SW3", contact_class="dip"),)))
    poles = {c.designator: c.terminals for c in board.contacts}
    assert poles == {"SW3.1": ("p1", "p6"), "SW3.2": ("p2", "p5"), "SW3.3": ("p3", "p4")}


def test_four_pole_pack(board_of):
    nodes = " ".join(f"n{i}" for i in range(1, 9))
    board = board_of(f"four poles\nXSW4 {nodes} DIP_SW4\n",
                     Config(contacts=(ContactConfig("SW4", contact_class="dip"),)))
    assert [c.terminals for c in board.contacts] == [("n1", "n8"), ("n2", "n7"), ("n3", "n6"), ("n4", "n5")]


def test_changeover_pack_poles_in_threes(board_of):
    board = board_of("two changeover poles\nXSW5 c1 nc1 no1 c2 nc2 no2 TOGGLE_DPDT\n",
                     Config(contacts=(ContactConfig("SW5", contact_class="toggle", form="SPDT"),)))
    got = [(c.designator, c.form, c.terminals) for c in board.contacts]
    assert got == [("SW5.1", "SPDT", ("c1", "nc1", "no1")), ("SW5.2", "SPDT", ("c2", "nc2", "no2"))]


@pytest.mark.parametrize("raw, fraction", [
    ("1", 0.01), (1, 0.01), (1.0, 0.01), ("5", 0.05), (20, 0.20), ("1%", 0.01), ("0.5%", 0.005),
    ("0.05", 0.05), (0.2, 0.2), (0, 0.0), ("0.999", 0.999),
])
def test_tolerance_reading(raw, fraction):
    assert parse_tolerance(raw) == pytest.approx(fraction)


@pytest.mark.parametrize("raw", ["-1", -0.05, "five", "%"])
def test_tolerance_that_is_not_one(raw):
    assert parse_tolerance(raw) is None


def test_a_one_percent_part_written_tol_1_varies_by_one_percent(board_of):
    board = board_of("tol=1\nV1 +5V 0 DC 5\n" + HC14.format(a="IN") +
                     "R1 +5V IN 10k tol=1\nC1 IN 0 100n tol=10\nSW1 IN 0 TACTILE\n")
    [stage] = [s for s in stages_for_board(board, Config()) if s.contact.designator == "SW1"]
    [r1] = stage.circuit.resistors
    assert (r1.tol_minus, r1.tol_plus) == pytest.approx((0.01, 0.01))
    assert stage.circuit.capacitors[0].tol_minus == pytest.approx(0.10)
