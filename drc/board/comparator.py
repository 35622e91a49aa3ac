"""A comparator input as a receiver: its thresholds from the resistors around it.

A comparator with hysteresis resistors is a Schmitt receiver whose switching
points are not family data: they follow from the resistors on its other
input and the supply. For the usual inverting Schmitt (the contact's signal
on IN-, a divider and a feedback resistor from the output on IN+), the input
switches when it crosses the IN+ level, and that level depends on the output:

    VT+ = V(IN+) with the output high, VT- = V(IN+) with the output low.

With a divider R1 (supply to IN+), R2 (IN+ to ground), feedback Rf and, for
an open-collector output, a pull-up Rpu, this is the handbook formula
VT+ = VCC R2 / (R2 + R1 || (Rf + Rpu)), VT- = VCC (R2 || Rf) / (R1 + R2 || Rf);
here the reference network is solved by nodal analysis, so any resistive
network works. An input with no resistor to the output has one threshold
(no hysteresis). The signal on IN+ with a resistor from the output to IN+
(the non-inverting Schmitt) makes the threshold depend on the source
driving the pin; that case is reported unchecked (`feedback-input`), as is a
reference network that floats or joins the signal input (`unknown-threshold`).

Worst case: every resistor at its tolerance, every rail at its tolerance,
the output's low level anywhere from 0 to the part's worst VOL (a push-pull
high level as far below the supply), the input offset either way; the range
of each threshold is the extremes over those corners (vertices; the level
is monotonic in each parameter).
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Mapping
from dataclasses import dataclass

from drc.board.board import Rail, UncheckedReason
from drc.library.entries import ComparatorData, ComparatorOutput
from drc.netlist.elements import GROUND, Element, key

Range = tuple[float, float, float]
_MAX_NETS = 64
_MAX_VERTEX_VARIABLES = 10


@dataclass(frozen=True, slots=True)
class Thresholds:
    """The input's switching points (min, typ, max), volts, and how they were found."""

    rising: Range
    falling: Range
    hysteresis: bool
    note: str


@dataclass(frozen=True, slots=True)
class NotComputed:
    reason: UncheckedReason
    detail: str


@dataclass(frozen=True, slots=True)
class _Resistor:
    name: str
    a: str
    b: str
    ohms: float
    tol: float


@dataclass(frozen=True, slots=True)
class Section:
    """One comparator of a package: its input nets, output net, supply, data."""

    part: str
    signal_net: str  # the input the contact reaches
    other_net: str  # the other input
    signal_inverting: bool
    out_net: str
    supply: Rail
    data: ComparatorData


class ResistorIndex:
    """net key -> resistors on it, built once per board when a comparator needs it."""

    def __init__(self, elements: list[Element], tolerance_of: Callable[[Element], float]) -> None:
        self.at: dict[str, list[_Resistor]] = {}
        for element in elements:
            if element.kind != "R" or element.value is None or len(element.nodes) != 2:
                continue
            a, b = (key(n) for n in element.nodes)
            if a == b:
                continue
            r = _Resistor(element.designator, a, b, element.value.si, tolerance_of(element))
            self.at.setdefault(a, []).append(r)
            self.at.setdefault(b, []).append(r)


def input_thresholds(section: Section, resistors: ResistorIndex,
                     rails: Mapping[str, Rail]) -> Thresholds | NotComputed:
    """The switching points of the section's signal input, or why they cannot be given."""
    signal, other, out = key(section.signal_net), key(section.other_net), key(section.out_net)
    if not section.signal_inverting:
        around_signal = _network(signal, "", out, resistors, rails)
        if isinstance(around_signal, NotComputed) or out in around_signal[0]:
            return NotComputed(UncheckedReason.FEEDBACK_INPUT,
                               f"{section.part}: the signal is on the non-inverting input with a "
                               f"resistor from the output to it (a non-inverting Schmitt): its "
                               f"thresholds depend on the source driving the pin; not modelled")
    network = _network(other, signal, out, resistors, rails)
    if isinstance(network, NotComputed):
        return network
    nets, parts = network
    feedback = out in nets
    if feedback and not section.signal_inverting:
        return NotComputed(UncheckedReason.UNKNOWN_THRESHOLD,
                           f"{section.part}: the inverting input carries feedback from the "
                           f"output (an amplifier, not a comparator stage)")
    high = _level_range(section, nets, parts, rails, out_high=True)
    low = _level_range(section, nets, parts, rails, out_high=False)
    if high is None or low is None:
        return NotComputed(UncheckedReason.UNKNOWN_THRESHOLD,
                           f"{section.part}: the reference input has no DC path to a rail "
                           f"or ground; its level cannot be computed")
    offset = section.data.offset_v
    high = (high[0] - offset, high[1], high[2] + offset)
    low = (low[0] - offset, low[1], low[2] + offset)
    names = ", ".join(sorted({p.name for p in parts}, key=str.casefold)) or "none"
    if not feedback:
        return Thresholds(high, high, False,
                          f"one threshold from the reference network ({names}), no hysteresis; "
                          f"offset ±{offset * 1e3:g} mV")
    # Inverting Schmitt: rising crosses the level set while the output is high.
    if high[1] <= low[1]:
        return NotComputed(UncheckedReason.UNKNOWN_THRESHOLD,
                           f"{section.part}: the feedback gives no positive hysteresis "
                           f"(output-high level {high[1]:.3g} V not above output-low level "
                           f"{low[1]:.3g} V)")
    return Thresholds(high, low, True,
                      f"Schmitt thresholds from the resistors {names} and the "
                      f"{section.supply.voltage:g} V supply ({section.data.output} output, "
                      f"offset ±{offset * 1e3:g} mV, output low 0-{section.data.output_low_v:g} V)")


def _network(start: str, signal: str, out: str, resistors: ResistorIndex,
             rails: Mapping[str, Rail]) -> tuple[set[str], list[_Resistor]] | NotComputed:
    """The nets and resistors of the reference network around `start` (through `out`)."""
    ground = key(GROUND)
    nets = {start}
    parts: dict[str, _Resistor] = {}
    if start == ground or start in rails:
        return nets, []  # the reference is a rail (or ground) itself
    stack = [start]
    while stack:
        net = stack.pop()
        if net == signal:
            return NotComputed(UncheckedReason.UNKNOWN_THRESHOLD,
                               "the reference input is joined to the signal input through "
                               "resistors; its level moves with the signal")
        for r in resistors.at.get(net, ()):
            parts[r.name] = r
            other = r.b if r.a == net else r.a
            if other in nets:
                continue
            nets.add(other)
            if other != ground and other not in rails:
                stack.append(other)
        if len(nets) > _MAX_NETS:
            return NotComputed(UncheckedReason.UNKNOWN_THRESHOLD,
                               f"the reference network spans more than {_MAX_NETS} nets")
    return nets, list(parts.values())


def _level_range(section: Section, nets: set[str], parts: list[_Resistor],
                 rails: Mapping[str, Rail], out_high: bool) -> Range | None:
    """(min, nominal, max) of the reference level in one output state."""
    out = key(section.out_net)
    ground = key(GROUND)
    held_rails = sorted(n for n in nets if n in rails)
    data = section.data
    # Variables: resistor values, rail voltages and the output's own level.
    variables: list[tuple[float, float]] = [(r.ohms * (1 - r.tol), r.ohms * (1 + r.tol)) for r in parts]
    variables += [(rails[n].voltage * (1 - rails[n].tolerance), rails[n].voltage * (1 + rails[n].tolerance))
                  for n in held_rails]
    out_driven = out in nets and (not out_high or data.output == ComparatorOutput.PUSH_PULL)
    if out_driven:
        variables.append((0.0, data.output_low_v))  # how far the output sits from its rail

    def level(values: tuple[float, ...]) -> float | None:
        ohms = values[:len(parts)]
        volts = dict(zip(held_rails, values[len(parts):len(parts) + len(held_rails)], strict=True))
        volts[ground] = 0.0
        if out_driven:
            drop = values[-1]
            supply = volts.get(key(section.supply.net), section.supply.voltage)
            volts[out] = supply - drop if out_high else drop
        return _solve(key(section.other_net), nets, parts, ohms, volts)

    nominal = level(tuple([r.ohms for r in parts] + [rails[n].voltage for n in held_rails]
                          + ([0.0] if out_driven else [])))
    if nominal is None:
        return None
    found = [v for v in (level(c) for c in _corners(variables, level)) if v is not None]
    return (min(found + [nominal]), nominal, max(found + [nominal]))


def _corners(variables: list[tuple[float, float]], level: Callable) -> list[tuple[float, ...]]:
    """Every vertex of the box, or (many variables) the two vertices each sensitivity sign picks."""
    if len(variables) <= _MAX_VERTEX_VARIABLES:
        return list(itertools.product(*variables))
    middle = [0.5 * (lo + hi) for lo, hi in variables]
    signs = []
    for i, (lo, hi) in enumerate(variables):
        up, down = list(middle), list(middle)
        up[i], down[i] = hi, lo
        a, b = level(tuple(up)), level(tuple(down))
        signs.append(0.0 if a is None or b is None else a - b)
    highest = tuple(hi if s >= 0 else lo for s, (lo, hi) in zip(signs, variables, strict=True))
    lowest = tuple(lo if s >= 0 else hi for s, (lo, hi) in zip(signs, variables, strict=True))
    return [highest, lowest]


def _solve(node: str, nets: set[str], parts: list[_Resistor], ohms: tuple[float, ...],
           fixed: dict[str, float]) -> float | None:
    """Nodal analysis of the resistor network: the voltage at `node`, None if it floats."""
    if node in fixed:
        return fixed[node]
    import numpy as np  # lazy: classifying a board needs numpy only for a comparator's divider
    free = sorted(n for n in nets if n not in fixed)
    index = {n: i for i, n in enumerate(free)}
    g = np.zeros((len(free), len(free)))
    rhs = np.zeros(len(free))
    for r, value in zip(parts, ohms, strict=True):
        if value <= 0:
            return None
        conductance = 1.0 / value
        for here, there in ((r.a, r.b), (r.b, r.a)):
            i = index.get(here)
            if i is None:
                continue
            g[i, i] += conductance
            j = index.get(there)
            if j is not None:
                g[i, j] -= conductance
            elif there in fixed:
                rhs[i] += conductance * fixed[there]
    # A free node with no path to a fixed one leaves the system singular.
    try:
        solution = np.linalg.solve(g, rhs)
    except np.linalg.LinAlgError:
        return None
    if not np.all(np.isfinite(solution)):
        return None
    return float(solution[index[node]])
