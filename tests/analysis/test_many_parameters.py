"""More than 12 varying parameters: the corner searches that replace enumeration, by brute force.

Up to 12 varying parameters every vertex of the tolerance box is evaluated;
beyond that (physics.corners.ENUMERATE_MAX) the steady levels and currents
take a sensitivity search and the edges the exact solver's sign search. The
stage here has 12 resistors, so 14 parameters vary in DC (12 resistors, the
rail, the leakage) and 15 on an edge (with the capacitor).

The stage: a pull-up chain R1..R5 from the rail to the contact node `sw`,
the contact from `sw` to ground (0.1 ohm), R6 from `sw` to the pin `rx`, a
pull-down chain R7..R12 from `rx` to ground, C1 at the pin.

Sources (worked here with numpy over all 2**14 DC and 2**15 edge corners):
- Kirchhoff's current law at `sw` and `rx` with the chains as their sums
  (series resistors add), solved by Cramer's rule (*Lessons In Electric
  Circuits*, Vol. I, ch. 10, network analysis); the leakage is a current
  into the pin;
- the first-order RC law t = R·C·ln((Vf − V0)/(Vf − Vth)) with R the
  Thevenin resistance the capacitor sees (same book, ch. 16);
- for the corner searches alone: brute force over every vertex, written here
  with itertools (no code of the tool's), on functions given in the test.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from drc.analysis.physics.corners import ENUMERATE_MAX, Box, sign_search, worst_vertex
from drc.analysis.stage_analysis import analyse_stage
from drc.board.stage import Capacitor, RailSource, Resistor, ResistorRole, Throw
from tests.analysis.builders import receiver_electrical, stage

VCC, V_TOL = 5.0, 0.05
RC = 0.1  # closed contact
C1, C_TOL = 47e-9, 0.20
# (designator, ohms, tolerance) of each chain resistor; unequal tolerances so no two are alike.
UP = [("R1", 1.2e3, 0.01), ("R2", 1.5e3, 0.05), ("R3", 1.0e3, 0.02), ("R4", 1.8e3, 0.05), ("R5", 0.56e3, 0.10)]
SERIES = ("R6", 1.0e3, 0.05)
DOWN = [("R7", 22e3, 0.05), ("R8", 18e3, 0.01), ("R9", 27e3, 0.02), ("R10", 15e3, 0.05),
        ("R11", 20e3, 0.10), ("R12", 12e3, 0.05)]
LEAK_HIGH, LEAK_LOW = (0.0, 2e-6), (-2e-6, 0.0)
RX = receiver_electrical(leak_high=LEAK_HIGH, leak_low=LEAK_LOW)


def ladder():
    up_nodes = ["vcc", "a1", "a2", "a3", "a4", "sw"]
    down_nodes = ["rx", "b1", "b2", "b3", "b4", "b5", "0"]
    res = [Resistor(d, up_nodes[i], up_nodes[i + 1], r, t, t, role=ResistorRole.PULL)
           for i, (d, r, t) in enumerate(UP)]
    res.append(Resistor(SERIES[0], "sw", "rx", SERIES[1], SERIES[2], SERIES[2], role=ResistorRole.SERIES))
    res += [Resistor(d, down_nodes[i], down_nodes[i + 1], r, t, t, role=ResistorRole.PULL)
            for i, (d, r, t) in enumerate(DOWN)]
    return stage(resistors=res, capacitors=(Capacitor("C1", "rx", "0", C1, C_TOL, C_TOL),),
                 rails=(RailSource("vcc", VCC, V_TOL),), throws=(Throw("sw", "0", "pressed", RC),))


def _ends(nominal, tol):
    return (nominal * (1 - tol), nominal * (1 + tol))


def corner_grid(with_cap: bool, leak: tuple[float, float]):
    """Every corner as arrays: Vcc, Ru (chain sum), R6, Rd (chain sum), C, I."""
    axes = [_ends(VCC, V_TOL)] + [_ends(r, t) for _d, r, t in UP] + [_ends(SERIES[1], SERIES[2])]
    axes += [_ends(r, t) for _d, r, t in DOWN] + [leak]
    if with_cap:
        axes.append(_ends(C1, C_TOL))
    grid = np.array(list(itertools.product(*axes)))
    vcc, ru, r6 = grid[:, 0], grid[:, 1:6].sum(axis=1), grid[:, 6]
    rd, i_leak = grid[:, 7:13].sum(axis=1), grid[:, 13]
    c = grid[:, 14] if with_cap else None
    return vcc, ru, r6, rd, c, i_leak


def node_levels(vcc, ru, r6, rd, i_leak, pressed: bool):
    """(v_sw, v_rx) by Kirchhoff at sw and rx, Cramer's rule."""
    g_u, g6, g_d = 1 / ru, 1 / r6, 1 / rd
    g_c = 1 / RC if pressed else 0.0
    a11, a12, b1 = g_u + g6 + g_c, -g6, vcc * g_u
    a21, a22, b2 = -g6, g6 + g_d, -i_leak
    det = a11 * a22 - a12 * a21
    return (b1 * a22 - a12 * b2) / det, (a11 * b2 - a21 * b1) / det


def thevenin_r(ru, r6, rd, pressed: bool):
    """The resistance the capacitor at rx sees (series adds, parallel by conductances)."""
    upper = 1 / (1 / ru + 1 / RC) if pressed else ru
    return 1 / (1 / rd + 1 / (r6 + upper))


@pytest.fixture(scope="module")
def result():
    return analyse_stage(ladder(), RX)


def test_the_stage_has_more_parameters_than_are_enumerated(result):
    from drc.analysis.physics.compiled import compile_circuit

    model = compile_circuit(ladder().circuit)
    varying = int(np.count_nonzero(model.hi != model.lo)) + 1  # + the leakage, filled per question
    assert varying - 1 > ENUMERATE_MAX  # the DC box (no capacitor) is already beyond enumeration


def test_worst_steady_levels_are_the_brute_force_extremes(result):
    vcc, ru, r6, rd, _c, i = corner_grid(False, LEAK_HIGH)
    _sw, high = node_levels(vcc, ru, r6, rd, i, pressed=False)
    lev = result.levels["released"]
    assert lev.logic == "high"
    assert lev.worst_v == pytest.approx(high.min(), rel=1e-9)
    assert lev.margin_v == pytest.approx(high.min() - RX.high_required_v, rel=1e-9)
    vcc, ru, r6, rd, _c, i = corner_grid(False, LEAK_LOW)
    sw, low = node_levels(vcc, ru, r6, rd, i, pressed=True)
    lev = result.levels["pressed"]
    assert lev.logic == "low"
    assert lev.worst_v == pytest.approx(low.max(), rel=1e-9)
    assert lev.margin_v == pytest.approx(RX.low_required_v - low.max(), rel=1e-9)


def test_nominal_levels_and_thevenin_by_hand(result):
    ru = sum(r for _d, r, _t in UP)
    rd = sum(r for _d, r, _t in DOWN)
    lev = result.levels["released"]
    i_mid = sum(LEAK_HIGH) / 2  # the nominal leakage is the middle of its range
    _sw, v = node_levels(VCC, ru, SERIES[1], rd, i_mid, pressed=False)
    assert lev.nominal_v == pytest.approx(v, rel=1e-9)
    assert lev.thevenin_v == pytest.approx(VCC * rd / (ru + SERIES[1] + rd), rel=1e-9)
    assert lev.thevenin_ohms == pytest.approx(thevenin_r(ru, SERIES[1], rd, False), rel=1e-9)


def test_currents_are_the_brute_force_extremes(result):
    # Highest steady input: released, rail maximum, no leakage (the largest over the corners).
    vcc, ru, r6, rd, _c, i = corner_grid(False, LEAK_HIGH)
    sw_r, rx_r = node_levels(vcc, ru, r6, rd, i, pressed=False)
    vcc2, ru2, r62, rd2, _c2, i2 = corner_grid(False, LEAK_LOW)
    sw_p, rx_p = node_levels(vcc2, ru2, r62, rd2, i2, pressed=True)
    assert result.max_input_v == pytest.approx(max(rx_r.max(), rx_p.max()), rel=1e-9)
    # The pull resistors' current: the pull-up chain (vcc - sw)/Ru or the pull-down rx/Rd.
    pull = max(np.max(np.abs((vcc - sw_r) / ru)), np.max(np.abs(rx_r / rd)),
               np.max(np.abs((vcc2 - sw_p) / ru2)), np.max(np.abs(rx_p / rd2)))
    assert result.pull_current_a == pytest.approx(pull, rel=1e-9)
    # The closed contact's current, sw / Rc, over the pressed level's corners: a current out of
    # the pin (the low level's leakage) flows through R6 into the contact too.
    assert result.contact_current_a == pytest.approx((sw_p / RC).min(), rel=1e-9)
    assert result.closed_current_a == pytest.approx((sw_p / RC).max(), rel=1e-9)


def _edge_times(edge: str, vth: float):
    """Time to vth at every edge corner by the RC law (the leakage range of the level the edge goes to)."""
    pressed_after = edge == "press"
    leak = LEAK_LOW if pressed_after else LEAK_HIGH
    vcc, ru, r6, rd, c, i = corner_grid(True, leak)
    _s, v0 = node_levels(vcc, ru, r6, rd, i, pressed=not pressed_after)
    _s, vf = node_levels(vcc, ru, r6, rd, i, pressed=pressed_after)
    tau = thevenin_r(ru, r6, rd, pressed_after) * c
    return tau * np.log((vf - v0) / (vf - vth))


@pytest.mark.parametrize("edge", ["press", "release"])
def test_edge_corners_are_the_brute_force_extremes(result, edge):
    e = result.edges[edge]
    rising = edge == "release"
    inner, outer = (RX.rising_threshold[0], RX.rising_threshold[2]) if rising \
        else (RX.falling_threshold[2], RX.falling_threshold[0])
    fastest, slowest = _edge_times(edge, inner).min(), _edge_times(edge, outer).max()
    assert e.fastest_s == pytest.approx(fastest, rel=1e-7)
    assert e.slowest_s == pytest.approx(slowest, rel=1e-7)
    assert e.threshold_fastest_v == inner and e.threshold_slowest_v == outer
    # The nominal: every value at its nominal, the leakage mid-range, the typical threshold.
    ru, rd = sum(r for _d, r, _t in UP), sum(r for _d, r, _t in DOWN)
    i_mid = sum(LEAK_LOW if edge == "press" else LEAK_HIGH) / 2
    _s, v0 = node_levels(VCC, ru, SERIES[1], rd, i_mid, pressed=rising)
    _s, vf = node_levels(VCC, ru, SERIES[1], rd, i_mid, pressed=not rising)
    tau = thevenin_r(ru, SERIES[1], rd, not rising) * C1
    vth = (RX.rising_threshold if rising else RX.falling_threshold)[1]
    assert e.nominal_s == pytest.approx(tau * np.log((vf - v0) / (vf - vth)), rel=1e-9)
    assert e.start_v == pytest.approx(v0, rel=1e-9) and e.final_v == pytest.approx(vf, rel=1e-9)
    # The corner reported gives the time reported (RC law at that corner's values).
    cf = e.corner_fastest
    ru_f = sum(cf[d] for d, _r, _t in UP)
    rd_f = sum(cf[d] for d, _r, _t in DOWN)
    _s, v0 = node_levels(cf["rail:vcc"], ru_f, cf["R6"], rd_f, cf["leakage"], pressed=rising)
    _s, vf = node_levels(cf["rail:vcc"], ru_f, cf["R6"], rd_f, cf["leakage"], pressed=not rising)
    tau = thevenin_r(ru_f, cf["R6"], rd_f, not rising) * cf["C1"]
    assert e.fastest_s == pytest.approx(tau * np.log((vf - v0) / (vf - inner)), rel=1e-9)


# The searches alone, on functions given here, against brute force over every vertex.

def _box(n: int, lo=-1.0, hi=1.0) -> Box:
    return Box(np.zeros(n), np.full(n, lo), np.full(n, hi), tuple(range(n)))


def _brute(n: int, f) -> float:
    rows = np.array(list(itertools.product((-1.0, 1.0), repeat=n)))
    return float(f(rows).max())


class Counted:
    """A badness function that counts the rows it is asked about."""

    def __init__(self, f):
        self.f, self.rows = f, 0

    def __call__(self, P):
        self.rows += P.shape[0]
        return self.f(P)


W14 = np.array([3.0, -1.0, 0.5, -2.0, 1.5, -0.25, 0.75, -1.25, 2.5, -0.5, 1.0, -3.5, 0.125, -0.625])


def test_sensitivity_search_finds_the_worst_vertex_of_a_monotone_figure():
    # Linear in each parameter (as a resistive network's level is): brute force over 2**14 vertices.
    n = W14.size
    assert n > ENUMERATE_MAX

    def f(P):
        return P @ W14 + 0.1 * np.tanh(P[:, 0] * W14[0])

    counted = Counted(f)
    row, best = worst_vertex(_box(n), counted)
    assert best == pytest.approx(_brute(n, f), rel=1e-12)
    np.testing.assert_array_equal(row, np.sign(W14))
    # The sensitivities (2n rows) point straight at it: the vertex (1 row) and one round of its
    # n neighbours confirm it (corners' module docstring: read from sensitivities, confirmed).
    assert counted.rows == 2 * n + 1 + n


def test_sensitivity_search_moves_to_a_better_neighbour():
    # -x1·x2 + small terms: at nominal (0) every direction looks alike, so the first vertex has
    # x1 = x2 = +1, which is the worst for the product; one flip of x1 or x2 reaches the optimum.
    n = 14
    w = np.linspace(0.01, 0.02, n)

    def f(P):
        return -4.0 * P[:, 1] * P[:, 2] + P @ w

    row, best = worst_vertex(_box(n), f)
    assert best == pytest.approx(_brute(n, f), rel=1e-12)
    assert row[1] * row[2] == -1.0


def test_sensitivity_search_keeps_tied_columns_together():
    # Column 3 moves with column 0 (a tied leakage): the vertex has them at the same end.
    n = 14
    box = Box(np.zeros(n), np.full(n, -1.0), np.full(n, 1.0), tuple(c for c in range(n) if c != 3),
              ((0, (3,)),))

    def f(P):
        return P[:, 3] * 5.0 - P[:, 0] + P[:, 4:].sum(axis=1)

    row, best = worst_vertex(box, f)
    assert row[0] == row[3] == 1.0
    assert best == pytest.approx(5.0 - 1.0 + (n - 4), rel=1e-12)


def test_sign_search_of_a_monotone_figure_costs_two_n_plus_two_rows():
    # corners.sign_search's promise: with the figure monotonic in each parameter the first vertex
    # is already the worst, so n + 1 sensitivity rows and the vertex with its n neighbours.
    n = 9
    w = np.array([1.0, -2.0, 3.0, -0.5, 0.25, -4.0, 2.0, -1.0, 0.5])
    f = Counted(lambda P: P @ w)
    row, best = sign_search(_box(n), f)
    assert best == pytest.approx(_brute(n, f.f), rel=1e-12)
    np.testing.assert_array_equal(row, np.sign(w))
    assert f.rows == 2 * n + 2


def test_sign_search_moves_to_a_better_neighbour():
    n = 6
    w = np.linspace(0.01, 0.02, n)
    f = Counted(lambda P: -4.0 * P[:, 1] * P[:, 2] + P @ w)
    row, best = sign_search(_box(n), f)
    assert best == pytest.approx(_brute(n, f.f), rel=1e-12)
    assert row[1] * row[2] == -1.0
    # One move, then a round that finds nothing better: three rounds of rows in all.
    assert f.rows == (n + 1) + (n + 1) + n


def test_sign_search_without_varying_parameters_is_the_nominal():
    box = Box(np.array([2.0, 3.0]), np.array([2.0, 3.0]), np.array([2.0, 3.0]), ())
    row, best = sign_search(box, lambda P: P[:, 0] * P[:, 1])
    np.testing.assert_array_equal(row, [2.0, 3.0])
    assert best == 6.0
