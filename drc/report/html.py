"""The HTML review report: one self-contained page for a run (a section per board).

For each board: the summary, a table of every input path with both edges'
fastest, nominal and slowest times, the DC margins and a status; every finding
with its figure, limit and fix; and per stage a waveform plot of both edges
(drc.report.plots: the analysis' own trajectories against the thresholds and
the bounce window). The page carries its CSS inline and the plots as inline
SVG: no script, font or style is fetched, so it opens offline, prints, and
reads at a phone's width. Like every report it computes nothing new: the
figures come from the RunReport, the curves from the analysis. jinja2
(autoescaping on) and matplotlib are imported only when a page is rendered.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from drc import __version__
from drc.analysis.results import EDGES, StageResult
from drc.checks.findings import SEVERITY_RANK, Finding
from drc.report.formats import BoardOrder, RenderOptions
from drc.report.layout import path_name
from drc.report.run_report import NOT_APPLICABLE, BoardReport, BoardStatus, RunReport, times_apply
from drc.report.text import LEGEND, board_summary, figure_text, plural, shown_path, sorted_boards, where_text
from drc.units import format_quantity

TEMPLATES = Path(__file__).with_name("templates")
_CORNERS = ("fastest", "nominal", "slowest")


@dataclass(frozen=True, slots=True)
class _Cell:
    text: str
    css: str = ""


def _time(value: float | None, applies: bool = True) -> _Cell:
    if value is None:
        return _Cell("never", "bad")
    if not applies:  # no capacitor: the input follows the contact, a "0 s" would mislead
        return _Cell(NOT_APPLICABLE, "muted")
    return _Cell(format_quantity(value, "s"))


def _margin(result: StageResult, state: str) -> _Cell:
    level = result.levels.get(state)
    if level is None or level.logic == "undefined":
        return _Cell("floating", "bad")
    if level.margin_v is None:
        return _Cell("n/a")
    return _Cell(f"{level.logic} {format_quantity(level.margin_v, 'V')}", "bad" if level.margin_v < 0 else "")


def stage_anchor(board_index: int, stage_index: int) -> str:
    return f"b{board_index}-s{stage_index}"


def _stage_key(contact: str | None, receiver: str | None) -> tuple[str, str]:
    return contact or "", receiver or ""


def _status(findings: list[Finding]) -> str:
    """Worst active severity, "waived" when only suppressed findings remain, else "pass"."""
    active = [f for f in findings if f.suppression is None]
    if active:
        return max(active, key=lambda f: SEVERITY_RANK.get(f.severity, 0)).severity
    return "waived" if findings else "pass"


def _edge_cells(result: StageResult, edge: str) -> list[_Cell]:
    er = result.edges.get(edge)
    if er is None:
        return [_Cell("—", "muted")] * 3
    applies = times_apply(result)
    return [_time(getattr(er, f"{corner}_s"), applies) for corner in _CORNERS]


def _receiver_text(result: StageResult) -> str:
    rec = result.stage.receiver
    return f"{rec.family} {'Schmitt' if rec.schmitt else 'plain'}"


def _levels(result: StageResult) -> list[dict]:
    rows = []
    for state in ("released", "pressed"):
        level = result.levels.get(state)
        if level is None:
            continue
        rows.append({
            "state": state, "logic": level.logic,
            "nominal": format_quantity(level.nominal_v, "V") if level.nominal_v is not None else "—",
            "worst": format_quantity(level.worst_v, "V") if level.worst_v is not None else "—",
            "required": format_quantity(level.required_v, "V") if level.required_v is not None else "—",
            "margin": _margin(result, state),
        })
    return rows


def _thresholds_text(result: StageResult) -> str:
    rx = result.receiver_electrical
    if rx is None:
        return ""
    if rx.schmitt:
        return (f"VT+ {format_quantity(rx.rising_threshold[0], 'V')}–{format_quantity(rx.rising_threshold[2], 'V')}"
                f" (typ {format_quantity(rx.rising_threshold[1], 'V')}), VT- "
                f"{format_quantity(rx.falling_threshold[0], 'V')}–{format_quantity(rx.falling_threshold[2], 'V')}"
                f" (typ {format_quantity(rx.falling_threshold[1], 'V')}) at VCC {format_quantity(rx.vcc, 'V')}")
    return (f"VIH {format_quantity(rx.vih_min, 'V')}, VIL {format_quantity(rx.vil_max, 'V')} at VCC "
            f"{format_quantity(rx.vcc, 'V')}")


def _stage_view(result: StageResult, anchor: str, findings: list[Finding], svg_cache: dict) -> dict:
    from drc.report.plots import crossing_summary, stage_plot_data, stage_plot_svg

    stage = result.stage
    plot = stage_plot_data(result)
    svg = ""
    if plot.drawable():
        # Identical stages (a row of equal key cells) draw the same picture: render it once.
        key = (plot.thresholds, plot.bounce_s, plot.receiver, tuple(
            (e.edge, e.note, tuple((c.corner, c.crossing_s, c.threshold_v, c.t.tobytes(), c.v.tobytes())
                                   for c in e.curves)) for e in plot.edges))
        cached = svg_cache.get(key)
        if cached is None:
            svg = stage_plot_svg(plot, anchor)
            svg_cache[key] = (anchor, svg)
        else:
            # Same drawing, own ids: prefix swap keeps ids unique in the page.
            svg = cached[1].replace(f"{cached[0]}-", f"{anchor}-")
    edge_notes = [e.note for e in plot.edges if e.note]
    crossings = crossing_summary(plot)
    return {
        "anchor": anchor, "name": path_name(stage.contact.designator, stage.receiver.ref), "kind": stage.kind,
        "contact": stage.contact.designator, "contact_class": stage.contact.contact_class,
        "form": stage.contact.form, "bounce": format_quantity(stage.contact.bounce_s, "s"),
        "receiver": stage.receiver.ref, "part_type": stage.receiver.part_type,
        "receiver_text": _receiver_text(result), "function": stage.receiver.function,
        "edge_sensitive": stage.receiver.edge_sensitive,
        "parts": ", ".join(stage.parts) or "none", "levels": _levels(result),
        "thresholds": _thresholds_text(result),
        "svg": svg, "plot_note": plot.note, "edge_notes": edge_notes,
        "crossings": [(edge, crossings.get(edge, [])) for edge in EDGES],
        "notes": list(result.notes), "status": _status(findings), "times_apply": times_apply(result),
        "findings": len([f for f in findings if f.suppression is None]),
    }


def _finding_view(finding: Finding, run: RunReport, anchors: dict) -> dict:
    doc = run.rule_doc(finding.rule)
    measured = finding.measured.text if finding.measured else (doc.unmeasured if doc else "") or None
    return {
        "severity": finding.severity, "rule": finding.rule, "title": doc.title if doc else "",
        "where": where_text(finding), "figures": figure_text(finding, run),
        "label": doc.figure if doc else "", "bound": doc.bound if doc else "limit",
        "measured": measured, "limit": finding.limit.text if finding.limit else None,
        "message": finding.message, "fix": finding.fix,
        "location": str(finding.location) if finding.location else "",
        "anchor": anchors.get(_stage_key(finding.contact, finding.receiver)),
        "suppression": finding.suppression, "justification": finding.justification,
    }


def _board_view(board: BoardReport, index: int, run: RunReport, svg_cache: dict) -> dict:
    by_stage: dict[tuple[str, str], list[Finding]] = {}
    for f in board.findings:
        by_stage.setdefault(_stage_key(f.contact, f.receiver), []).append(f)
    anchors: dict[tuple[str, str], str] = {}
    stages = []
    rows = []
    for j, result in enumerate(board.stages):
        stage = result.stage
        key = _stage_key(stage.contact.designator, stage.receiver.ref)
        anchor = stage_anchor(index, j)
        anchors.setdefault(key, anchor)
        found = by_stage.get(key, [])
        view = _stage_view(result, anchor, found, svg_cache)
        stages.append(view)
        rows.append({
            "anchor": anchor, "contact": stage.contact.designator, "contact_class": stage.contact.contact_class,
            "bounce": view["bounce"], "receiver": stage.receiver.ref, "part_type": stage.receiver.part_type,
            "family": _receiver_text(result), "kind": stage.kind,
            "press": _edge_cells(result, "press"), "release": _edge_cells(result, "release"),
            "released": _margin(result, "released"), "pressed": _margin(result, "pressed"),
            "status": view["status"],
        })
    margin = board.worst_margin_v()
    active = [_finding_view(f, run, anchors) for f in board.active()]
    suppressed = [_finding_view(f, run, anchors) for f in board.findings if f.suppression is not None]
    return {
        "index": index, "id": f"board-{index}", "path": board.path,
        "config": shown_path(board.config_path) if board.config_path else None,  # as the text report
        "error": board.error, "diagnostics": list(board.diagnostics),
        "notes": list(board.notes), "summary": board_summary(board),
        "counts": board.counts(), "worst_margin": _Cell(format_quantity(margin, "V"), "bad" if margin < 0 else "")
        if margin is not None else _Cell("—"),
        "rows": rows, "stages": stages, "findings": active, "suppressed": suppressed,
        "coverage": board.coverage.text_with_loads() if board.coverage else None,
        "coverage_bad": bool(board.coverage and board.coverage.not_checked),
    }



def _environment():
    import jinja2  # lazy: only the HTML format needs it

    return jinja2.Environment(loader=jinja2.FileSystemLoader(str(TEMPLATES)), autoescape=True,
                              trim_blocks=True, lstrip_blocks=True, undefined=jinja2.StrictUndefined)


def _archive_view(run: RunReport, order: list[BoardReport]) -> dict:
    """The table of boards of a multi-board run, in the text report's order, with totals."""
    rows = []
    for index, board in enumerate(order):
        status = board.status()
        read = status not in (BoardStatus.NOT_READ, BoardStatus.NO_PARTS)
        counts = board.counts()
        margin = board.worst_margin_v()
        rows.append({
            "id": f"board-{index}", "path": board.path, "status": str(status),
            "status_css": _STATUS_CSS[status], "attention": board.needs_attention(), "read": read,
            "contacts": board.contacts, "unchecked": board.contacts_not_checked(), "stages": len(board.stages),
            "errors": counts["error"], "warnings": counts["warning"], "notes": counts["note"],
            "margin": _Cell(format_quantity(margin, "V"), "bad" if margin < 0 else "") if margin is not None
            else _Cell("—", "muted")})
    margins = [m for m in (b.worst_margin_v() for b in run.boards) if m is not None]
    counts = run.counts()
    total = {"boards": plural(len(run.boards), "board"), "contacts": sum(b.contacts for b in run.boards),
             "unchecked": sum(b.contacts_not_checked() for b in run.boards),
             "stages": sum(len(b.stages) for b in run.boards), "errors": counts["error"],
             "warnings": counts["warning"], "notes": counts["note"],
             "attention": sum(1 for b in run.boards if b.needs_attention()),
             "margin": format_quantity(min(margins), "V") if margins else "—"}
    return {"rows": rows, "total": total, "legend": LEGEND.removeprefix("! ")}


_STATUS_CSS = {BoardStatus.NOT_READ: "sev-error", BoardStatus.NO_PARTS: "sev-error",
               BoardStatus.NO_CONTACTS: "sev-warning", BoardStatus.ERRORS: "sev-error",
               BoardStatus.WARNINGS: "sev-warning", BoardStatus.NOTES: "sev-note", BoardStatus.CLEAN: "sev-pass"}


def render_html(run: RunReport, sort: BoardOrder = BoardOrder.WORST) -> str:
    """The whole run as one self-contained HTML document (boards in `sort` order)."""
    from markupsafe import Markup

    from drc.report.text import total_line

    env = _environment()
    svg_cache: dict = {}
    order = sorted_boards(run, sort)
    boards = [_board_view(b, i, run, svg_cache) for i, b in enumerate(order)]
    for board in boards:
        for stage in board["stages"]:
            stage["svg"] = Markup(stage["svg"])  # our own matplotlib output, ids already scoped
    css = (TEMPLATES / "report.css").read_text(encoding="utf-8")
    counts = run.counts()
    title = boards[0]["path"] if len(boards) == 1 else f"{len(boards)} boards"
    baseline = None
    if run.baseline is not None:
        b = run.baseline
        baseline = {"path": b.path, "verb": "written" if b.written else "applied", "matched": b.matched,
                    "new": b.new, "fixed": len(run.fixed), "waived": len(run.baseline_waived)}
    return env.get_template("report.html.j2").render(
        title=title, version=__version__, css=Markup(css), boards=boards, counts=counts,
        caution=run.caution, fail_level=run.fail_level, waiver_notes=list(run.waiver_notes),
        baseline=baseline, edges=EDGES, corners=_CORNERS, total_line=total_line(run),
        archive=_archive_view(run, order) if len(order) > 1 else None,
    )


class HtmlFormatter:
    """The "html" format of `drc check`: one self-contained review page."""

    name = "html"

    def render(self, run: RunReport, options: RenderOptions) -> str:
        return render_html(run, options.sort)


__all__ = ["HtmlFormatter", "render_html", "stage_anchor"]
