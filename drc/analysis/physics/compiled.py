"""A stage circuit compiled into index arrays for fast, batched solving.

The analysis evaluates one stage at many corners, so the circuit's topology
is turned once into incidence matrices over its free nodes (every net except
ground and the rails, whose voltages are fixed), and its values into one
parameter vector per corner: every resistor, every capacitor, every rail
(the loads' supplies among them), and the leakage of every receiver input on
the stage's nets (one column per load, the stage's own receiver first, named
"leakage"; the others "leakage:U2:3"). The throws' and diodes' resistances
are fixed values of the topology, not parameters. A `Topology` is the resistive network in one
actuator state with one set of diode states; it is built on first use and
cached on the model, since a stage has only a handful of them. Receiver
inputs that are not a constant current (TTL inputs, clamps a rail can make
conduct) are compiled as the elements they are (`loads.expand_loads`), so
`LinearModel.circuit` may hold more than the Stage's circuit.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from drc.analysis.physics.loads import expand_loads
from drc.board.stage import StageCircuit

GROUND = "0"
LEAKAGE = "leakage"
THRESHOLD = "threshold"


def rail_param(net: str) -> str:
    """The parameter name of a rail's voltage (as used in corner dicts)."""
    return f"rail:{net}"


def leak_param(index: int, ref: str) -> str:
    """The parameter name of a load's leakage: "leakage" for the stage's own receiver."""
    return LEAKAGE if index == 0 else f"{LEAKAGE}:{ref}"


@dataclass(frozen=True, slots=True)
class Topology:
    """The resistive network in one state: branches as incidence rows.

    A branch current (p -> q) is g * (A @ v + Af @ vfix - e), with v the free
    node voltages, vfix the fixed ones (ground first, then rails) and e a
    series source (a diode's forward voltage). `dc_nodes` marks the free nodes
    with a DC path (resistor, closed throw, conducting diode) to a fixed node;
    `tr_nodes` the same when capacitors count as paths too.
    """

    state: str
    diodes_on: tuple[bool, ...]
    A: np.ndarray  # (m, n) incidence over free nodes
    Af: np.ndarray  # (m, nf) incidence over fixed nodes
    e: np.ndarray  # (m,) series source in each branch
    g_fixed: np.ndarray  # (m,) conductance of non-parameter branches (0 for resistors)
    res_cols: np.ndarray  # branch columns that are resistors
    res_params: np.ndarray  # their parameter columns
    throw_cols: tuple[int | None, ...]  # per throw: its branch column when closed
    diode_cols: tuple[int | None, ...]  # per diode: its branch column when on
    dc_nodes: np.ndarray  # (n,) bool
    tr_nodes: np.ndarray  # (n,) bool
    # (n,) bool: a DC path through the board's own parts (not a receiver input's
    # inner elements): a pin without one floats, whatever its input stage does.
    board_dc_nodes: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=bool))


@dataclass(slots=True)
class LinearModel:
    """A stage circuit as arrays. Build with `compile_circuit`."""

    circuit: StageCircuit
    free: tuple[str, ...]
    fixed: tuple[str, ...]  # "0" first, then the rail nets
    param_names: tuple[str, ...]
    nominal: np.ndarray
    lo: np.ndarray  # lower extreme of each parameter (leakage filled per use)
    hi: np.ndarray
    rx: int  # free-node index of the receiver, or -1 - fixed index if it is fixed
    res_nodes: tuple[tuple[int, int], ...]  # node codes: >= 0 free, < 0 fixed (-1 - i)
    rail_params: np.ndarray  # parameter column of each fixed node after ground
    cap_nodes: tuple[tuple[int, int], ...]  # merged capacitor branches
    cap_sel: np.ndarray  # (k, p): capacitance of branch j = P @ cap_sel[j]
    cap_designators: tuple[tuple[str, ...], ...]
    Ac: np.ndarray  # (k, n) capacitor incidence over free nodes
    Acf: np.ndarray  # (k, nf) over fixed nodes
    leak_cols: tuple[int, ...]  # one per load, the stage's own receiver first
    leak_nodes: tuple[int, ...]  # node code of each load
    supply_col: int | None  # parameter column of the own receiver's supply, when the circuit says
    internal: frozenset[str] = frozenset()  # designators of the receiver inputs' own elements (loads.py)
    _topologies: dict = field(default_factory=dict)

    @property
    def leak_col(self) -> int:
        """The leakage column of the stage's own receiver."""
        return self.leak_cols[0]

    @property
    def loads(self):
        return self.circuit.loads

    @property
    def n(self) -> int:
        return len(self.free)

    @property
    def k(self) -> int:
        return len(self.cap_nodes)

    @property
    def has_diodes(self) -> bool:
        return bool(self.circuit.diodes)

    def column(self, name: str) -> int:
        return self.param_names.index(name)

    def fixed_voltages(self, P: np.ndarray) -> np.ndarray:
        """(N, nf): ground at 0 V, then each rail from its parameter column."""
        vfix = np.zeros((P.shape[0], len(self.fixed)))
        if len(self.fixed) > 1:
            vfix[:, 1:] = P[:, self.rail_params]
        return vfix

    def capacitances(self, P: np.ndarray) -> np.ndarray:
        """(N, k): merged capacitance of each capacitor branch."""
        return P @ self.cap_sel.T

    def topology(self, state: str, diodes_on: tuple[bool, ...]) -> Topology:
        key = (state, diodes_on)
        topo = self._topologies.get(key)
        if topo is None:
            topo = _build_topology(self, state, diodes_on)
            self._topologies[key] = topo
        return topo

    def node_code(self, net: str) -> int:
        if net in self._free_index:
            return self._free_index[net]
        return -1 - self.fixed.index(net)

    @property
    def _free_index(self) -> dict[str, int]:
        return {name: i for i, name in enumerate(self.free)}


def param_table(circuit: StageCircuit) -> tuple[tuple[str, ...], list[float], list[float], list[float]]:
    """(names, nominal, lo, hi) of every parameter, in the model's column order:
    resistors, capacitors, rails (not ground), then each load's leakage (set per use)."""
    names: list[str] = []
    nom: list[float] = []
    lo: list[float] = []
    hi: list[float] = []
    for res in circuit.resistors:
        names.append(res.designator)
        nom.append(res.ohms)
        lo.append(res.ohms * (1 - res.tol_minus))
        hi.append(res.ohms * (1 + res.tol_plus))
    for cap in circuit.capacitors:
        names.append(cap.designator)
        nom.append(cap.farads)
        lo.append(cap.farads * (1 - cap.tol_minus))
        hi.append(cap.farads * (1 + cap.tol_plus))
    for rail in circuit.rails:
        if rail.net != GROUND:
            names.append(rail_param(rail.net))
            nom.append(rail.volts)
            lo.append(rail.volts * (1 - rail.tolerance))
            hi.append(rail.volts * (1 + rail.tolerance))
    for i in range(max(1, len(circuit.loads))):
        names.append(leak_param(i, circuit.loads[i].ref if circuit.loads else ""))
        nom.append(0.0)
        lo.append(0.0)
        hi.append(0.0)
    return tuple(names), nom, lo, hi


def compile_circuit(circuit: StageCircuit) -> LinearModel:
    """Turn a stage circuit into index arrays and a parameter table (TTL inputs and
    clamps that can conduct added as elements first: `loads.expand_loads`)."""
    circuit, internal = _expanded(circuit)
    rails = [r for r in circuit.rails if r.net != GROUND]
    fixed = (GROUND,) + tuple(r.net for r in rails)
    free = tuple(net for net in circuit.nodes() if net not in fixed)
    free_index = {name: i for i, name in enumerate(free)}

    def code(net: str) -> int:
        return free_index[net] if net in free_index else -1 - fixed.index(net)

    names, nominal, lo, hi = param_table(circuit)
    p = len(names)
    n_r = len(circuit.resistors)

    # Parallel capacitors would be parallel voltage sources in the reduced
    # system (singular), so capacitors on the same pair of nets are merged.
    merged: dict[tuple[int, int], list[int]] = {}
    for j, c in enumerate(circuit.capacitors):
        a, b = code(c.a), code(c.b)
        if a == b or (a < 0 and b < 0):
            continue  # shorted, or between fixed nets: no dynamics
        key = (a, b) if (a, b) >= (b, a) else (b, a)
        merged.setdefault(key, []).append(j)
    cap_nodes = tuple(merged)
    k = len(cap_nodes)
    cap_sel = np.zeros((k, p))
    Ac = np.zeros((k, len(free)))
    Acf = np.zeros((k, len(fixed)))
    for row, (key, members) in enumerate(merged.items()):
        for j in members:
            cap_sel[row, n_r + j] = 1.0
        _stamp(Ac, Acf, row, key[0], key[1])
    cap_designators = tuple(tuple(circuit.capacitors[j].designator for j in m) for m in merged.values())

    rx_net = circuit.receiver_node
    rx = code(rx_net)
    n_loads = max(1, len(circuit.loads))
    first_rail = n_r + len(circuit.capacitors)
    return LinearModel(
        circuit=circuit, free=free, fixed=fixed, param_names=tuple(names),
        nominal=np.array(nominal), lo=np.array(lo), hi=np.array(hi), rx=rx,
        res_nodes=tuple((code(r.a), code(r.b)) for r in circuit.resistors),
        rail_params=np.arange(first_rail, first_rail + len(rails)),
        cap_nodes=cap_nodes, cap_sel=cap_sel, cap_designators=cap_designators,
        Ac=Ac, Acf=Acf, leak_cols=tuple(range(p - n_loads, p)),
        leak_nodes=tuple(code(ld.node) for ld in circuit.loads) if circuit.loads else (rx,),
        supply_col=_supply_column(circuit, rails, first_rail), internal=internal,
    )


def _expanded(circuit: StageCircuit) -> tuple[StageCircuit, frozenset[str]]:
    """The circuit with its loads' elements (`loads.expand_loads`), and their designators."""
    board_parts = {p.designator for group in (circuit.resistors, circuit.diodes) for p in group}
    circuit = expand_loads(circuit)
    return circuit, frozenset(p.designator for group in (circuit.resistors, circuit.diodes) for p in group
                              if p.designator not in board_parts)


def _supply_column(circuit: StageCircuit, rails: list, first_rail: int) -> int | None:
    """The parameter column of the rail the stage's own receiver is supplied from."""
    supply = circuit.supply_of_receiver()
    if supply is None or supply == GROUND:
        return None
    return first_rail + [r.net for r in rails].index(supply)


def _stamp(A: np.ndarray, Af: np.ndarray, row: int, a: int, b: int) -> None:
    """+1 at node a, -1 at node b, into the free or the fixed incidence."""
    for node, sign in ((a, 1.0), (b, -1.0)):
        if node >= 0:
            A[row, node] += sign
        else:
            Af[row, -1 - node] += sign


def _build_topology(model: LinearModel, state: str, diodes_on: tuple[bool, ...]) -> Topology:
    circuit = model.circuit
    rows: list[tuple[int, int, float, float]] = []  # (a, b, fixed g, e)
    inner: set[int] = set()  # rows of the receiver inputs' own elements
    res_cols: list[int] = []
    for r, (a, b) in zip(circuit.resistors, model.res_nodes, strict=True):
        if r.designator in model.internal:
            inner.add(len(rows))
        res_cols.append(len(rows))
        rows.append((a, b, 0.0, 0.0))
    throw_cols: list[int | None] = []
    for t in circuit.throws:
        if t.closed_when == state:
            throw_cols.append(len(rows))
            rows.append((model.node_code(t.a), model.node_code(t.b), 1.0 / t.closed_ohms, 0.0))
        else:
            throw_cols.append(None)
    diode_cols: list[int | None] = []
    for d, on in zip(circuit.diodes, diodes_on, strict=True):
        if on:
            if d.designator in model.internal:
                inner.add(len(rows))
            diode_cols.append(len(rows))
            rows.append((model.node_code(d.anode), model.node_code(d.cathode), 1.0 / d.on_ohms, d.forward_v))
        else:
            diode_cols.append(None)
    m, n, nf = len(rows), model.n, len(model.fixed)
    A, Af = np.zeros((m, n)), np.zeros((m, nf))
    e, g_fixed = np.zeros(m), np.zeros(m)
    for i, (a, b, g, ev) in enumerate(rows):
        _stamp(A, Af, i, a, b)
        g_fixed[i] = g
        e[i] = ev
    pairs = [(a, b) for a, b, _, _ in rows]
    dc_nodes = _reaches_fixed(n, pairs)
    tr_nodes = _reaches_fixed(n, pairs + list(model.cap_nodes))
    board = _reaches_fixed(n, [p for i, p in enumerate(pairs) if i not in inner]) if inner else dc_nodes
    return Topology(state, diodes_on, A, Af, e, g_fixed, np.array(res_cols, dtype=int),
                    np.arange(len(res_cols)), tuple(throw_cols), tuple(diode_cols), dc_nodes, tr_nodes, board)


def _reaches_fixed(n: int, pairs: list[tuple[int, int]]) -> np.ndarray:
    """Which free nodes connect through the given branches to a fixed node."""
    parent = list(range(n + 1))  # index n stands for every fixed node at once

    def find(x: int) -> int:
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    for a, b in pairs:
        ra, rb = find(a if a >= 0 else n), find(b if b >= 0 else n)
        if ra != rb:
            parent[ra] = rb
    root = find(n)
    return np.array([find(i) == root for i in range(n)], dtype=bool)


def conductances(topo: Topology, P: np.ndarray) -> np.ndarray:
    """(N, m) branch conductances of `topo` at the N parameter rows of P."""
    g = np.tile(topo.g_fixed, (P.shape[0], 1))
    g[:, topo.res_cols] = 1.0 / P[:, topo.res_params]
    return g
