"""Rule bounce-window: the contact's bounce can make the receiver switch more than once.

Two readings, and the finding names the one it reports:

- time to threshold (every RC stage): the edge must not reach the threshold
  before the contact stops bouncing, at the fastest corner;
- closure and opening (inputs with hysteresis: Schmitt): an edge that does
  reach it sooner still passes when, after its first crossing, the bouncing
  contact cannot take the capacitor back across the opposite threshold
  within the bounce time (drc.analysis.first_edge: a capacitor straight
  across the contact crosses at once by design). `drc simulate` injects the
  same closures and openings.

An edge fails only when both readings apply and fail; the finding then
reports the reading that comes nearer to passing (its fix is the smaller step).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from drc.analysis.results import EDGES, EdgeResult, StageResult
from drc.checks.common import RC_KINDS, contact_name, is_schmitt, threshold_name, timing_parts, timing_text
from drc.checks.context import RuleContext, figure
from drc.checks.context import quantity_text as fq
from drc.checks.examples import debounced_stage, netlist
from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc

if TYPE_CHECKING:
    from drc.analysis.first_edge import PullBack

MARGIN = "bounce_margin"
MIN_CLOSURE = "min_closure"
TIME_READING = "time-to-threshold reading"
CLOSURE_READING = "closure-and-opening reading"

DOC = RuleDoc(
    id="bounce-window",
    title="The contact's bounce can switch the receiver more than once",
    severity="error",
    what=("For RC stages (plain or Schmitt input), checks on both edges that the bounce cannot make "
          "the receiver switch more than once. Time-to-threshold reading: the time from the contact's "
          "first movement to the receiver's threshold, at the fastest tolerance corner, is at least the "
          "contact's bounce time × the margin. Closure-and-opening reading (Schmitt inputs only): an "
          "edge that crosses sooner, as a capacitor straight across the contact does at once by design, "
          "passes when after its first crossing the capacitor cannot get back across the opposite "
          "threshold within the bounce time × the margin. An edge fails when no reading passes it; the "
          "finding says which reading it reports. Latch, firmware and dedicated stages debounce "
          "elsewhere and are not checked here."),
    why=("If the filtered voltage crosses the threshold while the contact is still bouncing, the "
         "next bounce can pull it back across: the filter is there but does not filter. A Schmitt "
         "input switches back only at its other threshold, so a capacitor that crosses at the first "
         "touch is fine as long as the openings of the bounce cannot recharge it that far. Parts at "
         "their low tolerance and thresholds near the start make the real board faster than the "
         "nominal calculation."),
    how=("Time to threshold: t = R·C·ln((Vf − V0)/(Vf − Vth)) for one capacitor (exact multi-capacitor "
         "solution otherwise) at the fastest corner: R and C at their minimum, the threshold nearest the "
         "start (VT+ min rising, VT- max falling), the final value farthest. Closure and opening: the "
         "bounce alternates the edge's new state (a closure, on a press) and the state it bounces "
         "into (no throw closed); each new-state interval lasts at least "
         "`min_closure` (1 µs) and drives the capacitor with that path's own time constant "
         "(nanoseconds through a bare contact, the series RC otherwise). The pull back starts from the "
         "highest level such an interval can leave after crossing (the level after `min_closure`, or "
         "the crossing threshold itself when the path is slower) and, at the fastest corner over every "
         "vertex (the two thresholds at most VH min apart), must take at least bounce × margin "
         "(limit `bounce_margin`) to reach the opposite threshold. One capacitor without diodes is read in "
         "closed form over every vertex; diodes (from their .model card: the Shockley law) and several "
         "capacitors (each to a rail or ground; the receiver's own capacitor set at the threshold when "
         "the closure path is slow, a bound) on the exact trajectories, the fastest corner found by a "
         "sign search over the parameters."),
    fix=("Raise the series resistor or the capacitor (press edge), or the pull plus series "
         "resistance (release edge); on a Schmitt input with a capacitor across the contact, slow the "
         "recharge instead (a larger pull resistor or capacitor). Check latency afterwards. drc "
         "proposes standard values."),
    failing_example=netlist("10 ms tactile contact, 39 kΩ × 100 nF: both edges pass in about 1-2 ms",
                            *debounced_stage(c1="100n")),
    passing_example=netlist("The same stage with 1 µF: both edges take more than 10 ms",
                            *debounced_stage()),
    limits=(MARGIN, MIN_CLOSURE),
    figure="fastest crossing", bound="min",
)


def _timed(result: StageResult, ctx: RuleContext):
    """(edge, the time it must take) of each RC edge that reaches its threshold within the bounce."""
    stage = result.stage
    if stage.kind not in RC_KINDS:
        return
    needed = stage.contact.bounce_s * ctx.limit(MARGIN)
    for name in EDGES:
        edge = result.edges.get(name)
        if edge is not None and edge.fastest_s is not None and edge.fastest_s < needed:
            yield edge, needed


def prepare(results: list[StageResult], ctx: RuleContext) -> None:
    """The closure-and-opening readings of every edge the check will ask about, in one
    batch (drc.analysis.first_edge keeps them; the check reads them one by one)."""
    wanted = [(r.stage, r.receiver_electrical, edge.edge) for r in results
              if r.receiver_electrical is not None and is_schmitt(r) for edge, _ in _timed(r, ctx)]
    if wanted:
        pull_backs(wanted, ctx.limit(MIN_CLOSURE))


def pull_backs(wanted, min_closure_s: float) -> list[PullBack | None]:
    """drc.analysis.first_edge.pull_backs, imported when first used: the solver (numpy) is
    not needed to list the rules or to read cached results."""
    from drc.analysis import first_edge
    return first_edge.pull_backs(wanted, min_closure_s)


def passes_by_pull_back(back: PullBack | None, needed: float) -> bool:
    """Whether the closure-and-opening reading passes an edge: it applies, and the bounce
    never brings the input back or takes at least `needed` to."""
    return back is not None and (back.fastest_s is None or back.fastest_s >= needed)


def check(result: StageResult, ctx: RuleContext):
    from drc.analysis.first_edge import pull_back  # when used (see pull_backs)
    margin = ctx.limit(MARGIN)
    rx = result.receiver_electrical
    for edge, needed in _timed(result, ctx):
        back = (pull_back(result.stage, rx, edge.edge, ctx.limit(MIN_CLOSURE))
                if rx is not None and is_schmitt(result) else None)
        if passes_by_pull_back(back, needed):
            continue  # passes by the closure-and-opening reading
        if back is not None and back.fastest_s is not None and back.fastest_s > edge.fastest_s:
            yield _closure_finding(result, ctx, edge, back, needed, margin)
        else:
            yield _time_finding(result, ctx, edge, back, needed, margin)


# Registered by a call, not a decorator: mutation testing (mutmut) leaves decorated
# functions alone, and the rule body is what its tests must pin down.
rule(DOC, kind="stage", prepare=prepare)(check)


def _margin_text(margin: float) -> str:
    return f" × margin {margin:g}" if margin != 1.0 else ""


def _time_finding(result: StageResult, ctx: RuleContext, edge: EdgeResult, back: PullBack | None,
                  needed: float, margin: float):
    assert edge.fastest_s is not None
    name = edge.edge
    also = ""
    if back is not None and back.fastest_s is not None:
        also = (f"; nor does the closure-and-opening reading pass it: the bounce brings it back across "
                f"the other threshold in {fq(back.fastest_s, 's')}")
    return ctx.stage_finding(
        result, parts=timing_parts(result, name),
        measured=figure(edge.fastest_s, "s"), limit=figure(needed, "s"),
        message=(f"{name} edge reaches {threshold_name(result, edge)} "
                 f"{fq(edge.threshold_fastest_v, 'V')} in {fq(edge.fastest_s, 's')} at the "
                 f"fastest corner, under the {fq(result.stage.contact.bounce_s, 's')} bounce of "
                 f"{contact_name(result)}{_margin_text(margin)} ({TIME_READING}{also})"),
        fix=(f"slow the {name} edge to at least {fq(needed, 's')} at the fastest corner: raise "
             f"the resistance or capacitance of {timing_text(result, name)}"))


def _closure_finding(result: StageResult, ctx: RuleContext, edge: EdgeResult, back: PullBack,
                     needed: float, margin: float):
    assert edge.fastest_s is not None and back.fastest_s is not None
    name = edge.edge
    back_edge = "release" if name == "press" else "press"
    opposite = "VT+" if edge.direction == "falling" else "VT-"
    left = ("the crossing threshold itself" if back.at_threshold
            else f"{fq(back.left_v, 'V')} after a {fq(back.min_closure_s, 's')} closure")
    return ctx.stage_finding(
        result, parts=timing_parts(result, back_edge),
        measured=figure(back.fastest_s, "s"), limit=figure(needed, "s"),
        message=(f"{name} edge crosses {threshold_name(result, edge)} in {fq(edge.fastest_s, 's')} "
                 f"(a first-edge stage); from {left} the bounce takes it back across {opposite} "
                 f"{fq(back.opposite_v, 'V')} in {fq(back.fastest_s, 's')} at the fastest corner, under "
                 f"the {fq(result.stage.contact.bounce_s, 's')} bounce of {contact_name(result)}"
                 f"{_margin_text(margin)} ({CLOSURE_READING})"),
        fix=(f"slow the way back to at least {fq(needed, 's')} at the fastest corner: raise the "
             f"resistance or capacitance of {timing_text(result, back_edge)}, or slow the {name} edge "
             f"itself to {fq(needed, 's')}"))
