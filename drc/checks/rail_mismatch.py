"""Rule rail-mismatch: a pull rail above what the receiver's input may see."""

from __future__ import annotations

from drc.analysis.results import StageResult
from drc.checks.common import contact_name, pull_resistors
from drc.checks.context import RuleContext, figure
from drc.checks.context import quantity_text as fq
from drc.checks.examples import netlist
from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc

DOC = RuleDoc(
    id="rail-mismatch",
    title="Pull rail above the receiver's absolute-maximum input voltage",
    severity="error",
    what=("Checks the highest steady voltage the receiver pin can see (the pull rail at its "
          "maximum) against the family's absolute-maximum input voltage at the receiver's supply "
          "(VCC + 0.5 V for families that are not input-tolerant)."),
    why=("Above VCC + 0.5 V the input's clamp diode conducts: the pull resistor feeds current into "
         "the receiver's supply, which can back-power a sleeping chip, latch it up, or exceed the "
         "clamp rating. 5 V-tolerant families (AHC, LVC, LVX) accept the higher rail."),
    how=("The highest pull rail, nominal, against the family's abs-max input at the receiver's "
         "nominal VCC (rules/families.toml); a rail that is the receiver's own supply moves with "
         "it, so tolerances cancel. The figure shown is the analysis's maximum input voltage "
         "(the pin held by its clamp diode at its supply plus a diode drop) and the largest steady "
         "clamp current, solved through every resistor between the rail and the pin, at worst "
         "case (rail maximum, supply minimum, resistors minimum)."),
    fix=("Tie the pull resistor to the receiver's own supply, or use a 5 V-tolerant family or a "
         "level shifter."),
    failing_example=("* SW1 pulled up to 5 V into a 74HC14 powered from 3.3 V\n"
                     "V1 v5 0 DC 5\nV2 vcc 0 DC 3.3\nR1 v5 in 8.2k\nSW1 in 0 TACTILE\n"
                     "XU1 in y1 0 y2 0 y3 0 y4 0 y5 0 y6 0 vcc 74HC14\n.end\n"),
    passing_example=netlist("SW1 pulled up to the receiver's own 3.3 V",
                            "V1 vcc 0 DC 3.3", "R1 vcc in 8.2k", "SW1 in 0 TACTILE"),
    figure="input up to", bound="max",
)


def check(result: StageResult, ctx: RuleContext):
    rx = result.receiver_electrical
    if rx is None:
        return
    rails = result.stage.circuit.rails
    if not rails:
        return
    # The rail decides: a passive network cannot lift the pin above its highest rail,
    # except by the pin's own leakage, which is not what this rule is about. Nominal
    # against nominal: a rail that is the receiver's own supply moves with its VCC.
    rail_max = max(r.volts * (1.0 + r.tolerance) for r in rails)
    if max(r.volts for r in rails) <= rx.abs_max_input_v:
        return
    seen = result.max_input_v if result.max_input_v is not None else rail_max
    pulls = pull_resistors(result)
    clamp = ""
    if result.clamp_current_a is not None and result.clamp_current_a > 0:
        clamp = f"; up to {fq(result.clamp_current_a, 'A')} flows into its clamp"
    elif pulls and not rx.tolerant:  # no clamp in the circuit (a hand-built stage): the pull resistor alone
        r = min(p.ohms * (1 - p.tol_minus) for p in pulls)
        clamp = f"; about {fq((seen - rx.abs_max_input_v) / r, 'A')} flows into its clamp"
    rail_text = ", ".join(f"{s.net} {fq(s.volts, 'V')}" for s in rails)
    yield ctx.stage_finding(
        result, parts=tuple(p.designator for p in pulls),
        measured=figure(seen, "V"), limit=figure(rx.abs_max_input_v, "V"),
        message=(f"{contact_name(result)}'s pull rail ({rail_text}) puts up to {fq(seen, 'V')} on "
                 f"{result.stage.receiver.ref} ({rx.family} at {fq(rx.vcc, 'V')}), over its "
                 f"{fq(rx.abs_max_input_v, 'V')} absolute maximum{clamp}"),
        fix=(f"tie the pull resistor to {result.stage.receiver.ref}'s own {fq(rx.vcc, 'V')} supply, "
             f"or use a 5 V-tolerant family or a level shifter"))


# Registered by a call, not a decorator: mutation testing (mutmut) leaves decorated
# functions alone, and the rule body is what its tests must pin down.
rule(DOC, kind="stage")(check)
