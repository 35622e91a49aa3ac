"""The parts an edge's capacitor charges through, on drawn networks, against networkx.

A part carries the capacitor's current exactly when it lies on a simple
cycle through the capacitor: the same biconnected block of the network
(Whitney's theorem; analysis/charging.py), with every rail and ground one
node and each closed throw joining its nets. The check value here is
networkx's own biconnected components (Hopcroft and Tarjan's algorithm, an
implementation outside this project) on the same network, each branch
split in two by a node of its own so that parallel branches stay distinct
(a split branch lies in the same block as the branch did).
"""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest

from drc.analysis.charging import charging_parts
from drc.board.stage import Capacitor, RailSource, Resistor, StageCircuit, Throw

NETS = ["0", "vcc", "n1", "n2", "n3", "n4", "n5"]


def drawn(rng: np.random.Generator) -> StageCircuit:
    def pair():
        a, b = rng.choice(len(NETS), size=2, replace=False)
        return NETS[a], NETS[b]

    resistors = tuple(Resistor(f"R{i + 1}", *pair(), 1e3) for i in range(int(rng.integers(2, 9))))
    capacitors = tuple(Capacitor(f"C{i + 1}", *pair(), 1e-9) for i in range(int(rng.integers(1, 3))))
    throws = (Throw(*pair(), "pressed", 0.1),)
    return StageCircuit(resistors, capacitors, (), (RailSource("vcc", 5.0),), throws, "n1")


def expected(circuit: StageCircuit) -> tuple[str, ...]:
    """The parts in a capacitor's biconnected block, by networkx, in circuit order."""
    def node(net: str) -> str:
        return "source" if net in ("0", "vcc") else net

    joined = nx.Graph()
    joined.add_nodes_from(node(n) for n in NETS)
    for t in circuit.throws:  # pressed: the closed throw joins its two nets
        joined.add_edge(node(t.a), node(t.b))
    merged = {n: min(comp) for comp in nx.connected_components(
        nx.Graph([(a, b) for a, b in joined.edges])) for n in comp}

    def where(net: str) -> str:
        return merged.get(node(net), node(net))

    graph = nx.Graph()
    parts = [(r.designator, r.a, r.b) for r in circuit.resistors] + \
        [(c.designator, c.a, c.b) for c in circuit.capacitors]
    for name, a, b in parts:
        u, v = where(a), where(b)
        if u != v:  # a part shorted onto one node carries no current
            graph.add_edge(u, name)
            graph.add_edge(name, v)
    on_path: set[str] = set()
    caps = {c.designator for c in circuit.capacitors}
    for block in nx.biconnected_components(graph):
        names = {n for n in block if n.startswith(("R", "C"))}
        if names & caps:
            on_path |= names
    order = [p[0] for p in parts]
    return tuple(d for d in order if d in on_path)


@pytest.mark.parametrize("seed", range(6))
def test_charging_parts_are_the_capacitors_blocks(seed):
    rng = np.random.default_rng(1000 + seed)
    for _ in range(60):
        circuit = drawn(rng)
        assert charging_parts(circuit, "press") == expected(circuit), circuit
