"""Rule leakage-headroom: a steady level, with worst leakage, barely clears the threshold."""

from __future__ import annotations

from drc.analysis.results import StageResult
from drc.checks.common import contact_name, is_schmitt, resistor_text
from drc.checks.context import RuleContext, figure
from drc.checks.context import quantity_text as fq
from drc.checks.examples import netlist
from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc

MARGIN = "leakage_headroom_margin"

DOC = RuleDoc(
    id="leakage-headroom",
    title="Steady input level too close to the threshold",
    severity="error",
    what=("In each contact state, checks the steady voltage at the receiver at its worst corner "
          "(resistor and rail tolerances, worst input leakage) against the level it must clear: "
          "VT+ max or VIH min for a high, VT- min or VIL max for a low, with a margin of a "
          "fraction of VCC. Includes TTL inputs whose IIL, flowing out of the pin, lifts a low "
          "level through a series or pull-down resistor."),
    why=("Input leakage grows with temperature and differs between parts; a high-value pull-up or "
         "a divider that looks fine nominally leaves a level that noise or a hot part turns "
         "into the wrong logic value. TTL's large IIL makes pull-downs above about 2 kΩ fail outright."),
    how=("DC nodal analysis with the leakage as a current source, at the corner nearest the "
         "threshold. Margin = worst level − required (high) or required − worst level (low), "
         "compared with `leakage_headroom_margin` × VCC, but never with more than half the room "
         "between the threshold and the rail the level heads for (VCC − required for a high, "
         "required − 0 V for a low): a TTL-level input whose VT- min is 0.5 V cannot keep 0.5 V "
         "of margin above 0 V, and an ideal low must pass."),
    fix=("Lower the pull or series resistance, remove a divider, or use a CMOS-input family "
         "instead of TTL when a resistor sits in the low path."),
    failing_example=netlist("A 22 kΩ bleeder divides the 6.8 kΩ pull-up's high level down to about 3.5 V",
                            "V1 vcc 0 DC 5", "R1 vcc in 6.8k", "R3 in 0 22k", "SW1 in 0 TACTILE"),
    passing_example=netlist("A 47 kΩ bleeder leaves the high level above 4 V",
                            "V1 vcc 0 DC 5", "R1 vcc in 6.8k", "R3 in 0 47k", "SW1 in 0 TACTILE"),
    limits=(MARGIN,),
    figure="margin", bound="min",
)


def check(result: StageResult, ctx: RuleContext):
    rx = result.receiver_electrical
    vcc = rx.vcc if rx is not None else result.stage.receiver.supply_v
    for state, level in result.levels.items():
        if level.logic not in ("high", "low") or level.margin_v is None or level.required_v is None:
            continue
        room = vcc - level.required_v if level.logic == "high" else level.required_v
        needed = min(ctx.limit(MARGIN) * vcc, 0.5 * max(room, 0.0))
        if level.margin_v >= needed:
            continue
        if level.logic == "high":
            req = "VT+ max" if is_schmitt(result) else "VIH min"
            side = "above"
        else:
            req = "VT- min" if is_schmitt(result) else "VIL max"
            side = "below"
        cause = _cause(result, level.logic)
        verdict = (f"{fq(level.margin_v, 'V')} {side}" if level.margin_v >= 0
                   else f"{fq(-level.margin_v, 'V')} on the wrong side of")
        resistors = [r for r in result.stage.circuit.resistors if r.role in ("pull", "series", "other")]
        yield ctx.stage_finding(
            result, parts=tuple(r.designator for r in resistors),
            measured=figure(level.margin_v, "V"), limit=figure(needed, "V"),
            message=(f"with {contact_name(result)} {state}, {result.stage.receiver.ref} sits at "
                     f"{fq(level.worst_v, 'V')} at worst{cause}, {verdict} {req} "
                     f"{fq(level.required_v, 'V')}; the margin needed is {fq(needed, 'V')}"),
            fix=_fix(result, level.logic, resistors))


# Registered by a call, not a decorator: mutation testing (mutmut) leaves decorated
# functions alone, and the rule body is what its tests must pin down.
rule(DOC, kind="stage")(check)


def _cause(result: StageResult, logic: str) -> str:
    rx = result.receiver_electrical
    if rx is None:
        return ""
    if logic == "low" and rx.leak_low_a[0] < 0:
        return f" (IIL {fq(-rx.leak_low_a[0], 'A')} out of the pin)"
    if logic == "high":
        worst = max(abs(rx.leak_high_a[0]), abs(rx.leak_high_a[1]))
        return f" (leakage up to {fq(worst, 'A')})" if worst else ""
    return ""


def _fix(result: StageResult, logic: str, resistors) -> str:
    rx = result.receiver_electrical
    names = ", ".join(resistor_text(r) for r in resistors) or "the pull network"
    if logic == "low" and rx is not None and rx.leak_low_a[0] < 0:
        return (f"lower the resistance in the low path ({names}) so IIL × R stays well under the "
                f"low threshold, or use a CMOS-input family")
    return f"lower the pull or series resistance or remove the divider ({names})"
