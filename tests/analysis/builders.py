"""Hand-built stages and receivers for the physics and oracle tests.

The figures here are test inputs, not check values: each test names the
source of what it asserts.
"""

from __future__ import annotations

from drc.analysis.receiver import ReceiverElectrical
from drc.board.board import Contact, Receiver
from drc.board.stage import Capacitor, RailSource, Resistor, Stage, StageCircuit, Throw
from drc.errors import SourceLocation

_LOC = SourceLocation("test.cir", 1, 1)


def receiver_electrical(*, vcc: float = 5.0, schmitt: bool = True,
                        rising: tuple[float, float, float] = (2.0, 2.9, 3.5),
                        falling: tuple[float, float, float] = (0.9, 1.6, 2.2),
                        leak_high: tuple[float, float] = (0.0, 1e-6),
                        leak_low: tuple[float, float] = (-1e-6, 0.0),
                        vih: float = 3.5, vil: float = 1.5) -> ReceiverElectrical:
    return ReceiverElectrical(
        family="TEST", vcc=vcc, schmitt=schmitt, rising_threshold=rising,
        falling_threshold=falling, vih_min=vih, vil_max=vil, leak_high_a=leak_high,
        leak_low_a=leak_low, abs_max_input_v=vcc + 0.5, tolerant=False,
        transition_limit_s_per_v=None if schmitt else 1e-6)


_RAILS = (RailSource("vcc", 5.0, 0.05),)
_THROWS = (Throw("sw", "0", "pressed", 0.1),)


def stage(resistors=(), capacitors=(), diodes=(), rails=_RAILS, throws=_THROWS, receiver_node: str = "rx",
          kind: str = "rc-schmitt") -> Stage:
    circuit = StageCircuit(tuple(resistors), tuple(capacitors), tuple(diodes), tuple(rails),
                           tuple(throws), receiver_node)
    contact = Contact("SW1", "tactile", "SPST-NO", ("sw", "0"), 0.01, None, None, _LOC, "element")
    receiver = Receiver("U1", 1, receiver_node, "14", "HC", True, False, "data", 5.0, 0.05, _LOC)
    parts = tuple(r.designator for r in resistors) + tuple(c.designator for c in capacitors) \
        + tuple(d.designator for d in diodes)
    return Stage(contact, receiver, kind, parts, circuit, circuit.nodes())


def pullup_series_rc(r_pu=10e3, r_s=4.7e3, c=1e-6, vcc=5.0, closed_ohms=0.1, **tol) -> Stage:
    """Pull-up to vcc at the contact node, contact to ground, series R, C at the pin."""
    return stage(
        resistors=(Resistor("R1", "vcc", "sw", r_pu, role="pull", **tol),
                   Resistor("R2", "sw", "rx", r_s, role="series", **tol)),
        capacitors=(Capacitor("C1", "rx", "0", c),),
        rails=(RailSource("vcc", vcc, 0.05),),
        throws=(Throw("sw", "0", "pressed", closed_ohms),))


def pullup_c_at_pin(r_pu=10e3, c=100e-9, vcc=5.0, closed_ohms=0.1, r_tol=0.05, c_tol=0.10,
                    v_tol=0.05) -> Stage:
    """Pull-up to vcc at the pin, C at the pin, contact from the pin to ground."""
    return stage(
        resistors=(Resistor("R1", "vcc", "rx", r_pu, r_tol, r_tol, role="pull"),),
        capacitors=(Capacitor("C1", "rx", "0", c, c_tol, c_tol),),
        rails=(RailSource("vcc", vcc, v_tol),),
        throws=(Throw("rx", "0", "pressed", closed_ohms),))
