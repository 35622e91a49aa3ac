"""What the analysis computes for one stage: levels, edges, currents.

All figures in SI units (V, s, A, Ω). Times are None when the threshold is
never reached (the steady level does not cross it): a result, not an error.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from enum import StrEnum

from drc.analysis.receiver import ReceiverElectrical
from drc.board.stage import ActuatorState, ResistorRole, Stage


class Edge(StrEnum):
    """The two edges at a receiver; the value is the name reports print."""

    PRESS = "press"  # released -> pressed
    RELEASE = "release"  # pressed -> released


ACTUATOR_STATES = (ActuatorState.RELEASED, ActuatorState.PRESSED)  # the order levels are reported in
EDGES: tuple[Edge, ...] = tuple(Edge)
# Each edge as (state before, state after).
EDGE_STATES: dict[Edge, tuple[ActuatorState, ActuatorState]] = {
    Edge.PRESS: (ActuatorState.RELEASED, ActuatorState.PRESSED),
    Edge.RELEASE: (ActuatorState.PRESSED, ActuatorState.RELEASED),
}
OTHER_STATE = {ActuatorState.RELEASED: ActuatorState.PRESSED, ActuatorState.PRESSED: ActuatorState.RELEASED}
# The resistors whose current `StageResult.pull_current_a` reports.
PULL_ROLES = (ResistorRole.PULL, ResistorRole.INTERNAL_PULL)


def time_or_none(x: float | None) -> float | None:
    """A time as reported: None when the threshold is never reached (nan or inf)."""
    return None if x is None or not math.isfinite(x) else float(x)


def slope_or_none(x: float | None) -> float | None:
    """A slope as reported; inf (an instant switch) is kept, nan (no crossing) is None."""
    return None if x is None or math.isnan(x) else float(x)


@dataclass(frozen=True, slots=True)
class LevelResult:
    """The steady level at the receiver in one actuator state.

    logic: the level the receiver should read ("high", "low") or "undefined"
    when no DC path sets it (floating). worst_v is the steady voltage at the
    corner (tolerances, rail, leakage) that brings it closest to the
    threshold it must clear; required_v is that worst-case threshold (VIH min
    or VT+ max for high, VIL max or VT- min for low); margin_v =
    worst_v - required_v for high, required_v - worst_v for low.
    """

    state: ActuatorState
    logic: str
    nominal_v: float | None
    worst_v: float | None
    required_v: float | None
    margin_v: float | None
    thevenin_v: float | None
    thevenin_ohms: float | None


@dataclass(frozen=True, slots=True)
class EdgeResult:
    """One edge at the receiver: press (released -> pressed) or release.

    threshold_v is the nominal threshold the edge must cross; the fastest and
    slowest corners use their own thresholds (inner and outer limits).
    slope_v_per_s: |dV/dt| at the threshold crossing, nominal corner.
    slowest_slope_v_per_s: |dV/dt| at the crossing, slowest corner (slow-edge).
    corner_fastest / corner_slowest: the parameter values of those corners,
    keyed by designator or name ("R2", "C1", "rail:+5V", "threshold", "leakage").
    """

    edge: Edge
    direction: str  # "rising" or "falling"
    start_v: float
    final_v: float
    threshold_v: float
    threshold_fastest_v: float
    threshold_slowest_v: float
    nominal_s: float | None
    fastest_s: float | None
    slowest_s: float | None
    slope_v_per_s: float | None
    slowest_slope_v_per_s: float | None
    corner_fastest: dict[str, float] = field(default_factory=dict)
    corner_slowest: dict[str, float] = field(default_factory=dict)


@dataclass(frozen=True, slots=True)
class StageResult:
    """Everything the rules read about one stage.

    pull_current_a: largest current through the pull resistor(s) while the
    contact is held in its current-drawing state (rail max, R min).
    contact_current_a: smallest steady current through the closed contact
    (rail min, R max); None for a contact that carries none.
    closed_current_a: largest steady current through the closed contact
    (rail max, R min): a pull resistor that reads as a short shows here.
    surge_peak_a: peak current when the contact closes onto a charged
    capacitor (cap voltage / resistance between them), None if no capacitor
    discharges through the contact.
    max_input_v: highest steady voltage the receiver pin can see (held by its
    clamp diode where a rail above its supply makes that conduct).
    clamp_current_a: largest steady current through any receiver input's clamp
    diode on the stage's nets (a rail mismatch), None where no clamp can conduct.
    """

    stage: Stage
    levels: dict[str, LevelResult]
    edges: dict[str, EdgeResult]
    pull_current_a: float | None
    contact_current_a: float | None
    surge_peak_a: float | None
    max_input_v: float | None
    receiver_electrical: ReceiverElectrical | None = None  # what the analysis used
    notes: tuple[str, ...] = ()
    closed_current_a: float | None = None
    clamp_current_a: float | None = None
