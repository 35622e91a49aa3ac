"""The batch solver and the per-stage solver give the same figures for every batchable stage.

`physics.batch.analyse_group` (many stages of one structure stacked in numpy)
and the per-stage path of `stage_analysis` (one compiled circuit, corners
enumerated or searched) are two implementations of the same maths. Neither
is the reference: a stage sent through both must give the same levels,
margins, Thevenin figures, edge times and slopes, worst corners, and
currents (pull, contact, closed contact, surge at closure, highest input).

Sources: the two implementations themselves, against each other (a property
test: hypothesis draws the stages). The generated stages span every
batchable shape a contact input takes (pull-up or pull-down, series
resistor, a capacitor at the pin, to the rail or across the contact, a
divider, normally open, normally closed and change-over contacts, a second
rail), random values, asymmetric tolerances and hand-made receiver data;
the stages of the demo boards and of the rule corpus are compared too.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from drc.analysis.physics.batch import analyse_group, batchable, structure_key, template
from drc.analysis.physics.compiled import compile_circuit
from drc.analysis.results import StageResult
from drc.analysis.stage_analysis import _analyse_one
from drc.board.stage import ActuatorState, Capacitor, RailSource, Resistor, ResistorRole, Throw
from tests.analysis.builders import receiver_electrical, stage

ROOT = Path(__file__).resolve().parents[2]
REL = 1e-9  # two orders of summation of the same doubles; agreement to the last bits is expected
ABS = {"V": 1e-12, "s": 1e-18, "A": 1e-18, "ohm": 1e-9, "V/s": 1e-6, "": 1e-12}


class Num(tuple):
    """A figure and its unit (the unit picks the absolute tolerance near zero)."""


def figures(r: StageResult) -> dict[str, object]:
    """Every figure a rule, a report or a deck reads, flattened: name -> (value, unit)."""
    out: dict[str, object] = {
        "pull_current_a": Num((r.pull_current_a, "A")), "contact_current_a": Num((r.contact_current_a, "A")),
        "closed_current_a": Num((r.closed_current_a, "A")), "surge_peak_a": Num((r.surge_peak_a, "A")),
        "max_input_v": Num((r.max_input_v, "V")), "notes": r.notes, "levels": tuple(r.levels), "edges": tuple(r.edges),
    }
    for state, lv in r.levels.items():
        out[f"{state}.logic"] = lv.logic
        for name in ("nominal_v", "worst_v", "required_v", "margin_v", "thevenin_v"):
            out[f"{state}.{name}"] = Num((getattr(lv, name), "V"))
        out[f"{state}.thevenin_ohms"] = Num((lv.thevenin_ohms, "ohm"))
    for edge, e in r.edges.items():
        out[f"{edge}.direction"] = e.direction
        for name in ("start_v", "final_v", "threshold_v", "threshold_fastest_v", "threshold_slowest_v"):
            out[f"{edge}.{name}"] = Num((getattr(e, name), "V"))
        for name in ("nominal_s", "fastest_s", "slowest_s"):
            out[f"{edge}.{name}"] = Num((getattr(e, name), "s"))
        for name in ("slope_v_per_s", "slowest_slope_v_per_s"):
            out[f"{edge}.{name}"] = Num((getattr(e, name), "V/s"))
        for which in ("corner_fastest", "corner_slowest"):
            corner = getattr(e, which)
            out[f"{edge}.{which}"] = tuple(sorted(corner))
            for k, v in corner.items():
                out[f"{edge}.{which}.{k}"] = Num((v, ""))
    return out


def same(a: object, b: object) -> bool:
    if isinstance(a, Num) and isinstance(b, Num):
        (x, unit), (y, _) = a, b
        if x is None or y is None:
            return x is None and y is None
        if math.isinf(x) or math.isinf(y) or math.isnan(x) or math.isnan(y):
            return x == y or (math.isnan(x) and math.isnan(y))
        return math.isclose(x, y, rel_tol=REL, abs_tol=ABS[unit])
    return a == b


def assert_same_figures(batch: StageResult, one: StageResult) -> None:
    fb, fo = figures(batch), figures(one)
    assert fb.keys() == fo.keys()
    differ = {k: (fb[k], fo[k]) for k in fb if not same(fb[k], fo[k])}
    assert not differ, differ


def both_ways(st_, rx) -> tuple[StageResult, StageResult]:
    model = template(structure_key(st_.circuit), st_.circuit)
    got = analyse_group(model, [st_], [rx])
    assert got is not None, "a batchable structure the batch refused"
    return got[0], _analyse_one(st_, rx)


# ---------------------------------------------------------------- generated stages

tolerance = st.sampled_from([0.0, 0.01, 0.02, 0.05, 0.1, 0.2])
ohms = st.floats(10.0, 2e6).map(lambda x: float(f"{x:.3g}"))
farads = st.floats(1e-10, 1e-4).map(lambda x: float(f"{x:.3g}"))


@st.composite
def resistor(draw, name, a, b, role=ResistorRole.OTHER):
    return Resistor(name, a, b, draw(ohms), draw(tolerance), draw(tolerance), role=role)


@st.composite
def batchable_stages(draw):
    """One contact input of a batchable shape: at most one capacitor, no diodes."""
    vcc = draw(st.sampled_from([3.3, 5.0, 12.0]))
    rails = [RailSource("vcc", vcc, draw(st.sampled_from([0.0, 0.05, 0.1])))]
    pull_rail = "vcc"
    if draw(st.booleans()):  # a pull to a second rail (another supply on the board)
        rails.append(RailSource("v2", draw(st.sampled_from([1.8, 3.3, 5.0])), draw(st.sampled_from([0.0, 0.05]))))
        pull_rail = "v2"
    pull_up = draw(st.booleans())
    series = draw(st.booleans())
    rx_node = "rx" if series else "sw"
    rs = []
    if draw(st.integers(0, 9)) > 0:  # a pull resistor, mostly
        a, b = (pull_rail, "sw") if pull_up else ("sw", "0")
        rs.append(draw(resistor("R1", a, b, ResistorRole.PULL)))
    if series:
        rs.append(draw(resistor("R2", "sw", "rx", ResistorRole.SERIES)))
    if draw(st.integers(0, 4)) == 0:  # a divider leg at the pin
        rs.append(draw(resistor("R3", rx_node, "0" if pull_up else pull_rail)))
    form = draw(st.sampled_from(["no", "nc", "changeover"]))
    to = "0" if pull_up else pull_rail
    away = pull_rail if pull_up else "0"
    closed = draw(st.sampled_from([1e-3, 0.05, 0.1, 1.0]))
    throws = {"no": [Throw("sw", to, ActuatorState.PRESSED, closed)],
              "nc": [Throw("sw", to, ActuatorState.RELEASED, closed)],
              "changeover": [Throw("sw", to, ActuatorState.PRESSED, closed),
                             Throw("sw", away, ActuatorState.RELEASED, closed)]}[form]
    caps = []
    where = draw(st.sampled_from(["none", "pin", "pin-to-rail", "across-contact"]))
    if where != "none":
        a, b = {"pin": (rx_node, "0"), "pin-to-rail": (rx_node, "vcc"), "across-contact": ("sw", to)}[where]
        caps.append(Capacitor("C1", a, b, draw(farads), draw(tolerance), draw(tolerance)))
    kind = "rc-schmitt" if caps else "pull-only"
    return stage(resistors=rs, capacitors=caps, rails=rails, throws=throws, receiver_node=rx_node, kind=kind)


@st.composite
def receivers(draw):
    vcc = draw(st.sampled_from([3.3, 5.0, 12.0]))
    schmitt = draw(st.booleans())
    f = draw(st.lists(st.floats(0.1, 0.9), min_size=6, max_size=6).map(sorted))
    rising = (f[3] * vcc, f[4] * vcc, f[5] * vcc) if schmitt else (f[2] * vcc, f[3] * vcc, f[4] * vcc)
    falling = (f[0] * vcc, f[1] * vcc, f[2] * vcc) if schmitt else rising
    leak = draw(st.sampled_from([0.0, 1e-7, 1e-6, 20e-6]))
    skew = draw(st.sampled_from([0.0, 1.0]))
    return receiver_electrical(vcc=vcc, schmitt=schmitt, rising=rising, falling=falling,
                               leak_high=(-leak * skew, leak), leak_low=(-leak, leak * skew),
                               vih=rising[2], vil=falling[0])


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(batchable_stages(), receivers())
def test_batch_and_per_stage_solvers_agree(st_, rx):
    assert batchable(compile_circuit(st_.circuit))
    batch, one = both_ways(st_, rx)
    assert_same_figures(batch, one)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.tuples(batchable_stages(), receivers()), min_size=2, max_size=5))
def test_a_group_gives_each_stage_its_own_figures(pairs):
    # Stages of one structure solved together: each row as if it were alone.
    by_key: dict[tuple, list] = {}
    for st_, rx in pairs:
        by_key.setdefault(structure_key(st_.circuit), []).append((st_, rx))
    for key, members in by_key.items():
        model = template(key, members[0][0].circuit)
        got = analyse_group(model, [m[0] for m in members], [m[1] for m in members])
        assert got is not None
        for (st_, rx), batch in zip(members, got, strict=True):
            assert_same_figures(batch, _analyse_one(st_, rx))


# ---------------------------------------------------------------- stages of the demo boards and corpus

def board_stages():
    from drc.pipeline import CheckOptions, check_board_in_memory
    files = sorted((ROOT / "boards").rglob("*.cir")) + sorted((ROOT / "tests" / "checks" / "corpus").glob("*.cir"))
    for path in files:
        check = check_board_in_memory(path, CheckOptions(propose_fixes=False))
        for r in check.results:
            if r.receiver_electrical is not None and batchable(compile_circuit(r.stage.circuit)):
                yield pytest.param(r.stage, r.receiver_electrical, id=f"{path.name}:{r.stage.name}")


BOARD_STAGES = list(board_stages())


def test_the_boards_have_batchable_stages():
    assert len(BOARD_STAGES) >= 20


@pytest.mark.parametrize("st_, rx", BOARD_STAGES)
def test_board_stage_agrees_on_both_solvers(st_, rx):
    batch, one = both_ways(st_, rx)
    assert_same_figures(batch, one)
