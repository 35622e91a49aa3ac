"""Rule slow-edge: an RC edge crawls through a plain (non-Schmitt) input's threshold."""

from __future__ import annotations

from drc.analysis.results import EDGES, StageResult
from drc.checks.common import DEBOUNCED_ELSEWHERE, contact_name, is_schmitt, timing_parts
from drc.checks.context import RuleContext, figure
from drc.checks.context import quantity_text as fq
from drc.checks.examples import debounced_stage, netlist
from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc

UNKNOWN = "transition_limit_unknown"

DOC = RuleDoc(
    id="slow-edge",
    title="Slow RC edge into a plain (non-Schmitt) input",
    severity="error",
    what=("For stages with a capacitor feeding a plain input, checks the edge's rate at the "
          "threshold (s/V, slowest corner) against the family's input transition limit."),
    why=("A plain CMOS input held near its threshold conducts through both output transistors "
         "and amplifies noise: the output oscillates, a clocked part counts several edges, and "
         "supply current spikes. An RC slow enough to debounce a contact is thousands of times "
         "slower than any plain input's limit, so RC debouncing needs a Schmitt-trigger input."),
    how=("1 / |dV/dt| at the threshold crossing of each edge, slowest corner: for a single RC, "
         "τ/(Vf − Vth). Compared with the family's transition limit in s/V (for HC: the 10-90 % "
         "rise-time limit divided by 0.8 × VCC), from rules/families.toml. Where the family records "
         "no limit (LVX, 4000B, LVCMOS, comparators ...), an edge within the strictest recorded "
         "limit (transition_limit_unknown, 8 ns/V) passes any family's; a slower one could not be "
         "checked, which is a finding too, with the edge's rate and no limit, never a silent pass."),
    fix=("Feed the RC into a Schmitt-trigger input (a '14 inverter, a '132 NAND, an MCU pin with "
         "Schmitt input) or add one between the filter and this input; no RC value passes a plain input."),
    failing_example=netlist("A relay contact (5 ms bounce) through an RC filter into a plain 74HC04 input",
                            *debounced_stage(contact="RELAY"), part="74HC04"),
    passing_example=netlist("The same filter into a 74HC14 Schmitt input",
                            *debounced_stage(contact="RELAY")),
    figure="edge rate", bound="max",
    limits=(UNKNOWN,),
)


def check(result: StageResult, ctx: RuleContext):
    stage = result.stage
    rx = result.receiver_electrical
    if (rx is None or is_schmitt(result) or not stage.circuit.capacitors
            or stage.kind in DEBOUNCED_ELSEWHERE):
        return
    limit = rx.transition_limit_s_per_v
    for name in EDGES:
        edge = result.edges.get(name)
        if edge is None:
            continue
        slope = edge.slowest_slope_v_per_s or edge.slope_v_per_s
        if not slope or slope <= 0:
            continue
        rate = 1.0 / slope
        if limit is None and rate > ctx.limit(UNKNOWN):  # fail closed: not judged is not passed
            yield ctx.stage_finding(
                result, parts=timing_parts(result, name), measured=figure(rate, "s/V"), limit=None,
                message=(f"{name} edge from {contact_name(result)} crosses the threshold of plain input "
                         f"{stage.receiver.ref} ({rx.family}) at {fq(rate, 's/V')}; no input transition "
                         f"limit is known for {rx.family}, so the edge could not be checked"),
                fix=(f"feed {stage.receiver.ref} from a Schmitt-trigger input after the RC, or waive the "
                     f"finding with the part's own transition limit as the reason"))
            continue
        if limit is None or rate <= limit:
            continue
        yield ctx.stage_finding(
            result, parts=timing_parts(result, name),
            measured=figure(rate, "s/V"), limit=figure(limit, "s/V"),
            message=(f"{name} edge from {contact_name(result)} crosses the threshold of plain input "
                     f"{stage.receiver.ref} ({rx.family}) at {fq(rate, 's/V')}, "
                     f"{_times(rate / limit)} the {fq(limit, 's/V')} transition limit"),
            fix=(f"feed {stage.receiver.ref} from a Schmitt-trigger input (e.g. the family's '14) "
                 f"after the RC; no RC value passes a plain {rx.family} input"))


# Registered by a call, not a decorator: mutation testing (mutmut) leaves decorated
# functions alone, and the rule body is what its tests must pin down.
rule(DOC, kind="stage")(check)


def _times(ratio: float) -> str:
    """"7,470×" rather than "7.47e+03×": a reviewer reads the size at a glance."""
    return f"{ratio:,.0f}×" if ratio >= 100 else f"{ratio:.3g}×"
