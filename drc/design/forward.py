"""Forward design: standard R and C values for a new switch input stage.

Given the rail, the receiver's family (Schmitt or plain), the contact's
bounce time and a latency limit, `design_stage` builds the usual stage
(pull resistor at the contact node, series resistor, capacitor at the pin),
starts from a textbook guess (pull resistor 10 kΩ, series 22 kΩ, τ about
2.5 × bounce) and lets the fix solver move one or two values along the
E-series until every stage rule passes at worst case. It reports both edges'
nominal, fastest and slowest times and every margin, and prints the stage as
a SPICE fragment. The analysis is `analysis.analyse_stage`, as for a board.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace

from drc.library import eseries
from drc.library.entries import ContactForm
from drc.board.board import Contact, ContactOrigin, Receiver
from drc.errors import SourceLocation, UsageError
from drc.design.fixes import FIXABLE, MAX_ANALYSES, capacitor_series, search, with_values
from drc.analysis.results import StageResult
from drc.board.stage import (ActuatorState, Capacitor, RailSource, Resistor, ResistorRole, Stage, StageCircuit,
                             StageKind, Throw)
from drc.units import format_quantity as fq

TOPOLOGIES = ("pull-up", "pull-down")
_LOC = SourceLocation("<design>")
# Starting point of the search (common practice, no source): a 10 kΩ pull and
# a series resistor of about twice that, τ ≈ 2.5 × bounce.
_START_SERIES, _START_TAU_PER_BOUNCE = 22e3, 2.5
_CAPACITOR_TRIES = 8  # capacitor values tried around the start, the start included


def _start_pull(series: str, rail_v: float, limits: Mapping[str, float]) -> float:
    """The smallest series value that holds the closed-contact current to 80 % of the
    budget at rail max and R min (a low pull keeps the release edge quick and the
    leakage headroom wide); 10 kΩ where no budget is set."""
    budget = limits.get("pull_current_budget")
    if not budget:
        return eseries.nearest(series, 10e3)
    rt = float(limits.get("tolerance_resistor", 0.05))
    vt = float(limits.get("tolerance_rail", 0.05))
    need = rail_v * (1 + vt) / (0.8 * budget * (1 - rt))
    above = eseries.values_between(series, need, need * 10)
    return above[0]


@dataclass(frozen=True, slots=True)
class EdgeTimes:
    edge: str
    nominal_s: float | None
    fastest_s: float | None
    slowest_s: float | None


@dataclass(frozen=True, slots=True)
class Margin:
    """One checked figure: value, its limit, and value − limit on the passing side (≥ 0 passes)."""

    name: str
    value: float | None
    limit: float
    unit: str
    spare: float | None

    def text(self) -> str:
        if self.value is None:
            return f"{self.name}: not reached (limit {fq(self.limit, self.unit)})"
        return f"{self.name}: {fq(self.value, self.unit)} against {fq(self.limit, self.unit)} (spare {fq(self.spare, self.unit)})"


@dataclass(frozen=True, slots=True)
class DesignResult:
    ok: bool
    reason: str
    topology: str
    rail_v: float
    family: str
    schmitt: bool
    bounce_s: float
    series: str
    stage: Stage
    result: StageResult | None
    edges: tuple[EdgeTimes, ...]
    margins: tuple[Margin, ...]
    failing_rules: tuple[str, ...]
    analyses: int

    def part(self, designator: str) -> Resistor | Capacitor:
        for p in (*self.stage.circuit.resistors, *self.stage.circuit.capacitors):
            if p.designator == designator:
                return p
        raise KeyError(designator)

    @property
    def pull(self) -> Resistor:
        return self.part("R1")

    @property
    def series_resistor(self) -> Resistor:
        return self.part("R2")

    @property
    def capacitor(self) -> Capacitor:
        return self.part("C1")

    def netlist_fragment(self) -> str:
        """The stage as SPICE lines, in the conventions of our examples."""
        r1, r2, c1 = self.pull, self.series_resistor, self.capacitor
        kind = "Schmitt" if self.schmitt else "plain"
        head = (f"* drc design: {self.topology} stage, {fq(self.rail_v, 'V')} rail, {self.family} {kind} "
                f"input, bounce {fq(self.bounce_s, 's')}, values from {self.series}"
                + ("" if self.ok else f"\n* NOT PASSING: {self.reason}"))
        sw = "SW1 n1 0 TACTILE" if self.topology == "pull-up" else "SW1 vcc n1 TACTILE"
        r1_line = f"R1 vcc n1 {_spice(r1.ohms)}" if self.topology == "pull-up" else f"R1 n1 0 {_spice(r1.ohms)}"
        return "\n".join([head, f"V1 vcc 0 DC {self.rail_v:g}", r1_line, sw,
                          f"R2 n1 in {_spice(r2.ohms)}", f"C1 in 0 {_spice(c1.farads)}",
                          "* connect net 'in' to the receiver input"]) + "\n"

    def lines(self) -> list[str]:
        """A human summary: parts, edge times, margins."""
        out = [f"R1 ({'pull-up' if self.topology == 'pull-up' else 'pull-down'}) {fq(self.pull.ohms, 'Ω')}, "
               f"R2 (series) {fq(self.series_resistor.ohms, 'Ω')}, C1 {fq(self.capacitor.farads, 'F')}"]
        for e in self.edges:
            out.append(f"{e.edge}: nominal {_t(e.nominal_s)}, fastest {_t(e.fastest_s)}, slowest {_t(e.slowest_s)}")
        out.extend(m.text() for m in self.margins)
        if not self.ok:
            out.append(f"not passing: {self.reason}")
        return out


def _t(s: float | None) -> str:
    return "never" if s is None else fq(s, "s")


def _spice(value: float) -> str:
    """A value in SPICE spelling that no reader misreads: 4.7k, 1Meg, 100n, 1u."""
    for scale, suffix in ((1e6, "Meg"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "u"),
                          (1e-9, "n"), (1e-12, "p")):
        if abs(value) >= scale * 0.9995:
            return f"{value / scale:.4g}{suffix}"
    return f"{value:.4g}"


def build_stage(rail_v: float, rx_family: str, schmitt: bool, bounce_s: float, r_pull: float,
                r_series: float, c: float, topology: str, limits: Mapping[str, float]) -> Stage:
    """The designed stage: R1 pull at n1, SW1 at n1, R2 n1-in, C1 in-0."""
    if topology not in TOPOLOGIES:
        raise UsageError(f"topology must be one of {', '.join(TOPOLOGIES)}, got {topology!r}")
    rt = float(limits.get("tolerance_resistor", 0.05))
    ct = float(limits.get("tolerance_capacitor", 0.20))
    vt = float(limits.get("tolerance_rail", 0.05))
    closed = float(limits.get("contact_closed_resistance", 0.1))
    if topology == "pull-up":
        r1 = Resistor("R1", "vcc", "n1", r_pull, rt, rt, role=ResistorRole.PULL)
        throw = Throw("n1", "0", ActuatorState.PRESSED, closed)
    else:
        r1 = Resistor("R1", "n1", "0", r_pull, rt, rt, role=ResistorRole.PULL)
        throw = Throw("vcc", "n1", ActuatorState.PRESSED, closed)
    circuit = StageCircuit((r1, Resistor("R2", "n1", "in", r_series, rt, rt, role=ResistorRole.SERIES)),
                           (Capacitor("C1", "in", "0", c, ct, ct),), (),
                           (RailSource("vcc", rail_v, vt),), (throw,), "in")
    contact = Contact("SW1", "design", ContactForm.SPST_NO, ("n1", "0"), bounce_s, None, None, _LOC,
                      ContactOrigin.CONFIG)
    receiver = Receiver("U1", 1, "in", "design", rx_family, schmitt, False, "data", rail_v, vt, _LOC)
    return Stage(contact, receiver, StageKind.RC_SCHMITT if schmitt else StageKind.RC, ("R1", "R2", "C1"), circuit,
                 circuit.nodes())


def design_stage(rail_v: float, family: str, schmitt: bool, bounce_s: float, latency_s: float,
                 series: str = "E24", capacitor: float | None = None, resistor: float | None = None,
                 topology: str = "pull-up", *, rx=None, limits: Mapping[str, float] | None = None,
                 budget: int = MAX_ANALYSES, design_budget: int = 1200) -> DesignResult:
    """Propose pull/series resistors and a capacitor passing every stage rule at worst case.

    capacitor / resistor: hold the capacitor or the pull resistor at this
    value (snapped to the nearest series value). rx / limits: the receiver's
    electrical data and the rule limits; by default from the library
    (rules/families.toml, rules/limits.toml). latency_s overrides the
    latency limit. Values: resistors from `series`, capacitors from the
    coarser of `series` and E12. budget bounds each solver run, design_budget
    the whole design (analyses).
    """
    if rail_v <= 0 or bounce_s <= 0 or latency_s <= 0:
        raise UsageError("rail voltage, bounce and latency must be positive")
    series = series.upper()
    eseries.decade_codes(series)  # an unknown series is a usage error below
    cap_series = capacitor_series(series)
    if rx is None or limits is None:
        from drc.analysis.receiver import receiver_electrical
        from drc.library.catalogue import load_library
        lib = load_library()
        rx = rx or receiver_electrical(lib, family, rail_v, schmitt)
        limits = limits if limits is not None else {k: v.value for k, v in lib.limits.items()}
    limits = {**limits, "latency_limit": latency_s}
    r_pull = eseries.nearest(series, resistor) if resistor else _start_pull(series, rail_v, limits)
    r_series = eseries.nearest(series, _START_SERIES)
    c_start = eseries.nearest(cap_series, capacitor if capacitor else _START_TAU_PER_BOUNCE * bounce_s / r_series)
    base = build_stage(rail_v, family, schmitt, bounce_s, r_pull, r_series, c_start, topology, limits)
    # Attempts: the start capacitor with the pull resistor held, then free; then, unless a
    # capacitor was given, neighbouring capacitor values (nearest first) with C held.
    held_r = ("R1",) if resistor else ()
    attempts: list[tuple[float, tuple[str, ...]]] = [(c_start, ("R1", "C1") if capacitor else ("R1",))]
    if not resistor:
        attempts.append((c_start, ("C1",) if capacitor else ()))
    if not capacitor:
        nearby = eseries.by_closeness(cap_series, c_start, c_start / 10.0, c_start * 10.0)
        attempts.extend((c, ("C1", *held_r)) for c in nearby[1:_CAPACITOR_TRIES])
    count, solution, stage = 0, None, base
    from drc.analysis.stage_analysis import analyse_stage
    from drc.checks import run_stage_rules
    start = analyse_stage(base, rx)
    count += 1
    start = start if start.receiver_electrical else replace(start, receiver_electrical=rx)
    at_start = {f.rule for f in run_stage_rules(start, limits)}
    # Rules no value repairs (a rail, family or topology problem, or a plain input's
    # slow edge): say so without searching.
    if (at_start - set(FIXABLE)) or "slow-edge" in at_start:
        attempts = []
    for c, fixed in attempts:
        if count >= design_budget:
            break
        trial = with_values(base, {"C1": c})
        solution, used = search(trial, rx, limits, series, set(), min(budget, design_budget - count),
                                fixed_parts=fixed)
        count += used
        stage = trial
        if solution is not None:
            break
    if solution is None:
        stage = base
    from drc.analysis.stage_analysis import analyse_stage
    from drc.checks import run_stage_rules
    if solution is not None:
        stage = with_values(stage, {ch.designator: ch.new for ch in solution.changes})
        fixed = tuple(name for name, given in (("C1", capacitor), ("R1", resistor)) if given)
        result = solution.result
    else:
        result = analyse_stage(stage, rx)
        count += 1
    if result.receiver_electrical is None:
        result = replace(result, receiver_electrical=rx)
    failing = tuple(sorted({f.rule for f in run_stage_rules(result, limits)}))
    ok = not failing
    if ok:
        reason = "passes every stage rule at worst case"
    elif "slow-edge" in failing:
        reason = f"no RC value passes a plain {rx.family} input; use a Schmitt-trigger input"
    elif set(failing) - set(FIXABLE):
        reason = (f"{', '.join(sorted(set(failing) - set(FIXABLE)))} fails whatever the values "
                  f"(a rail, family or topology problem)")
    else:
        fixed = tuple(name for name, given in (("C1", capacitor), ("R1", resistor)) if given)
        held = f" with {' and '.join(fixed)} held" if fixed else ""
        reason = (f"no {series} combination found{held} within {count} analyses "
                  f"(still failing: {', '.join(failing)})")
    return DesignResult(
        ok=ok, reason=reason, topology=topology, rail_v=rail_v, family=family, schmitt=schmitt,
        bounce_s=bounce_s, series=series, stage=stage, result=result,
        edges=tuple(EdgeTimes(e.edge, e.nominal_s, e.fastest_s, e.slowest_s) for e in result.edges.values()),
        margins=_margins(result, limits), failing_rules=failing, analyses=count)


def _margins(result: StageResult, limits: Mapping[str, float]) -> tuple[Margin, ...]:
    out: list[Margin] = []
    need = result.stage.contact.bounce_s * float(limits.get("bounce_margin", 1.0))
    latency = float(limits["latency_limit"])
    for e in result.edges.values():
        out.append(Margin(f"{e.edge} fastest vs bounce", e.fastest_s, need, "s",
                          None if e.fastest_s is None else e.fastest_s - need))
        out.append(Margin(f"{e.edge} slowest vs latency", e.slowest_s, latency, "s",
                          None if e.slowest_s is None else latency - e.slowest_s))
    vcc = result.receiver_electrical.vcc if result.receiver_electrical else result.stage.receiver.supply_v
    headroom = float(limits.get("leakage_headroom_margin", 0.1)) * vcc
    for lv in result.levels.values():
        if lv.margin_v is not None:
            out.append(Margin(f"{lv.state} level margin", lv.margin_v, headroom, "V", lv.margin_v - headroom))
    if result.pull_current_a is not None and "pull_current_budget" in limits:
        budget = float(limits["pull_current_budget"])
        out.append(Margin("held pull current", result.pull_current_a, budget, "A",
                          budget - result.pull_current_a))
    return tuple(out)
