"""`drc design`'s netlist fragment, read by ngspice: the values it writes are the values designed.

Source: ngspice (Debian package `ngspice`) reading the fragment as a deck
(the contact replaced by an open circuit, a model name ngspice does not
know): each part's value as ngspice holds it (`@R1[resistance]`,
`@C1[capacitance]`) must equal the designed value, for designs whose values
span the scale letters (p, n, u, m, k, Meg); the values themselves are
E-series members (IEC 60063 through `eseries`, tests/design/test_forward_design.py).
"""

from __future__ import annotations

import pytest

from drc.design.forward import DesignRequest, design_stage
from tests.checks.builders import LIMITS, hc
from tests.support.ngspice import measure

pytestmark = pytest.mark.ngspice


def ngspice_values(fragment: str) -> dict[str, float]:
    lines = [ln for ln in fragment.splitlines() if not ln.startswith("SW1 ")]
    deck = "\n".join(["design fragment", *lines, "Rin in 0 1G", ".control", "op",
                      "let r1v = @r1[resistance]", "let r2v = @r2[resistance]", "let c1v = @c1[capacitance]",
                      "print r1v r2v c1v", ".endc", ".end"]) + "\n"
    return measure(deck, ["r1v", "r2v", "c1v"])


@pytest.mark.parametrize("bounce, latency, topology", [(0.010, 0.100, "pull-up"), (0.0005, 0.005, "pull-up"),
                                                       (0.050, 0.400, "pull-down"), (20e-6, 300e-6, "pull-up")])
def test_ngspice_reads_the_designed_values(bounce, latency, topology):
    d = design_stage(DesignRequest(5.0, "HC", True, bounce, latency, topology=topology), rx=hc(),
                     limits={**LIMITS, "latency_limit": latency})
    got = ngspice_values(d.netlist_fragment())
    assert got["r1v"] == pytest.approx(d.pull.ohms, rel=1e-9)
    assert got["r2v"] == pytest.approx(d.series_resistor.ohms, rel=1e-9)
    assert got["c1v"] == pytest.approx(d.capacitor.farads, rel=1e-9)
