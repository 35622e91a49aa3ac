"""The per-stage networkx graph and the signal path `drc trace` prints.

Checked against the netlist's own wiring (the path must follow the series
parts from the contact to the receiver and never cross a rail or ground),
and against networkx's own connectivity answer for the stage graph.
"""

from __future__ import annotations

import networkx as nx

from drc.board.signal_graph import signal_path, stage_graph
from drc.pipeline import check_netlist_text

TWO_SECTIONS = """two RC sections
V1 vcc 0 DC 5
R1 vcc a 10k
R2 a b 10k
C1 b 0 100n
R3 b in 22k
C2 in 0 47n
SW1 a 0 TACTILE
XU1 in y 0 0 0 0 0 0 0 0 0 0 0 vcc 74HC14
.end
"""


def _stage(text):
    _board, results, _findings = check_netlist_text(text, "t.cir")
    [result] = results
    return result.stage


def test_path_follows_the_series_parts():
    stage = _stage(TWO_SECTIONS)
    assert signal_path(stage) == ["a", "R2", "b", "R3", "in"]


def test_graph_holds_every_part_once_and_is_connected():
    stage = _stage(TWO_SECTIONS)
    graph = stage_graph(stage)
    parts = sorted(d["part"] for _a, _b, d in graph.edges(data=True))
    assert parts == ["C1", "C2", "R1", "R2", "R3", "SW1"]
    assert nx.is_connected(graph)


def test_direct_contact_path_is_just_the_pin_net():
    stage = _stage("direct\nV1 vcc 0 DC 5\nSW1 in 0 TACTILE\n"
                   "XU1 in y 0 0 0 0 0 0 0 0 0 0 0 vcc 74HC14\n.end\n")
    assert signal_path(stage) == ["in"]
