"""A networkx graph of one stage's nets and parts, for showing a path to a person.

The whole-board trace works on a plain net-to-part index (trace.py): a graph
of every pin of a large board costs more than the simulator's whole parse.
Graphs are built only here, per stage, from the handful of nets the tracing
visited, where networkx's path algorithms earn their import.
"""

from __future__ import annotations

from itertools import pairwise

from drc.board.stage import Stage
from drc.netlist.elements import GROUND


def stage_graph(stage: Stage):
    """Nets as nodes, parts (and the contact's throws) as edges with a `part` label."""
    import networkx as nx
    graph = nx.MultiGraph()
    circuit = stage.circuit
    for r in circuit.resistors:
        graph.add_edge(r.a, r.b, part=r.designator, kind="resistor", role=r.role)
    for c in circuit.capacitors:
        graph.add_edge(c.a, c.b, part=c.designator, kind="capacitor", role="capacitor")
    for d in circuit.diodes:
        graph.add_edge(d.anode, d.cathode, part=d.designator, kind="diode", role="diode")
    for t in circuit.throws:
        graph.add_edge(t.a, t.b, part=stage.contact.designator, kind="contact",
                       role=f"closed when {t.closed_when}")
    graph.add_node(circuit.receiver_node)
    return graph


def signal_path(stage: Stage) -> list[str]:
    """The shortest chain of nets and parts from the contact to the receiver pin.

    Alternates net and part names, starting at the contact's terminal nearest
    the receiver and ending at the receiver's net; rails and ground are not
    crossed (a path through them is not the signal path). Empty if none.
    """
    import networkx as nx
    graph = stage_graph(stage)
    rails = {s.net for s in stage.circuit.rails} | {GROUND}
    target = stage.circuit.receiver_node
    sources = [t for t in stage.contact.terminals if t in graph and t not in rails]
    inner = graph.subgraph([n for n in graph if n not in rails or n == target])
    best: list[str] | None = None
    for source in sources:
        if source not in inner:
            continue
        try:
            nets = nx.shortest_path(inner, source, target)
        except nx.NetworkXNoPath:
            continue
        if best is None or len(nets) < len(best):
            best = nets
    if best is None:
        return []
    out = [best[0]]
    for a, b in pairwise(best):
        parts = sorted(data["part"] for data in inner.get_edge_data(a, b).values())
        out += ["/".join(parts), b]
    return out
