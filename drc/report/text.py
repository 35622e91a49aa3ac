"""The terminal report: one entry per finding, a summary per board, a total.

Written with rich, through the Console the caller passes: rich decides
whether the console is a terminal and drops colour when it is not (a pipe,
a file, a CI log), so redirected output is plain text. Each finding shows
its severity, rule id, contact → receiver, the figure against its limit, the
message and the fix, laid out in a grid whose last column wraps, so it stays
readable at 80 columns. Suppressed findings are counted, not listed.
"""

from __future__ import annotations

from collections.abc import Iterable
from io import StringIO

from rich import box
from rich.console import Console
from rich.table import Table
from rich.text import Text

from drc.checks.findings import Finding
from drc.report.formats import RenderOptions
from drc.report.run_report import CAUTION_SHORT, BoardReport, RunReport
from drc.units import format_quantity

SEVERITY_STYLE = {"error": "bold red", "warning": "yellow", "note": "cyan"}
ARROW = "→"


def _plural(count: int, word: str) -> str:
    return f"{count} {word}{'' if count == 1 else 's'}"


def where_text(finding: Finding) -> str:
    """"SW1 → U1:1", or the contact, receiver or parts a part-level finding concerns."""
    if finding.contact and finding.receiver:
        return f"{finding.contact} {ARROW} {finding.receiver}"
    return finding.contact or finding.receiver or ", ".join(finding.parts) or "board"


def figure_text(finding: Finding) -> str:
    """The measured figure against its limit: "0.82 ms (limit 7.5 ms)"."""
    if finding.measured is None:
        return f"limit {finding.limit.text}" if finding.limit is not None else ""
    if finding.limit is None:
        return finding.measured.text
    return f"{finding.measured.text} (limit {finding.limit.text})"


def _finding_rows(findings: Iterable[Finding]) -> Table:
    grid = Table.grid(padding=(0, 1))
    grid.add_column(width=1)  # indent
    grid.add_column(no_wrap=True)  # severity
    grid.add_column(no_wrap=True, style="bold")  # rule id
    grid.add_column(overflow="fold")  # what, figures, message, fix: wraps
    for finding in findings:
        body = Text()
        body.append(where_text(finding), style="bold cyan")
        figures = figure_text(finding)
        if figures:
            body.append("  " + figures)
        body.append("\n" + finding.message)
        if finding.fix:
            body.append("\nfix: ", style="green")
            body.append(finding.fix)
        grid.add_row("", Text(finding.severity, style=SEVERITY_STYLE.get(finding.severity, "")),
                     Text(finding.rule), body)
    return grid


def board_summary(board: BoardReport) -> str:
    """"3 contacts, 4 stages (rc 2, direct 2): 2 errors, 1 warning, 0 notes, 1 suppressed"."""
    if board.error:
        return "not checked"
    stages = sum(board.stage_kinds.values()) if board.stage_kinds else len(board.stages)
    kinds = ", ".join(f"{kind} {count}" for kind, count in board.stage_kinds.items() if count)
    counts = board.counts()
    text = f"{_plural(board.contacts, 'contact')}, {_plural(stages, 'stage')}"
    text += f" ({kinds})" if kinds else ""
    text += (f": {_plural(counts['error'], 'error')}, {_plural(counts['warning'], 'warning')}, "
             f"{_plural(counts['note'], 'note')}")
    if counts["suppressed"]:
        text += f", {counts['suppressed']} suppressed"
    return text


def _shown_path(path: str) -> str:
    """A path relative to the working folder when it lies below it, else as given."""
    import os
    try:
        relative = os.path.relpath(path)
    except ValueError:  # another drive
        return path
    return path if relative.startswith("..") else relative


def _board_block(board: BoardReport, console: Console, quiet: bool) -> None:
    shown = [f for f in board.active() if not quiet or f.severity == "error"]
    if quiet and not shown and not board.error:
        return
    header = Text(board.path, style="bold")
    if board.config_path:
        header.append(f"  (config: {_shown_path(board.config_path)})", style="dim")
    console.print(header)
    if board.error:
        console.print(Text.assemble(("  error", "bold red"), f": cannot check: {board.error}"))
    if not quiet and board.inventory is not None:
        console.print(Text("  " + board.inventory.text(), style="dim"))
    if not quiet:
        for diagnostic in board.diagnostics:
            console.print(Text.assemble(("  warning", "yellow"), f": {diagnostic}"))
    if shown:
        console.print(_finding_rows(shown))
    if board.coverage is not None:
        line = board.coverage.text()
        if not quiet and board.coverage.loads:
            line += "; non-logic loads: " + "; ".join(
                f"{contact} drives {', '.join(loads)}" for contact, loads in board.coverage.loads)
        console.print(Text("  " + line, style="dim" if not board.coverage.not_checked else ""))
    console.print(Text("  " + board_summary(board), style="dim" if not board.active() else ""))


def total_line(run: RunReport) -> str:
    counts = run.counts()
    failing = ", ".join(_plural(counts[s], s) for s in ("error", "warning", "note"))
    text = f"{_plural(len(run.boards), 'board')}: {failing}"
    if counts["suppressed"]:
        text += f" ({counts['suppressed']} suppressed)"
    return text + f"; fail level: {run.fail_level}"


def render_text(run: RunReport, console: Console, *, quiet: bool = False) -> None:
    """Print the run to `console`; quiet shows only error findings and the summary."""
    for board in run.boards:
        _board_block(board, console, quiet)
    if not quiet:
        for note in run.waiver_notes:
            console.print(Text.assemble(("waiver", "yellow"), f": {note}"))
        if run.baseline is not None:
            base = run.baseline
            verb = "written" if base.written else "applied"
            console.print(f"baseline {base.path} {verb}: {base.matched} accepted, {base.new} new, "
                          f"{len(run.fixed)} fixed")
            for entry in run.fixed:
                who = f"{entry.contact} {ARROW} {entry.receiver}" if entry.contact and entry.receiver \
                    else entry.contact or entry.receiver or ", ".join(entry.parts)
                console.print(Text(f"  fixed: {entry.board} {entry.rule} {who}", style="green"))
    console.print(Text(total_line(run), style="bold"))
    coverage = run.coverage()
    if len(run.boards) > 1 or coverage.not_checked:
        console.print(Text(f"{coverage.text()} (all boards)", style="bold" if coverage.not_checked else ""))
    console.print(Text(CAUTION_SHORT, style="dim"))


def render_folder_summary(run: RunReport, console: Console) -> None:
    """A table of the boards of a multi-board run: contacts, stages, errors, warnings, worst margin."""
    table = Table(box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False, collapse_padding=True,
                  header_style="bold")
    table.add_column("board", overflow="fold")
    table.add_column("contacts", justify="right", no_wrap=True)
    table.add_column("stages", justify="right", no_wrap=True)
    table.add_column("errors", justify="right", no_wrap=True)
    table.add_column("warnings", justify="right", no_wrap=True)
    table.add_column("margin", justify="right", no_wrap=True, min_width=7)  # the worst DC level margin
    for board in run.boards:
        if board.error:
            table.add_row(board.path, "-", "-", Text("not checked", style="bold red"), "-", "-")
            continue
        counts = board.counts()
        margin = board.worst_margin_v()
        margin_text = Text(format_quantity(margin, "V") if margin is not None else "-",
                           style="red" if margin is not None and margin < 0 else "")
        table.add_row(board.path, str(board.contacts), str(len(board.stages)),
                      Text(str(counts["error"]), style="bold red" if counts["error"] else ""),
                      Text(str(counts["warning"]), style="yellow" if counts["warning"] else ""),
                      margin_text)
    console.print(table)


def print_report(run: RunReport, console: Console, *, quiet: bool = False) -> None:
    """The whole text report: every board, then the table of boards when there are several."""
    render_text(run, console, quiet=quiet)
    if len(run.boards) > 1:
        render_folder_summary(run, console)


class TextFormatter:
    """The "text" format of `drc check`: printed in colour to a terminal, plain elsewhere."""

    name = "text"

    def print_to(self, console: Console, run: RunReport, options: RenderOptions) -> None:
        print_report(run, console, quiet=options.quiet)

    def render(self, run: RunReport, options: RenderOptions) -> str:
        """The report without colour at `options.width`, lines stripped of rich's cell padding."""
        buffer = StringIO()
        console = Console(file=buffer, width=options.width, force_terminal=False, color_system=None,
                          highlight=False)
        print_report(run, console, quiet=options.quiet)
        return "".join(line.rstrip() + "\n" for line in buffer.getvalue().splitlines())
