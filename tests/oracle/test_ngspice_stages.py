"""Our nominal time-to-threshold against ngspice (the independent simulator).

Oracle: ngspice (Debian package `ngspice`), run on the deck drc.spice_deck
writes for each stage; recipe in /work/shared/reference/spice-dialect.md.
DESIGN.md section 10 sets the agreement: within 0.5 % on both edges.
"""

import pytest

from drc.analysis.stage_analysis import analyse_stage
from drc.board.stage import Capacitor, Diode, RailSource, Resistor, Throw
from drc.simulation.spice_deck import MEASUREMENTS, stage_deck
from tests.analysis.builders import pullup_c_at_pin, pullup_series_rc, receiver_electrical, stage
from tests.support.ngspice import measure

pytestmark = pytest.mark.ngspice

SCHMITT = receiver_electrical()
PLAIN = receiver_electrical(schmitt=False, rising=(1.5, 2.5, 3.5), falling=(1.5, 2.5, 3.5))


def _fixtures():
    yield "pullup+series R+C, Schmitt", pullup_series_rc(), SCHMITT
    yield "pull-down, contact to rail", stage(
        resistors=(Resistor("R1", "sw", "0", 10e3, role="pull"), Resistor("R2", "sw", "rx", 4.7e3, role="series")),
        capacitors=(Capacitor("C1", "rx", "0", 470e-9),),
        throws=(Throw("vcc", "sw", "pressed", 0.1),)), SCHMITT
    yield "normally-closed contact", stage(
        resistors=(Resistor("R1", "vcc", "sw", 22e3, role="pull"), Resistor("R2", "sw", "rx", 10e3, role="series")),
        capacitors=(Capacitor("C1", "rx", "0", 220e-9),),
        throws=(Throw("sw", "0", "released", 0.1),)), SCHMITT
    yield "diode across series R", stage(
        resistors=(Resistor("R1", "vcc", "sw", 10e3, role="pull"), Resistor("R2", "sw", "rx", 47e3, role="series"),
                   Resistor("R3", "rx", "dk", 1e3)),
        capacitors=(Capacitor("C1", "rx", "0", 100e-9),),
        diodes=(Diode("D1", "dk", "sw", 0.6, 10.0),)), SCHMITT
    yield "two RC sections", stage(
        resistors=(Resistor("R1", "vcc", "sw", 10e3, role="pull"), Resistor("R2", "sw", "a", 10e3, role="series"),
                   Resistor("R3", "a", "rx", 22e3, role="series")),
        capacitors=(Capacitor("C1", "a", "0", 100e-9), Capacitor("C2", "rx", "0", 47e-9))), SCHMITT
    yield "C at the pin, no series R", pullup_c_at_pin(r_pu=10e3, c=100e-9, closed_ohms=100.0), SCHMITT
    yield "internal pull-up, plain input", stage(
        resistors=(Resistor("RPU", "vcc", "rx", 40e3, 0.25, 0.25, role="internal-pull"),
                   Resistor("R1", "sw", "rx", 1e3, role="series")),
        capacitors=(Capacitor("C1", "rx", "0", 10e-9),),
        rails=(RailSource("vcc", 3.3, 0.05),),
        throws=(Throw("sw", "0", "pressed", 0.1),)), receiver_electrical(
            vcc=3.3, schmitt=False, rising=(0.99, 1.65, 2.31), falling=(0.99, 1.65, 2.31))
    for leak in (0.5e-6, 2e-6, 4e-6):  # the midpoint of each range below
        yield f"470k pull-up + 10k + 10nF, leakage {leak:g} A", pullup_series_rc(r_pu=470e3, r_s=10e3, c=10e-9), \
            receiver_electrical(rising=(1.5, 2.5, 3.5), falling=(1.5, 2.5, 3.5),
                                leak_high=(0.0, 2 * leak), leak_low=(-2 * leak, 0.0))


FIXTURES = list(_fixtures())


@pytest.mark.parametrize("name, st, rx", FIXTURES, ids=[f[0] for f in FIXTURES])
def test_nominal_times_agree_with_ngspice(name, st, rx):
    res = analyse_stage(st, rx)
    spice = measure(stage_deck(st, rx), list(MEASUREMENTS))  # fails if a .meas printed nothing
    for edge, meas in zip(("press", "release"), MEASUREMENTS, strict=True):
        ours = res.edges[edge].nominal_s
        assert ours is not None and ours > 0
        # DESIGN.md §10: agree with ngspice within 0.5 %.
        assert spice[meas] == pytest.approx(ours, rel=5e-3), (edge, spice[meas], ours)
