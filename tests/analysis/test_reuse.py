"""The in-run stage cache (drc.analysis.reuse) gives the very figures of a fresh analysis.

Source of truth: `analysis.stage_analysis.analyse_stages` itself, run on every
stage with no memo; the cache must return equal StageResults (every level,
edge time, corner figure, current and note), re-bound to each stage and its
own designators.
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

from drc.analysis import reuse
from drc.analysis.receiver import receiver_electrical
from drc.analysis.stage_analysis import analyse_stages
from drc.board.classify import classify
from drc.board.recognise import stages_for_board
from drc.caching import clear_caches
from drc.config.settings import Config
from drc.netlist.reader import read_netlist_text
from drc.pipeline import library

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "benchmarks"))
from generate import generate  # noqa: E402

# Three keys of one design under other designators and nets, and a fourth with another capacitor.
KEYPAD = """keypad with repeated stages
V1 vcc 0 DC 5
R1 vcc k1 10k
R2 k1 in1 22k
C1 in1 0 1u
SW1 k1 0 TACTILE
R11 vcc k2 10k
R12 k2 in2 22k
C11 in2 0 1u
SW2 k2 0 TACTILE
R21 vcc k3 10k
R22 k3 in3 22k
C21 in3 0 1u
SW3 k3 0 TACTILE
R31 vcc k4 10k
R32 k4 in4 22k
C31 in4 0 2.2u
SW4 k4 0 TACTILE
XU1 in1 o1 in2 o2 in3 o3 0 o4 in4 o5 0 o6 0 vcc 74HC14
.end
"""


def _stages(text: str):
    lib = library()
    netlist = read_netlist_text(text, "<test>", keep_as_part=lib.is_known_subcircuit)
    config = Config()
    board = classify(netlist, lib, config, default_bounce_s=config.default_bounce_s)
    stages = list(stages_for_board(board, config))
    rxs = [receiver_electrical(lib, s.receiver.family, s.receiver.supply_v, s.receiver.schmitt) for s in stages]
    return stages, rxs


def _compare(stages, rxs):
    clear_caches()
    fresh = [analyse_stages([s], [rx])[0] for s, rx in zip(stages, rxs, strict=True)]
    clear_caches()
    solved: list[int] = []

    def counting(batch, batch_rxs):
        solved.append(len(batch))
        return analyse_stages(batch, batch_rxs)

    by_rx = dict(zip((id(s) for s in stages), rxs, strict=True))
    cached = reuse.analyse_stages_reusing(stages, lambda s: by_rx[id(s)], counting)
    assert cached == fresh
    for result, stage in zip(cached, stages, strict=True):
        assert result.stage is stage
    return sum(solved)


def test_repeated_keys_are_solved_once_with_their_own_designators():
    stages, rxs = _stages(KEYPAD)
    assert len(stages) == 4
    assert _compare(stages, rxs) == 2  # one design of three keys, and the fourth
    clear_caches()
    rx_of = dict(zip((s.name for s in stages), rxs, strict=True))
    results = reuse.analyse_stages_reusing(stages, lambda s: rx_of[s.name], analyse_stages)
    corners = set(results[1].edges["press"].corner_slowest)
    assert {"R11", "R12", "C11"} <= corners and not corners & {"R1", "R2", "C1"}


@pytest.mark.parametrize("name", sorted(p.name for p in (ROOT / "boards" / "lx24").glob("*.cir")))
def test_demo_boards_same_figures(name):
    stages, rxs = _stages((ROOT / "boards" / "lx24" / name).read_text())
    assert _compare(stages, rxs) <= len(stages)


def test_generated_board_same_figures():
    stages, rxs = _stages(generate(3000, 7, contacts=60))
    assert _compare(stages, rxs) < len(stages)  # the generator repeats values: some stages reused


def test_a_renamed_copy_in_a_later_call_is_taken_from_the_memo():
    # The module's contract: the results live in one memo for the process, so a renamed copy of a
    # stage solved by an earlier call (another board of an archive) is not solved again, and gets
    # the figures a fresh analysis gives it (analyse_stages itself, no memo), under its own names.
    stages, rxs = _stages(KEYPAD)
    first, copy = stages[0], stages[1]
    clear_caches()
    fresh = analyse_stages([copy], [rxs[1]])[0]
    clear_caches()
    solved: list[str] = []

    def counting(batch, batch_rxs):
        solved.extend(s.name for s in batch)
        return analyse_stages(batch, batch_rxs)

    by_rx = dict(zip((id(s) for s in stages), rxs, strict=True))
    reuse.analyse_stages_reusing([first], lambda s: by_rx[id(s)], counting)
    assert solved == [first.name]
    again = reuse.analyse_stages_reusing([copy], lambda s: by_rx[id(s)], counting)
    assert solved == [first.name]  # the copy was not solved
    assert again == [fresh] and again[0].stage is copy
