"""Receiver inputs that are not a constant current, as the circuit elements they are.

A CMOS input is a leakage current, which the compiled model carries as a
parameter column. A bipolar TTL input is not: its current depends on its
voltage (IIL at a low level, falling to zero at the level an open input
floats at, IIH above), so `expand_loads` adds the input stage itself to the
stage's circuit: a resistor from the load's supply to an inner node, the
input diode from there to the pin, and a diode that holds the inner node at
the open level plus the input diode's drop (an inner rail whose tolerance
spans the open level's range). The input then draws exactly what that
network draws at every voltage, in steady states and during edges, so each
edge starts from the true steady state of the state it leaves. The IIH that
remains (a few microamperes into a high pin) stays the load's leakage; it is
taken over its whole range at either level, which bounds the true,
level-dependent current.

Clamp diodes (to ground on every input, to the supply on inputs that are not
tolerant) are added only where a rail of the stage can make them conduct: a
rail more than a diode drop below ground, or above the load's supply at its
lowest. A passive network keeps every node between its lowest and highest
rail, so a clamp left out could never have conducted. They are the piecewise-linear diode of
the rest of the analysis, so a rail mismatch sees the pin held at its supply
plus a diode drop and the current limited by every resistor on the way.

Everything added is named after its load ("U1:3/Rin", "U1:3/Dclamp+") and
lives only in the compiled model: the Stage keeps the board's own parts.
"""

from __future__ import annotations

from dataclasses import replace

from drc.board.stage import Diode, InputLoad, RailSource, Resistor, StageCircuit

GROUND = "0"
# On-resistance of the TTL input model's two diodes: small against the input
# resistor, so the current falls to zero within a few millivolts of the open level.
TTL_DIODE_OHMS = 10.0


def nonlinear_loads(circuit: StageCircuit) -> bool:
    """Whether `expand_loads` changes the circuit (a TTL input, or a clamp that can conduct)."""
    return any(ld.ttl is not None for ld in circuit.loads) or any(
        _clamps(circuit, ld) != (False, False) for ld in circuit.loads if ld.clamp is not None)


def _rail_span(circuit: StageCircuit, besides: str) -> tuple[float, float]:
    """The lowest and highest voltage any rail of the circuit other than `besides` can
    take (ground included): the load's own supply moves with its clamp."""
    ends = [0.0]
    for r in circuit.rails:
        if r.net != besides:
            ends += [r.volts * (1 - r.tolerance), r.volts * (1 + r.tolerance)]
    return min(ends), max(ends)


def _supply_range(circuit: StageCircuit, load: InputLoad) -> tuple[float, float] | None:
    rail = next((r for r in circuit.rails if r.net == load.supply_net), None)
    if rail is None:
        return None
    a, b = rail.volts * (1 - rail.tolerance), rail.volts * (1 + rail.tolerance)
    return min(a, b), max(a, b)


def _clamps(circuit: StageCircuit, load: InputLoad) -> tuple[bool, bool]:
    """(to ground, to supply): which of the load's clamps a rail of the circuit can forward-bias."""
    if load.clamp is None:
        return False, False
    vf = load.clamp[0]
    low, high = _rail_span(circuit, load.supply_net)
    supply = _supply_range(circuit, load)
    upper = load.clamp_to_supply and supply is not None and high > supply[0] + vf
    return low < -vf, bool(upper)


def expand_loads(circuit: StageCircuit) -> StageCircuit:
    """The circuit with every TTL input's stage and every clamp that can conduct added."""
    if not nonlinear_loads(circuit):
        return circuit
    resistors = list(circuit.resistors)
    diodes = list(circuit.diodes)
    rails = list(circuit.rails)
    loads = []
    for load in circuit.loads:
        if load.ttl is not None:
            t = load.ttl
            inner = f"{load.ref}/b"
            r_mid = 0.5 * (t.resistor_ohms[0] + t.resistor_ohms[1])
            r_tol = (t.resistor_ohms[1] - t.resistor_ohms[0]) / (t.resistor_ohms[1] + t.resistor_ohms[0])
            resistors.append(Resistor(f"{load.ref}/Rin", load.supply_net, inner, r_mid, r_tol, r_tol))
            diodes.append(Diode(f"{load.ref}/Din", inner, load.node, t.diode_v, TTL_DIODE_OHMS))
            hold = 0.5 * (t.open_v[0] + t.open_v[1]) + t.diode_v
            held = f"{load.ref}/open"
            rails.append(RailSource(held, hold, 0.5 * (t.open_v[1] - t.open_v[0]) / hold))
            diodes.append(Diode(f"{load.ref}/Dopen", inner, held, 0.0, TTL_DIODE_OHMS))
            # IIL is now the network's; IIH (into the pin) is taken at either level.
            load = replace(load, leak_low_a=load.leak_high_a)
        to_ground, to_supply = _clamps(circuit, load)
        if load.clamp is not None:
            vf, ron = load.clamp
            if to_supply:
                diodes.append(Diode(f"{load.ref}/Dclamp+", load.node, load.supply_net, vf, ron))
            if to_ground:
                diodes.append(Diode(f"{load.ref}/Dclamp-", GROUND, load.node, vf, ron))
        loads.append(load)
    return replace(circuit, resistors=tuple(resistors), diodes=tuple(diodes), rails=tuple(rails),
                   loads=tuple(loads))


def is_clamp(diode: Diode) -> bool:
    """Whether a diode of an expanded circuit is a receiver input's clamp."""
    return diode.designator.endswith(("/Dclamp+", "/Dclamp-"))
