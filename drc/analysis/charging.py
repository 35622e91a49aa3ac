"""Which parts an edge's capacitor charges through: the parts a timing fix may name.

Why: a fix that says "raise R1, R2 or C1" for a press edge that discharges
the capacitor through R2 and the bare contact names a part (the pull-up R1)
that cannot slow it: with the contact closed, R1 hangs between the rail and
ground and carries none of the capacitor's current. This module answers,
from the stage's topology alone, which resistors and capacitors lie on the
capacitor's current path in the state an edge ends in.

How: in the state the edge ends in, every rail and ground is one node (a
source holds its voltage) and each closed throw joins its two nets. A part
carries the capacitor's current exactly when it lies on a simple cycle
through that capacitor, that is, in the same biconnected block of the
network (Whitney's theorem); resistors hanging off the loop (a series
resistor to a pin that draws only leakage) or shorted out (the pull-up above)
do not. It is topology, not a solve: the result is the same for any values.
"""

from __future__ import annotations

from drc.analysis.results import EDGE_STATES, Edge
from drc.board.stage import StageCircuit
from drc.caching import memoized

_SOURCE = "\0source"  # the node every rail and ground become


@memoized(4096)
def charging_parts(circuit: StageCircuit, edge: Edge | str) -> tuple[str, ...]:
    """Designators of the resistors and capacitors on the capacitors' current path
    in the state `edge` ends in, in circuit order; () when no capacitor charges."""
    state = EDGE_STATES[Edge(edge)][1]
    fixed = {"0", *(r.net for r in circuit.rails)}
    parent: dict[str, str] = {}

    def find(net: str) -> str:
        net = _SOURCE if net in fixed else net
        while parent.get(net, net) != net:
            net = parent[net]
        return net

    for t in circuit.throws:
        if t.closed_when == state:
            a, b = find(t.a), find(t.b)
            if a != b:
                parent[a] = b
    branches: list[tuple[str, str, str]] = []  # (designator or "", node, node)
    branches += [(r.designator, find(r.a), find(r.b)) for r in circuit.resistors]
    branches += [("", find(d.anode), find(d.cathode)) for d in circuit.diodes]
    caps = [(c.designator, find(c.a), find(c.b)) for c in circuit.capacitors]
    branches += caps
    blocks = _blocks([(u, v) for _, u, v in branches])
    on_path: set[int] = set()
    first_cap = len(branches) - len(caps)
    for k in range(first_cap, len(branches)):
        if k in blocks:
            on_path |= {j for j, blk in blocks.items() if blk == blocks[k]}
    names = [branches[j][0] for j in sorted(on_path)]
    order = [r.designator for r in circuit.resistors] + [c.designator for c in circuit.capacitors]
    return tuple(d for d in order if d in names)


def _blocks(edges: list[tuple[str, str]]) -> dict[int, int]:
    """Biconnected block of each edge (by index); self-loops get none (Tarjan's algorithm)."""
    adjacency: dict[str, list[tuple[str, int]]] = {}
    for k, (u, v) in enumerate(edges):
        if u != v:
            adjacency.setdefault(u, []).append((v, k))
            adjacency.setdefault(v, []).append((u, k))
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[int] = []
    out: dict[int, int] = {}
    counter = [0, 0]  # next discovery index, next block id

    def visit(u: str, via: int) -> None:
        index[u] = low[u] = counter[0]
        counter[0] += 1
        for w, k in adjacency.get(u, []):
            if k == via:
                continue
            if w not in index:
                stack.append(k)
                visit(w, k)
                low[u] = min(low[u], low[w])
                if low[w] >= index[u]:  # u separates w's subtree: pop one block
                    while True:
                        e = stack.pop()
                        out[e] = counter[1]
                        if e == k:
                            break
                    counter[1] += 1
            elif index[w] < index[u]:
                stack.append(k)
                low[u] = min(low[u], index[w])

    for node in adjacency:
        if node not in index:
            visit(node, -1)
    return out
