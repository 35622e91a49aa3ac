"""Hand-built records for the gate tests: stages, results, findings, rule docs.

The gate works against the data contracts only, so these fixtures are made
directly from the dataclasses, with figures chosen to be plausible, not
computed (the gate never computes them either).
"""

from __future__ import annotations

from drc.analysis.results import EdgeResult, LevelResult, StageResult
from drc.board.board import Contact, Receiver
from drc.board.stage import Capacitor, RailSource, Resistor, Stage, StageCircuit, Throw
from drc.checks.findings import Figure, Finding
from drc.checks.ruledoc import RuleDoc
from drc.errors import SourceLocation
from drc.report.run_report import BoardReport, Coverage, Inventory, RunReport

BOARD = "boards/panel.cir"

RULE_IDS = ("undebounced-input", "floating-input", "bounce-window", "slow-edge",
            "response-latency", "leakage-headroom", "pullup-waste", "resistance-range",
            "contact-wetting", "contact-surge", "rail-mismatch", "ambiguous-value")


def rule_doc(rule_id: str, severity: str = "error") -> RuleDoc:
    return RuleDoc(id=rule_id, title=f"{rule_id} title", severity=severity,
                   what=f"What {rule_id} checks.", why="Why it matters.", how="How it is computed.",
                   fix="How to fix it.", failing_example="* fails\n.end\n",
                   passing_example="* passes\n.end\n", limits=("some-limit",))


def rule_docs() -> list[RuleDoc]:
    severities = {"response-latency": "warning", "pullup-waste": "warning", "contact-wetting": "warning",
                  "contact-surge": "warning", "ambiguous-value": "warning", "resistance-range": "note"}
    return [rule_doc(r, severities.get(r, "error")) for r in RULE_IDS]


def contact(designator: str = "SW1", line: int = 3, board: str = BOARD) -> Contact:
    return Contact(designator=designator, contact_class="tactile", form="SPST-NO",
                   terminals=(f"{designator.lower()}_a", "0"), bounce_s=0.005, wetting_a=None,
                   rating_a=0.05, location=SourceLocation(board, line, 1), origin="element")


def receiver(part: str = "U1", pin: int = 1, board: str = BOARD, schmitt: bool = True) -> Receiver:
    return Receiver(part=part, pin=pin, net=f"in{pin}", part_type="14", family="HC",
                    schmitt=schmitt, edge_sensitive=False, function="data", supply_v=5.0,
                    supply_tolerance=0.05, location=SourceLocation(board, 9, 1))


def stage_result(contact_ref: str = "SW1", part: str = "U1", pin: int = 1, kind: str = "rc-schmitt",
                 board: str = BOARD, margin: float = 0.9) -> StageResult:
    c, r = contact(contact_ref, board=board), receiver(part, pin, board=board)
    circuit = StageCircuit(
        resistors=(Resistor("R1", "+5V", r.net, 10e3, role="pull"),),
        capacitors=(Capacitor("C1", r.net, "0", 100e-9),),
        diodes=(), rails=(RailSource("+5V", 5.0),),
        throws=(Throw(c.terminals[0], "0", "pressed"),), receiver_node=r.net)
    stage = Stage(contact=c, receiver=r, kind=kind, parts=("R1", "C1"), circuit=circuit,
                  nets=("+5V", r.net))
    edges = {
        "press": EdgeResult("press", "falling", 5.0, 0.0, 1.8, 2.0, 1.6, 0.00101, 0.00072, 0.00135,
                            3000.0, 2100.0, {"R1": 9500.0}, {"R1": 10500.0}),
        "release": EdgeResult("release", "rising", 0.0, 5.0, 2.9, 2.5, 3.15, 0.000892, 0.00061, None,
                              2200.0, None),
    }
    levels = {
        "released": LevelResult("released", "high", 4.99, 4.7, 3.8, margin, 4.99, 10e3),
        "pressed": LevelResult("pressed", "low", 0.0005, 0.001, 1.0, 0.999, 0.0005, 0.1),
    }
    return StageResult(stage=stage, levels=levels, edges=edges, pull_current_a=0.000525,
                       contact_current_a=0.000475, surge_peak_a=None, max_input_v=5.25)


def finding(rule: str = "bounce-window", contact_ref: str | None = "SW1",
            receiver_ref: str | None = "U1:1", parts: tuple[str, ...] = ("R1", "C1"),
            severity: str = "error", line: int = 5, board: str = BOARD,
            nets: tuple[str, ...] = ("in1",), related: tuple[int, ...] = (7,), **extra) -> Finding:
    return Finding(
        rule=rule, severity=severity, board=board, contact=contact_ref, receiver=receiver_ref,
        parts=parts, nets=nets,
        measured=Figure(0.00072, "s", "0.72 ms"), limit=Figure(0.0075, "s", "7.5 ms"),
        message=f"{rule} message for {contact_ref} at {receiver_ref}",
        fix="Raise R1 to 47 kΩ (E24) or C1 to 470 nF.",
        location=SourceLocation(board, line, 1) if line else None,
        related=tuple(SourceLocation(board, n, 1) for n in related), **extra)


def sample_findings(board: str = BOARD) -> list[Finding]:
    return [
        finding(board=board),
        finding("pullup-waste", "SW2", "U1:3", ("R2",), "warning", line=11, board=board),
        finding("resistance-range", "SW2", "U1:3", ("R2",), "note", line=11, board=board),
        finding("ambiguous-value", None, None, ("C4",), "warning", line=14, board=board, nets=(),
                related=()),
        finding("contact-wetting", "SW3", None, (), "warning", line=15, board=board, nets=(),
                related=()),
    ]


def board_report(board: str = BOARD, findings: list[Finding] | None = None, **kw) -> BoardReport:
    stages = kw.pop("stages", [stage_result(board=board), stage_result("SW2", "U1", 3, board=board)])
    return BoardReport(path=board, stages=stages,
                       findings=sample_findings(board) if findings is None else findings,
                       contacts=kw.pop("contacts", 3), stage_kinds=kw.pop("stage_kinds", {"rc-schmitt": 2}),
                       diagnostics=kw.pop("diagnostics", ["line 20: .tran directive ignored"]),
                       config_path=kw.pop("config_path", "drc.toml"), error=kw.pop("error", None),
                       inventory=kw.pop("inventory", None if kw.get("error") else Inventory(
                           parts={"R": 4, "C": 2, "S": 2, "V": 1, "X": 1}, nets=7,
                           rails={"vcc": 5.0}, instances=0)),
                       coverage=kw.pop("coverage", Coverage(checked=3)))


def run_report(boards: list[BoardReport] | None = None, **kw) -> RunReport:
    return RunReport(boards=boards if boards is not None else [board_report()], rule_docs=rule_docs(),
                     fail_level=kw.pop("fail_level", "error"), **kw)
