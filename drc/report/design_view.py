"""The words of `drc design`: the proposed parts, both edges' times and every margin.

`drc.design.forward` computes a `DesignResult`; this module only says it, the
verdict first, one line per figure: for the console, or as the comment lines
of the designed netlist (`drc design --netlist`), which must read back in
drc and in ngspice (the SPICE lines are the design's own product).
"""

from __future__ import annotations

from drc.design.forward import DesignResult, Margin
from drc.units import format_part_value as fp
from drc.units import format_quantity as fq

GUIDANCE = "Guidance from models and typical data: verify on the real board."


def verdict_line(result: DesignResult) -> str:
    """The answer first: "passes every rule at worst case", or why not."""
    return "passes every rule at worst case" if result.ok else f"NOT PASSING: {result.reason}"


def design_lines(result: DesignResult) -> list[str]:
    """A human summary, the verdict first: parts, edge times, margins."""
    out = [verdict_line(result),
           f"R1 ({'pull-up' if result.topology == 'pull-up' else 'pull-down'}) {fp(result.pull.ohms, 'Ω')}, "
           f"R2 (series) {fp(result.series_resistor.ohms, 'Ω')}, C1 {fp(result.capacitor.farads, 'F')}"]
    for e in result.edges:
        out.append(f"{e.edge}: nominal {_time(e.nominal_s)}, fastest {_time(e.fastest_s)}, "
                   f"slowest {_time(e.slowest_s)}")
    out.extend(margin_text(m) for m in result.margins)
    return out


def design_netlist(result: DesignResult) -> str:
    """The designed stage as a netlist that reads back (drc, ngspice): its title and
    verdict, the summary as whole comment lines, then the parts."""
    title, verdict, *body = result.netlist_fragment().splitlines()
    comments = [f"* {line}" for line in design_lines(result)[1:]] + [f"* {GUIDANCE}"]
    return "\n".join([title, verdict, *comments, *body, ".end"]) + "\n"


def margin_text(margin: Margin) -> str:
    """"press fastest vs bounce: 15.2 ms against 10 ms (spare 5.22 ms)", or "not reached"."""
    m = margin
    if m.value is None or m.spare is None:
        return f"{m.name}: not reached (limit {fq(m.limit, m.unit)})"
    spare = f"spare {fq(m.spare, m.unit)}" if m.spare >= 0 else f"short by {fq(-m.spare, m.unit)}"
    return f"{m.name}: {fq(m.value, m.unit)} against {fq(m.limit, m.unit)} ({spare})"


def _time(s: float | None) -> str:
    return "never" if s is None else fq(s, "s")
