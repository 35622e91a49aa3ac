"""Hand-built stages, receivers and results for the rule tests.

The figures here are test inputs, not check values: each test names the
source of what it asserts. Receiver data are typical of a 74HC Schmitt input
at 5 V (families.md table 2, from memory), written out so the tests do not
depend on the library's file.
"""

from __future__ import annotations

from dataclasses import replace

from drc.analysis.receiver import ReceiverElectrical
from drc.analysis.results import EdgeResult, LevelResult, StageResult
from drc.board.board import Contact, Receiver
from drc.board.stage import Capacitor, RailSource, Resistor, Stage, StageCircuit, Throw
from drc.errors import SourceLocation

LOC = SourceLocation("test.cir", 3, 1)
LIMITS = {  # the defaults of rules/limits.toml (written out: the unit tests must not read it)
    "bounce_margin": 1.0, "latency_limit": 0.100, "leakage_headroom_margin": 0.1,
    "pull_current_budget": 1e-3, "resistance_min": 1e3, "resistance_max": 50e3, "short_current": 0.1,
    "min_closure": 1e-6, "tolerance_resistor": 0.05, "tolerance_capacitor": 0.20, "tolerance_rail": 0.05,
    "contact_closed_resistance": 0.1,
}


def hc(schmitt: bool = True, vcc: float = 5.0, leak_low=(-1e-6, 0.0), family: str = "HC",
       abs_max: float | None = None, tolerant: bool = False) -> ReceiverElectrical:
    return ReceiverElectrical(
        family=family, vcc=vcc, schmitt=schmitt,
        rising_threshold=(1.7, 2.7, 3.5) if schmitt else (1.5, 2.5, 3.5),
        falling_threshold=(0.9, 1.6, 2.2) if schmitt else (1.5, 2.5, 3.5),
        vih_min=3.5, vil_max=1.5, leak_high_a=(0.0, 1e-6), leak_low_a=leak_low,
        abs_max_input_v=abs_max if abs_max is not None else vcc + 0.5, tolerant=tolerant,
        transition_limit_s_per_v=None if schmitt else 500e-9 / (0.8 * 4.5))


def contact(bounce_s: float = 0.010, wetting_a=None, rating_a=0.050, cls: str = "tactile") -> Contact:
    return Contact("SW1", cls, "SPST-NO", ("n1", "0"), bounce_s, wetting_a, rating_a,
                   SourceLocation("test.cir", 4, 1), "element")


def receiver(schmitt: bool = True, edge_sensitive: bool = False, function: str = "data",
             family: str = "HC", supply_v: float = 5.0) -> Receiver:
    return Receiver("U1", 1, "in", "14" if schmitt else "04", family, schmitt, edge_sensitive,
                    function, supply_v, 0.05, SourceLocation("test.cir", 7, 1))


def rc_stage(r1: float | None = 8.2e3, r2: float | None = 39e3, c1: float | None = 1e-6,
             rail_v: float = 5.0, schmitt: bool = True, kind: str | None = None,
             contact_: Contact | None = None, extra_caps=(), family: str = "HC") -> Stage:
    """R1 pull-up vcc-n1, SW1 n1-0, R2 series n1-in, C1 in-0 (the documented reference stage)."""
    resistors, caps = [], []
    node = "n1" if r2 is not None else "in"
    if r1 is not None:
        resistors.append(Resistor("R1", "vcc", node, r1, role="pull"))
    if r2 is not None:
        resistors.append(Resistor("R2", "n1", "in", r2, role="series"))
    if c1 is not None:
        caps.append(Capacitor("C1", "in", "0", c1))
    caps.extend(extra_caps)
    circuit = StageCircuit(tuple(resistors), tuple(caps), (), (RailSource("vcc", rail_v, 0.05),),
                           (Throw(node, "0", "pressed", 0.1),), "in")
    if kind is None:
        kind = ("rc-schmitt" if schmitt else "rc") if caps else ("pull-only" if resistors else "direct")
    parts = tuple(r.designator for r in resistors) + tuple(c.designator for c in caps)
    return Stage(contact_ or contact(), receiver(schmitt, family=family), kind, parts, circuit,
                 circuit.nodes())


def analysed(stage: Stage, rx: ReceiverElectrical | None = None) -> StageResult:
    from drc.analysis.stage_analysis import analyse_stage
    rx = rx or hc(stage.receiver.schmitt)
    result = analyse_stage(stage, rx)
    return replace(result, receiver_electrical=rx)


def level(state: str, logic: str, worst_v=None, required_v=None, margin_v=None) -> LevelResult:
    return LevelResult(state, logic, worst_v, worst_v, required_v, margin_v, worst_v, 1e3)


def edge(name: str, fastest_s, slowest_s, direction: str = "falling", slope=None,
         slowest_slope=None, start_v=5.0, final_v=0.0) -> EdgeResult:
    return EdgeResult(edge=name, direction=direction, start_v=start_v, final_v=final_v,
                      threshold_v=1.6, threshold_fastest_v=2.2, threshold_slowest_v=0.9,
                      nominal_s=fastest_s, fastest_s=fastest_s, slowest_s=slowest_s,
                      slope_v_per_s=slope, slowest_slope_v_per_s=slowest_slope)


def result(stage: Stage | None = None, *, levels=None, edges=None, pull_a=None, contact_a=None,
           surge_a=None, max_in=None, rx: ReceiverElectrical | None = None) -> StageResult:
    """A hand-built StageResult: every figure given, nothing solved."""
    stage = stage or rc_stage()
    levels = levels or {"released": level("released", "high", 4.7, 3.5, 1.2),
                        "pressed": level("pressed", "low", 0.01, 0.9, 0.89)}
    edges = edges if edges is not None else {
        "press": edge("press", 0.020, 0.080),
        "release": edge("release", 0.015, 0.070, "rising", start_v=0.0, final_v=5.0)}
    return StageResult(stage=stage, levels=levels, edges=edges, pull_current_a=pull_a,
                       contact_current_a=contact_a, surge_peak_a=surge_a, max_input_v=max_in,
                       receiver_electrical=rx or hc(stage.receiver.schmitt))
