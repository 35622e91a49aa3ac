"""Rule shorted-pull: closing the contact shorts a rail, because its pull resistor reads as a short."""

from __future__ import annotations

from drc.analysis.results import StageResult
from drc.board.stage import Resistor
from drc.checks.common import contact_name, pull_resistors, resistor_text
from drc.checks.context import RuleContext, figure
from drc.checks.context import quantity_text as fq
from drc.checks.examples import debounced_stage, netlist
from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc

SHORT = "short_current"

DOC = RuleDoc(
    id="shorted-pull",
    title="Closing the contact shorts a rail",
    severity="error",
    what=("Checks the largest steady current through the closed contact, at the rail's maximum and "
          "the resistors' minimum, against `short_current`. A pull resistor that reads as a short "
          "(a value such as `1M`, which SPICE reads as 1 mΩ, a resistor of a few ohms, or a 0 Ω "
          "link fitted where the pull resistor belongs) makes the contact a switch across the "
          "supply. Reported once per contact, on its first stage."),
    why=("Every press then drives amperes through the contact and the supply: the regulator folds "
         "back or a trace burns, and the input never sees a clean level. A 0 Ω link is a wire, "
         "common on real boards; in the pull position it is a short, not a pull."),
    how=("DC nodal analysis of the closed state at the corner with the most current (rail maximum, "
         "resistors minimum, a closed contact at its contact resistance); compared with "
         "`short_current`. Below that figure a large held current is pullup-waste's finding."),
    fix="Fit the pull resistor meant (a few kilohms to tens of kilohms; `1Meg` for a megohm in SPICE).",
    failing_example=netlist("A 0 Ω link fitted in the pull-up position", *debounced_stage(r1="0")),
    passing_example=netlist("An 8.2 kΩ pull-up: under a milliampere while SW1 is held",
                            *debounced_stage()),
    limits=(SHORT,),
    figure="closed current", bound="limit",
)


def closed_current(result: StageResult) -> float | None:
    """The largest held current through the contact, or through a pull resistor where larger."""
    figures = [x for x in (result.closed_current_a, result.pull_current_a) if x is not None]
    return max(figures) if figures else None


def check(result: StageResult, ctx: RuleContext):
    stage = result.stage
    if not stage.lead:
        return
    limit = ctx.limit(SHORT)
    current = closed_current(result)
    if current is None or current < limit:
        return
    # The culprits: pull resistors that alone would pass the limit (Ohm's law from the rail
    # the resistor hangs from at its maximum, else the stage's highest), and 0 Ω links.
    rail_top = {r.net: r.volts * (1 + r.tolerance) for r in stage.circuit.rails}
    rail_max = max(rail_top.values(), default=0.0)
    pulls = tuple(r for r in pull_resistors(result)
                  if r.ohms * (1 - r.tol_minus) * limit <= _across(r, rail_top, rail_max))
    links = stage.links
    culprits = [resistor_text(r) for r in pulls] + [f"{name} (0 Ω link)" for name in links]
    what = ", ".join(culprits) if culprits else "the wiring"
    rails = ", ".join(r.net for r in stage.circuit.rails) or "a rail"
    yield ctx.stage_finding(
        result, parts=tuple(r.designator for r in pulls) + links,
        measured=figure(current, "A"), limit=figure(limit, "A"),
        message=(f"closing {contact_name(result)} draws {fq(current, 'A')} from {rails}: "
                 f"{what} reads as a short, not a pull"),
        fix=(f"fit the pull resistor meant in place of {what} (a few kΩ to tens of kΩ; SPICE "
             f"reads 1M as 1 mΩ, write 1Meg for a megohm)"))


def _across(r: Resistor, rail_top: dict[str, float], rail_max: float) -> float:
    """The most a closed contact can put across pull resistor `r`: its own supply rail's
    maximum where one end is one (a pull-up), else (a pull-down to ground, whose contact
    closes to some rail) the highest rail of the stage."""
    own = [rail_top[n] for n in (r.a, r.b) if rail_top.get(n, 0.0) > 0.0]
    return max(own) if own else rail_max


# Registered by a call, not a decorator: mutation testing (mutmut) leaves decorated
# functions alone, and the rule body is what its tests must pin down.
rule(DOC, kind="stage")(check)
