"""The words of `drc design`: the proposed parts, both edges' times and every margin.

`drc.design.forward` computes a `DesignResult`; this module only says it, one
line per figure, for the console (the SPICE fragment is the design's own
product and lives with it).
"""

from __future__ import annotations

from drc.design.forward import DesignResult, Margin
from drc.units import format_quantity as fq


def design_lines(result: DesignResult) -> list[str]:
    """A human summary: parts, edge times, margins, and why it does not pass."""
    out = [f"R1 ({'pull-up' if result.topology == 'pull-up' else 'pull-down'}) {fq(result.pull.ohms, 'Ω')}, "
           f"R2 (series) {fq(result.series_resistor.ohms, 'Ω')}, C1 {fq(result.capacitor.farads, 'F')}"]
    for e in result.edges:
        out.append(f"{e.edge}: nominal {_time(e.nominal_s)}, fastest {_time(e.fastest_s)}, "
                   f"slowest {_time(e.slowest_s)}")
    out.extend(margin_text(m) for m in result.margins)
    if not result.ok:
        out.append(f"not passing: {result.reason}")
    return out


def margin_text(margin: Margin) -> str:
    """"press fastest vs bounce: 15.2 ms against 10 ms (spare 5.22 ms)", or "not reached"."""
    m = margin
    if m.value is None or m.spare is None:
        return f"{m.name}: not reached (limit {fq(m.limit, m.unit)})"
    return f"{m.name}: {fq(m.value, m.unit)} against {fq(m.limit, m.unit)} (spare {fq(m.spare, m.unit)})"


def _time(s: float | None) -> str:
    return "never" if s is None else fq(s, "s")
