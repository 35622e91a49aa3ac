"""trace_paths: which receivers each contact reaches, and the region it spans.

Expectations follow from the netlists: a rail or ground holds its net, so
a walk never crosses it; a logic output drives its net, so a contact behind
a gate does not reach the next gate's input (common practice, no source).
"""

from __future__ import annotations

import time

from drc.board.recognise import stages_for_board
from drc.board.trace import trace_paths, untraced_contacts
from drc.config.settings import Config

SUPPLY = "V1 +5V 0 DC 5\n"


def _paths(board):
    return [(p.contact.designator, p.receiver.ref) for p in trace_paths(board)]


def test_walk_stops_at_rails_and_ground(board_of):
    board = board_of("two keys\n" + SUPPLY + """
XU1 A o1 B o2 0 o3 0 o4 0 o5 0 o6 0 +5V 74HC14
R1 +5V A 10k
C1 A 0 100n
SW1 A 0 TACTILE
R2 +5V B 10k
C2 B 0 100n
SW2 B 0 TACTILE
""")
    paths = trace_paths(board)
    assert [(p.contact.designator, p.receiver.ref) for p in paths] == [("SW1", "U1:1"), ("SW2", "U1:3")]
    first = paths[0]
    assert [e.designator for e in first.elements] == ["R1", "C1"]
    assert first.nets == ("A", "+5V", "0")
    assert first.boundary == ("+5V", "0")


def test_walk_stops_at_part_outputs(board_of):
    board = board_of("behind a gate\n" + SUPPLY + """
XU1 A Y 0 o2 0 o3 0 o4 0 o5 0 o6 0 +5V 74HC14
XU2 B o1 0 o2 0 o3 0 o4 0 o5 0 o6 0 +5V 74HC14
R1 +5V A 10k
SW1 A 0 TACTILE
R9 Y B 1k
""")
    assert _paths(board) == [("SW1", "U1:1")]


def test_walk_crosses_series_parts_to_several_receivers(board_of):
    board = board_of("fan out\n" + SUPPLY + """
XU1 A o1 B o2 0 o3 0 o4 0 o5 0 o6 0 +5V 74HC14
R1 +5V SWN 10k
R2 SWN A 10k
D1 A B 1N4148
SW1 SWN 0 TACTILE
.model 1N4148 D
""")
    assert _paths(board) == [("SW1", "U1:1"), ("SW1", "U1:3")]


def test_contact_reaching_nothing_gives_no_path(board_of):
    board = board_of("nothing\n" + SUPPLY + """
R1 +5V LOOSE 10k
SW1 LOOSE 0 TACTILE
""")
    paths = trace_paths(board)
    assert paths == []
    assert [c.designator for c in untraced_contacts(board, paths)] == ["SW1"]


def _generated_board(keys: int) -> str:
    """`keys` independent RC-filtered keys into '14 hex inverters (6 per part)."""
    lines = ["generated", "V1 +5V 0 DC 5"]
    parts = (keys + 5) // 6
    for p in range(parts):
        inputs = [f"IN{p * 6 + g}" if p * 6 + g < keys else "0" for g in range(6)]
        pins = [inputs[0], f"Y{p}_1", inputs[1], f"Y{p}_2", inputs[2], f"Y{p}_3", "0",
                f"Y{p}_4", inputs[3], f"Y{p}_5", inputs[4], f"Y{p}_6", inputs[5], "+5V"]
        lines.append(f"XU{p} {' '.join(pins)} 74HC14")
    for k in range(keys):
        lines += [f"R{k}a +5V S{k} 10k", f"R{k}b S{k} IN{k} 47k", f"C{k} IN{k} 0 470n",
                  f"SW{k} S{k} 0 TACTILE"]
    return "\n".join(lines) + "\n.end\n"


def test_every_contact_of_a_large_board_is_traced(board_of):
    keys = 2000
    board = board_of(_generated_board(keys))
    assert len(board.contacts) == keys
    start = time.perf_counter()
    paths = trace_paths(board)
    elapsed = time.perf_counter() - start
    # Correctness only; the time is printed for the report (no timed assertion).
    print(f"\ntrace_paths: {keys} contacts, {len(board.netlist.elements)} elements: "
          f"{elapsed * 1e3:.1f} ms")
    assert len(paths) == keys
    assert {p.contact.designator for p in paths} == {f"SW{k}" for k in range(keys)}
    for p in paths[:50]:
        k = p.contact.designator[2:]
        assert p.receiver.net == f"IN{k}"
        assert {e.designator for e in p.elements} == {f"R{k}a", f"R{k}b", f"C{k}"}
    stages = stages_for_board(board, Config())
    assert len(stages) == keys and {s.kind for s in stages} == {"rc-schmitt"}
