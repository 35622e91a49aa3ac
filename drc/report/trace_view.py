"""`drc trace`: one contact's or receiver's stages, laid out for a person.

Shows the path (parts with values and roles), the stage kind, steady levels
with their Thevenin equivalents and margins, and per edge the thresholds and
times at the nominal, fastest and slowest corners. Formats; never computes.
"""

from __future__ import annotations

from rich import box
from rich.table import Table
from rich.text import Text

from drc.board.signal_graph import signal_path
from drc.report.layout import ARROW, Line, path_name, plain, print_lines
from drc.report.run_report import NOT_APPLICABLE, times_apply
from drc.units import format_part_value
from drc.units import format_quantity as fq


def _t(seconds: float | None, applies: bool = True) -> str:
    if seconds is None:
        return "never"
    return fq(seconds, "s") if applies else NOT_APPLICABLE


def _v(volts: float | None) -> str:
    return "-" if volts is None else fq(volts, "V")


# Who takes care of the bounce on a stage without a capacitor.
_WHO_DEBOUNCES = {"firmware": "the firmware's debounce handles the bounce",
                  "latch": "the latch keeps the first edge of each throw",
                  "dedicated": "the debouncing part handles the bounce"}
_UNFILTERED = "every bounce reaches it"


def _parts_table(stage) -> Table:
    table = Table(box=box.SIMPLE_HEAD, show_edge=False, header_style="bold", title_justify="left")
    for column in ("part", "value", "tolerance", "between", "role"):
        table.add_column(column, no_wrap=column in ("part", "value", "tolerance"))
    c = stage.circuit
    for r in c.resistors:
        table.add_row(r.designator, format_part_value(r.ohms, "Ω"), f"-{r.tol_minus:.0%}/+{r.tol_plus:.0%}",
                      f"{r.a} – {r.b}", r.role)
    for cap in c.capacitors:
        table.add_row(cap.designator, format_part_value(cap.farads, "F"), f"-{cap.tol_minus:.0%}/+{cap.tol_plus:.0%}",
                      f"{cap.a} – {cap.b}", "capacitor")
    for d in c.diodes:
        table.add_row(d.designator, f"Vf {fq(d.forward_v, 'V')}", "", f"{d.anode} {ARROW} {d.cathode}", "diode")
    for t in c.throws:
        table.add_row(stage.contact.designator, fq(t.closed_ohms, "Ω"), "", f"{t.a} – {t.b}",
                      f"closed when {t.closed_when}")
    for s in c.rails:
        table.add_row(f"rail {s.net}", fq(s.volts, "V"), f"±{s.tolerance:.0%}", "", "supply")
    return table


def _levels_table(result) -> Table:
    table = Table(box=box.SIMPLE_HEAD, show_edge=False, header_style="bold")
    for column in ("state", "reads", "nominal", "worst", "must clear", "margin", "Thevenin"):
        table.add_column(column, no_wrap=column != "Thevenin")
    for state, level in result.levels.items():
        thevenin = (f"{_v(level.thevenin_v)} via {fq(level.thevenin_ohms, 'Ω')}"
                    if level.thevenin_ohms is not None else "-")
        margin = Text(_v(level.margin_v), style="red" if (level.margin_v or 0) < 0 else "")
        table.add_row(state, level.logic, _v(level.nominal_v), _v(level.worst_v), _v(level.required_v),
                      margin, thevenin)
    return table


def _edges_table(result) -> Table:
    table = Table(box=box.SIMPLE_HEAD, show_edge=False, header_style="bold")
    for column in ("edge", "direction", "threshold (nom / fast / slow)", "nominal", "fastest", "slowest"):
        table.add_column(column, no_wrap=True)
    applies = times_apply(result)
    for name, edge in result.edges.items():
        thresholds = f"{_v(edge.threshold_v)} / {_v(edge.threshold_fastest_v)} / {_v(edge.threshold_slowest_v)}"
        table.add_row(name, edge.direction, thresholds, _t(edge.nominal_s, applies),
                      _t(edge.fastest_s, applies), _t(edge.slowest_s, applies))
    return table


def print_unchecked(console, items, outcomes) -> None:
    """What `drc trace` shows of a contact with inputs it could not check, or loads only."""
    for index, item in enumerate(items):
        if index:
            console.print()
        target = f" {ARROW} {item.receiver}" if item.receiver else ""
        # A heading line like a stage's (a rule would span a pipe's unbounded width).
        lines = [plain(f"{item.contact.designator}{target}: not checked", "bold"),
                 Line((("reason: ", ""), (str(item.reason), "bold"))), plain(item.detail, hang=2)]
        if item.nets:
            lines.append(plain(f"nets: {', '.join(item.nets)}", hang=2))
        print_lines(console, lines)
    print_lines(console, [plain(f"{outcome.contact} drives loads that are not logic inputs: "
                                f"{', '.join(outcome.loads)}", hang=2) for outcome in outcomes if outcome.loads])


def _header_lines(result, check) -> list[Line]:
    """The stage, its contact and receiver, nets and signal path: prose, phrase-wrapped."""
    stage = result.stage
    contact, receiver = stage.contact, stage.receiver
    kind = "Schmitt" if receiver.schmitt else "plain"
    extra = ", edge-sensitive" if receiver.edge_sensitive else ""
    part_type = receiver.part_type
    if part_type[:1].isdigit() and not receiver.family.startswith("4000"):
        part_type = "'" + part_type  # the 74-series function number: '14, '74
    lines = [plain(path_name(contact.designator, receiver.ref), "bold"),
             Line((("stage: ", ""), (stage.kind, "bold"), (f"   parts: {', '.join(stage.parts) or 'none'}", "")),
                  hang=2),
             plain(f"contact {contact.designator}: {contact.contact_class}, {contact.form}, bounce "
                   f"{fq(contact.bounce_s, 's')} ({contact.location})", hang=2),
             plain(f"receiver {receiver.ref}: {part_type} {receiver.function} input, "
                   f"{receiver.family} {kind}{extra}, VCC {fq(receiver.supply_v, 'V')}", hang=2)]
    part = check.board.parts.get(receiver.part.casefold()) if check is not None else None
    if part is not None and part.resolution:
        lines.append(plain(f"part {part.designator}: {part.resolution}", hang=2))
    if receiver.threshold_note:
        lines.append(plain(f"thresholds: {receiver.threshold_note}", hang=2))
    if receiver.firmware_debounce_s:
        lines.append(plain(f"firmware debounce: {fq(receiver.firmware_debounce_s, 's')}"))
    lines.append(plain(f"nets: {', '.join(stage.nets)}", hang=2))
    path = signal_path(stage)
    if path:
        lines.append(plain(f"signal path: {contact.designator} ─ " + " ─ ".join(path) + f" ─ {receiver.ref}",
                           hang=2))
    return lines


def _footer_lines(result) -> list[Line]:
    """Currents, the thresholds used and the analysis' notes."""
    lines = []
    currents = []
    if result.pull_current_a is not None:
        currents.append(f"pull current while held {fq(result.pull_current_a, 'A')}")
    if result.contact_current_a is not None:
        currents.append(f"closed-contact current {fq(result.contact_current_a, 'A')} (min)")
    if result.surge_peak_a is not None:
        currents.append(f"closing surge {fq(result.surge_peak_a, 'A')} (peak)")
    if currents:
        lines.append(plain("; ".join(currents), hang=2))
    rx = result.receiver_electrical
    if rx is not None:
        lines.append(plain(f"thresholds used: rising {_v(rx.rising_threshold[0])}–{_v(rx.rising_threshold[2])}, "
                           f"falling {_v(rx.falling_threshold[0])}–{_v(rx.falling_threshold[2])}, "
                           f"VIH {_v(rx.vih_min)}, VIL {_v(rx.vil_max)}", hang=2))
    lines.extend(plain(f"note: {note}", "dim", hang=6) for note in result.notes)
    return lines


def print_trace(console, check, results) -> None:
    """Each stage of the traced contact or receiver: prose wrapped between phrases on a
    terminal (whole lines on a pipe), tables whose value cells never wrap."""
    for index, result in enumerate(results):
        if index:
            console.print()
        print_lines(console, _header_lines(result, check))
        console.print(_parts_table(result.stage))
        console.print(_levels_table(result))
        if result.edges:
            console.print(_edges_table(result))
            if not times_apply(result):
                print_lines(console, [plain(
                    f"times {NOT_APPLICABLE}: no capacitor on the path, so the input follows the contact at "
                    f"once; {_WHO_DEBOUNCES.get(result.stage.kind, _UNFILTERED)}", "dim", hang=2)])
        print_lines(console, _footer_lines(result))
    print_lines(console, [plain("Guidance from models and typical data: verify on the real board.", "dim")])
