"""Forward design: standard R and C values for a new switch input stage.

Given the rail, the receiver's family (Schmitt or plain), the contact's
bounce time and a latency limit (one `DesignRequest`), `design_stage` builds
the usual stage (pull resistor at the contact node, series resistor,
capacitor at the pin), starts from a textbook guess (the lowest pull resistor
within the pull current budget, series 22 kΩ, τ about 2.5 × bounce) and lets the fix solver move one or two
values along the E-series until every stage rule passes at worst case. It
reports both edges' nominal, fastest and slowest times and every margin
(`drc.report.design_view` words them), and gives the stage as a SPICE
fragment. The analysis is `analysis.analyse_stage`, as for a board.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Literal

from drc.analysis.receiver import ReceiverElectrical, receiver_electrical
from drc.analysis.results import Edge, StageResult
from drc.analysis.stage_analysis import analyse_stage
from drc.board.board import Contact, ContactOrigin, Receiver
from drc.board.stage import (
    ActuatorState,
    Capacitor,
    InputLoad,
    RailSource,
    Resistor,
    ResistorRole,
    Stage,
    StageCircuit,
    StageKind,
    Throw,
)
from drc.checks import run_stage_rules
from drc.design.fixes import FIXABLE, MAX_ANALYSES, Solution, capacitor_series, search, with_values
from drc.errors import DrcError, SourceLocation, UsageError, unknown_name_message
from drc.library import eseries
from drc.library.entries import ContactClass, ContactForm
from drc.units import format_quantity as fq

DesignTopology = Literal["pull-up", "pull-down"]
TOPOLOGIES: tuple[DesignTopology, ...] = ("pull-up", "pull-down")
_LOC = SourceLocation("<design>")
# Starting point of the search (common practice, no source): a series resistor of
# about twice a 10 kΩ pull, τ ≈ 2.5 × bounce.
_START_SERIES, _START_TAU_PER_BOUNCE = 22e3, 2.5
_CAPACITOR_TRIES = 8  # capacitor values tried around the start, the start included


class DesignError(DrcError):
    """The engineering data cannot answer a design request: an unknown E-series or
    family, a rail outside the family's supply range, a value the series has not."""


@dataclass(frozen=True, slots=True)
class DesignRequest:
    """What `drc design` is asked for.

    capacitor / resistor: hold the capacitor or the pull resistor at this
    value (snapped to the nearest series value). latency_s: the latency limit
    the design must meet (overrides the limits'). Values: resistors from
    `series`, capacitors from the coarser of `series` and E12. budget bounds
    each solver run, design_budget the whole design (analyses). contact_class:
    a class of rules/contacts.toml, whose wetting minimum and rating the design
    meets (its bounce is `bounce_s`).
    """

    rail_v: float
    family: str
    schmitt: bool
    bounce_s: float
    latency_s: float
    series: str = "E24"
    capacitor: float | None = None
    resistor: float | None = None
    topology: DesignTopology = "pull-up"
    budget: int = MAX_ANALYSES
    design_budget: int = 1200
    contact_class: str = "tactile"
    bounce_given: bool = False  # the bounce is not the class's own: the fragment states it

    def __post_init__(self) -> None:
        if self.rail_v <= 0 or self.bounce_s <= 0 or self.latency_s <= 0:
            raise UsageError("rail voltage, bounce and latency must be positive")

    @property
    def held(self) -> tuple[str, ...]:
        """The parts held at a given value, C1 first."""
        return tuple(name for name, given in (("C1", self.capacitor), ("R1", self.resistor)) if given)


def _start_pull(series: str, rail_v: float, limits: Mapping[str, float]) -> float:
    """The smallest series value that holds the closed-contact current to 80 % of the
    budget at rail max and R min (a low pull keeps the release edge quick and the
    leakage headroom wide). Limits as rules/limits.toml always defines them."""
    budget = float(limits["pull_current_budget"])
    rt = float(limits["tolerance_resistor"])
    vt = float(limits["tolerance_rail"])
    need = rail_v * (1 + vt) / (0.8 * budget * (1 - rt))
    above = eseries.values_between(series, need, need * 10)
    return above[0]


@dataclass(frozen=True, slots=True)
class EdgeTimes:
    edge: Edge
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


@dataclass(frozen=True, slots=True)
class DesignResult:
    ok: bool
    reason: str
    topology: DesignTopology
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
    contact_class: str = "tactile"
    bounce_given: bool = False

    def part(self, designator: str) -> Resistor | Capacitor:
        parts: tuple[Resistor | Capacitor, ...] = (*self.stage.circuit.resistors, *self.stage.circuit.capacitors)
        for p in parts:
            if p.designator == designator:
                return p
        raise KeyError(designator)

    @property
    def pull(self) -> Resistor:
        return _resistor(self.stage, "R1")

    @property
    def series_resistor(self) -> Resistor:
        return _resistor(self.stage, "R2")

    @property
    def capacitor(self) -> Capacitor:
        return next(c for c in self.stage.circuit.capacitors if c.designator == "C1")

    def netlist_fragment(self) -> str:
        """The stage as SPICE lines that drc and ngspice both read: a title, the verdict as
        a comment, the parts, and the contact as a voltage-controlled switch (held open by
        its control source) that an annotation names a contact of its class. No `.end`:
        a fragment to paste (`drc design --netlist` prints it as a whole netlist)."""
        r1, r2, c1 = self.pull, self.series_resistor, self.capacitor
        kind = "Schmitt" if self.schmitt else "plain"
        head = (f"* drc design: {self.topology} stage, {fq(self.rail_v, 'V')} rail, {self.family} {kind} "
                f"input, bounce {fq(self.bounce_s, 's')}, values from {self.series}")
        verdict = "* passes every rule at worst case" if self.ok else f"* NOT PASSING: {self.reason}"
        model = contact_model(self.contact_class)
        # The contact as a switch ngspice reads (held open by its control source); the
        # annotation above it makes it a contact of the class asked for, to drc.
        sw = (f"SW1 n1 0 sw1_ctl 0 {model}" if self.topology == "pull-up"
              else f"SW1 vcc n1 sw1_ctl 0 {model}")
        r1_line = f"R1 vcc n1 {_spice(r1.ohms)}" if self.topology == "pull-up" else f"R1 n1 0 {_spice(r1.ohms)}"
        bounce = f" bounce={_spice(self.bounce_s)}s" if self.bounce_given else ""
        return "\n".join([head, verdict, f"V1 vcc 0 DC {self.rail_v:g}", r1_line,
                          f"*@drc contact SW1 class={self.contact_class}{bounce}",
                          sw, "Vsw1 sw1_ctl 0 DC 0", f".model {model} SW(VT=0.5 VH=0 RON=0.1 ROFF=1G)",
                          f"R2 n1 in {_spice(r2.ohms)}", f"C1 in 0 {_spice(c1.farads)}",
                          "* connect net 'in' to the receiver input"]) + "\n"


def contact_model(contact_class: str) -> str:
    """The switch's model name in the fragment: the class in capitals ("relay-power" ->
    "RELAY_POWER"); the `*@drc contact` line above it states the class outright."""
    return contact_class.upper().replace("-", "_")


def _resistor(stage: Stage, designator: str) -> Resistor:
    return next(r for r in stage.circuit.resistors if r.designator == designator)


def _spice(value: float) -> str:
    """A value in SPICE spelling that no reader misreads: 4.7k, 1Meg, 100n, 1u. Four
    significant digits in engineering form (a mantissa from 1 to below 1000, SPICE's
    lower-case scale suffix, none for units), from 1 p to below 1000 Meg."""
    for scale, suffix in ((1e6, "Meg"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "u"),
                          (1e-9, "n"), (1e-12, "p")):
        # From scale x 0.99995 on, four digits of the next smaller scale would round to 1000.
        if abs(value) >= scale * 0.99995:
            return f"{value / scale:.4g}{suffix}"
    return f"{value:.4g}"


def build_stage(request: DesignRequest, r_pull: float, r_series: float, c: float,
                limits: Mapping[str, float],
                leak: tuple[tuple[float, float], tuple[float, float]] | None = None, *,
                contact_class: ContactClass) -> Stage:
    """The designed stage: R1 pull at n1, SW1 at n1, R2 n1-in, C1 in-0. leak: the
    receiver's (high, low) leakage ranges; given, the receiver is a load supplied
    from the pull rail (its thresholds then follow that rail's corners). The contact
    is the one drc reads from the fragment: its class's wetting minimum and rating
    (rules/contacts.toml), the throw's terminals, named by an annotation."""
    topology = request.topology
    if topology not in TOPOLOGIES:
        raise UsageError(f"topology must be one of {', '.join(TOPOLOGIES)}, got {topology!r}")
    rt = float(limits["tolerance_resistor"])
    ct = float(limits["tolerance_capacitor"])
    vt = float(limits["tolerance_rail"])
    closed = float(limits["contact_closed_resistance"])
    if topology == "pull-up":
        r1 = Resistor("R1", "vcc", "n1", r_pull, rt, rt, role=ResistorRole.PULL)
        throw = Throw("n1", "0", ActuatorState.PRESSED, closed)
    else:
        r1 = Resistor("R1", "n1", "0", r_pull, rt, rt, role=ResistorRole.PULL)
        throw = Throw("vcc", "n1", ActuatorState.PRESSED, closed)
    # The receiver is supplied from the rail it is pulled to: one rail, one corner variable.
    load = InputLoad("U1:1", "in", request.family, "vcc", leak[0], leak[1]) if leak else None
    circuit = StageCircuit((r1, Resistor("R2", "n1", "in", r_series, rt, rt, role=ResistorRole.SERIES)),
                           (Capacitor("C1", "in", "0", c, ct, ct),), (),
                           (RailSource("vcc", request.rail_v, vt),), (throw,), "in",
                           (load,) if load else ())
    contact = Contact("SW1", contact_class.name, ContactForm.SPST_NO, (throw.a, throw.b), request.bounce_s,
                      contact_class.wetting_a, contact_class.rating_a, _LOC, ContactOrigin.CONFIG,
                      static=contact_class.static)
    receiver = Receiver("U1", 1, "in", "design", request.family, request.schmitt, False, "data",
                        request.rail_v, vt, _LOC)
    kind = StageKind.RC_SCHMITT if request.schmitt else StageKind.RC
    return Stage(contact, receiver, kind, ("R1", "R2", "C1"), circuit, circuit.nodes())


@dataclass(frozen=True, slots=True)
class _Plan:
    """A request resolved against the data: series, receiver, limits and the starting stage."""

    request: DesignRequest
    series: str  # upper case
    cap_series: str
    rx: ReceiverElectrical
    limits: dict[str, float]
    c_start: float
    base: Stage


def design_stage(request: DesignRequest, *, rx: ReceiverElectrical | None = None,
                 limits: Mapping[str, float] | None = None) -> DesignResult:
    """Propose pull/series resistors and a capacitor passing every stage rule at worst case.

    rx / limits: the receiver's electrical data and the rule limits; by
    default from the library (rules/families.toml, rules/limits.toml).
    Raises DesignError when the data cannot answer the request.
    """
    plan = _plan(request, rx, limits)
    stage, result = plan.base, analyse_stage(plan.base, plan.rx)  # carries plan.rx
    count = 1
    if _repairable(result, plan.limits):
        solution, trial, used = _search_attempts(plan, _attempts(plan), count)
        count += used
        if solution is not None:
            stage = with_values(trial, {ch.designator: ch.new for ch in solution.changes})
            result = solution.result
    failing = tuple(sorted({f.rule for f in run_stage_rules(result, plan.limits)}))
    return DesignResult(
        ok=not failing, reason=_reason(plan, failing, count), topology=request.topology,
        rail_v=request.rail_v, family=request.family, schmitt=request.schmitt,
        bounce_s=request.bounce_s, series=plan.series, stage=stage, result=result,
        edges=tuple(EdgeTimes(e.edge, e.nominal_s, e.fastest_s, e.slowest_s) for e in result.edges.values()),
        margins=_margins(result, plan.limits), failing_rules=failing, analyses=count,
        contact_class=request.contact_class, bounce_given=request.bounce_given)


def _plan(request: DesignRequest, rx: ReceiverElectrical | None,
          limits: Mapping[str, float] | None) -> _Plan:
    """Series, receiver data, limits and start values; DesignError for what the data has not."""
    try:
        series = request.series.upper()
        eseries.decade_codes(series)  # an unknown series is an error here
        cap_series = capacitor_series(series)
        from drc.library.catalogue import load_library
        lib = load_library()
        contact_class = lib.contact_classes.get(request.contact_class)
        if contact_class is None:
            raise DesignError(unknown_name_message("contact class", request.contact_class, lib.contact_classes))
        if rx is None or limits is None:
            limits = limits if limits is not None else {k: v.value for k, v in lib.limits.items()}
            # The receiver is supplied from the designed rail: its thresholds follow that rail.
            rx = rx if rx is not None else receiver_electrical(
                lib, request.family, request.rail_v, request.schmitt,
                supply_tolerance=float(limits["tolerance_rail"]))
        limits = {**limits, "latency_limit": request.latency_s}
        r_pull = (eseries.nearest(series, request.resistor) if request.resistor
                  else _start_pull(series, request.rail_v, limits))
        r_series = eseries.nearest(series, _START_SERIES)
        c_start = eseries.nearest(cap_series, request.capacitor if request.capacitor
                                  else _START_TAU_PER_BOUNCE * request.bounce_s / r_series)
    except (ValueError, KeyError) as exc:  # the library's and the E-series' own refusals
        raise DesignError(str(exc)) from exc
    base = build_stage(request, r_pull, r_series, c_start, limits, (rx.leak_high_a, rx.leak_low_a),
                       contact_class=contact_class)
    return _Plan(request, series, cap_series, rx, limits, c_start, base)


def _repairable(start: StageResult, limits: Mapping[str, float]) -> bool:
    """Whether a search can help: a rule fails at the start, and only rules that values
    repair (not a rail, family or topology problem, or a plain input's slow edge: the
    design says so without searching). A start that passes is the design."""
    at_start = {f.rule for f in run_stage_rules(start, limits)}
    return bool(at_start) and not (at_start - set(FIXABLE)) and "slow-edge" not in at_start


def _attempts(plan: _Plan) -> list[tuple[float, tuple[str, ...]]]:
    """(capacitor value, parts held) per search: the start capacitor with the pull
    resistor held, then free; then, unless a capacitor was given, neighbouring
    capacitor values (nearest first) with C held."""
    request, c_start = plan.request, plan.c_start
    held_r = ("R1",) if request.resistor else ()
    attempts: list[tuple[float, tuple[str, ...]]] = [(c_start, ("R1", "C1") if request.capacitor else ("R1",))]
    if not request.resistor:
        attempts.append((c_start, ("C1",) if request.capacitor else ()))
    if not request.capacitor:
        nearby = eseries.by_closeness(plan.cap_series, c_start, c_start / 10.0, c_start * 10.0)
        attempts.extend((c, ("C1", *held_r)) for c in nearby[1:_CAPACITOR_TRIES])
    return attempts


def _search_attempts(plan: _Plan, attempts: list[tuple[float, tuple[str, ...]]],
                     count: int) -> tuple[Solution | None, Stage, int]:
    """The first attempt whose search passes, within the design's budget:
    (solution, the stage it changes, analyses used)."""
    request, used = plan.request, 0
    for c, fixed in attempts:
        if count + used >= request.design_budget:
            break
        trial = with_values(plan.base, {"C1": c})
        solution, spent = search(trial, plan.rx, plan.limits, plan.series, set(),
                                 min(request.budget, request.design_budget - count - used), fixed_parts=fixed)
        used += spent
        if solution is not None:
            return solution, trial, used
    return None, plan.base, used


def _reason(plan: _Plan, failing: tuple[str, ...], count: int) -> str:
    if not failing:
        return "passes every stage rule at worst case"
    if "slow-edge" in failing:
        return f"no RC value passes a plain {plan.rx.family} input; use a Schmitt-trigger input"
    if set(failing) - set(FIXABLE):
        return (f"{', '.join(sorted(set(failing) - set(FIXABLE)))} fails whatever the values "
                f"(a rail, family, contact class or topology problem)")
    held = plan.request.held
    held_text = f" with {' and '.join(held)} held" if held else ""
    return (f"no {plan.series} combination found{held_text} within {count} analyses "
            f"(still failing: {', '.join(failing)})")


def _margins(result: StageResult, limits: Mapping[str, float]) -> tuple[Margin, ...]:
    out: list[Margin] = []
    need = result.stage.contact.bounce_s * float(limits["bounce_margin"])
    latency = float(limits["latency_limit"])
    for e in result.edges.values():
        out.append(Margin(f"{e.edge} fastest vs bounce", e.fastest_s, need, "s",
                          None if e.fastest_s is None else e.fastest_s - need))
        out.append(Margin(f"{e.edge} slowest vs latency", e.slowest_s, latency, "s",
                          None if e.slowest_s is None else latency - e.slowest_s))
    vcc = result.receiver_electrical.vcc if result.receiver_electrical else result.stage.receiver.supply_v
    headroom = float(limits["leakage_headroom_margin"]) * vcc
    for lv in result.levels.values():
        if lv.margin_v is not None:
            out.append(Margin(f"{lv.state} level margin", lv.margin_v, headroom, "V", lv.margin_v - headroom))
    if result.pull_current_a is not None:
        budget = float(limits["pull_current_budget"])
        out.append(Margin("held pull current", result.pull_current_a, budget, "A",
                          budget - result.pull_current_a))
    return tuple(out)
