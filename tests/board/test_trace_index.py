"""The trace index (board/trace.build_index) is keyed by the nets' spellings and keeps a
lone pin's element as a bare index; what it answers is the plain definition.

Sources: the definition written out here: the passive elements (R, C, L, D) with a
node equal to the net case-insensitively, in netlist order. The reader's promise
the index rests on, one spelling per net (the first written, for every element on
it, in whatever case later lines write it), is checked on the demo boards, the
export and dialect fixtures, the reader corpus and a netlist that writes its nets
in several cases on purpose (nets are case-insensitive in SPICE: the ngspice
manual, "all names are case-insensitive" in its netlist conventions; from memory).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from drc.board.classify import classify
from drc.board.trace import PASSIVE_KINDS, build_index
from drc.config.settings import Config
from drc.errors import DrcError
from drc.netlist.reader import read_netlist, read_netlist_text
from drc.pipeline import library

ROOT = Path(__file__).resolve().parents[2]
FILES = sorted([*(ROOT / "boards" / "lx24").glob("*.cir"), *(ROOT / "tests" / "board" / "exports").glob("*.cir"),
                *(ROOT / "tests" / "netlist" / "dialects" / "boards").glob("*.cir"),
                *(ROOT / "tests" / "netlist" / "corpus").glob("*.cir")])
MIXED_CASE = """nets written in several cases
V1 Vcc 0 DC 5
R1 VCC key 10k
R2 Key IN 22k
C1 in 0 100n
SW1 KEY 0 TACTILE
XU1 In o1 0 o2 0 o3 0 o4 0 o5 0 o6 0 vcc 74HC14
.subckt pad a b
Rp A mid 1k
Cp MID b 1n
.ends
X1 key GND pad
X2 KEY gnd PAD
.end
"""


def _netlists():
    lib = library()
    for path in FILES:
        try:
            yield path.name, read_netlist(str(path), keep_as_part=lib.is_known_subcircuit)
        except DrcError:
            continue  # a fixture that is meant not to read
    yield "mixed case", read_netlist_text(MIXED_CASE, "<mixed>", keep_as_part=lib.is_known_subcircuit)


NETLISTS = list(_netlists())


def test_the_files_are_read():
    assert len(NETLISTS) >= 20


@pytest.mark.parametrize("name, netlist", NETLISTS, ids=[n for n, _ in NETLISTS])
def test_the_reader_writes_each_net_one_way(name, netlist):
    spellings: dict[str, set[str]] = {}
    for element in netlist.elements:
        for node in element.nodes:
            spellings.setdefault(node.casefold(), set()).add(node)
    assert {k: s for k, s in spellings.items() if len(s) > 1} == {}


@pytest.mark.parametrize("name, netlist", NETLISTS, ids=[n for n, _ in NETLISTS])
def test_the_index_answers_the_definition(name, netlist):
    lib = library()
    config = Config()
    board = classify(netlist, lib, config, default_bounce_s=config.default_bounce_s)
    index = build_index(board)
    elements = board.netlist.elements
    for net in {n.casefold() for e in elements for n in e.nodes}:
        plain = [i for i, e in enumerate(elements) if e.kind in PASSIVE_KINDS
                 for n in e.nodes if n.casefold() == net]
        assert list(index.passives_at(net)) == plain, net
        spelled = next(n for e in elements for n in e.nodes if n.casefold() == net)
        assert list(index.passives_at(net, spelled)) == plain, net
