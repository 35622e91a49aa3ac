"""The text report of `drc check`: each board's findings, its summary, the run's total, the table of boards.

The report is built once as Lines (drc.report.layout) and written by one of
two writers: whole plain lines off a terminal (a pipe, a file, a CI log: no
width, no colour, a join of strings, as fast as the JSON writer), or in
colour on a terminal, wrapped to its width between phrases and never inside
a value, a designator or a path. A finding reads

    error   bounce-window     SW1 → U1:1  fastest crossing 0.72 ms (min 7.5 ms)
            press edge reaches VT- 1.6 V in 0.72 ms at the fastest corner, ...
            fix: raise R1 to 47 kΩ

with the figure named by its rule (RuleDoc.headline_figure). Suppressed
findings are counted, not listed. With several boards the report ends with
the archive view: every board, worst first, with its status and totals.
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import NamedTuple

from drc.checks.findings import Finding
from drc.errors import printable
from drc.report.formats import BoardOrder, RenderOptions
from drc.report.layout import ARROW, Line, plain, plain_text, print_lines
from drc.report.run_report import CAUTION_SHORT, BoardReport, BoardStatus, Coverage, RunReport
from drc.units import format_quantity

SEVERITY_STYLE = {"error": "bold red", "warning": "yellow", "note": "cyan"}
STATUS_STYLE = {BoardStatus.NOT_READ: "bold red", BoardStatus.NO_PARTS: "bold red",
                BoardStatus.NO_CONTACTS: "yellow", BoardStatus.ERRORS: "bold red",
                BoardStatus.WARNINGS: "yellow", BoardStatus.NOTES: "cyan", BoardStatus.CLEAN: "green"}
_SEVERITY_WIDTH = 8  # "warning" and a space
_BODY = 2 + _SEVERITY_WIDTH  # where a finding's message and fix start


def plural(count: int, word: str) -> str:
    return f"{count} {word}{'' if count == 1 else 's'}"


def where_text(finding: Finding) -> str:
    """"SW1 → U1:1", or the contact, receiver or parts a part-level finding concerns."""
    if finding.contact and finding.receiver:
        return f"{finding.contact} {ARROW} {finding.receiver}"
    return finding.contact or finding.receiver or ", ".join(finding.parts) or "board"


def figure_text(finding: Finding, run: RunReport | None = None) -> str:
    """The figure against its limit, named as its rule names it ("margin -3.7 V (min
    0.25 V)"); without the rule's words, "0.82 ms (limit 7.5 ms)"."""
    measured = finding.measured.text if finding.measured is not None else None
    limit = finding.limit.text if finding.limit is not None else None
    doc = run.rule_doc(finding.rule) if run is not None else None
    if doc is not None:
        return doc.headline_figure(measured, limit)
    if measured is None:
        return f"limit {limit}" if limit is not None else ""
    return measured if limit is None else f"{measured} (limit {limit})"


def board_summary(board: BoardReport) -> str:
    """"3 contacts, 4 stages (rc 2, direct 2): 2 errors, 1 warning, 0 notes, 1 suppressed"."""
    status = board.status()
    if status is BoardStatus.NOT_READ:
        return "not checked: the netlist could not be read"
    if status is BoardStatus.NO_PARTS:
        return "not checked: the netlist holds no parts (an empty or comments-only file)"
    stages = sum(board.stage_kinds.values()) if board.stage_kinds else len(board.stages)
    kinds = ", ".join(f"{kind} {count}" for kind, count in board.stage_kinds.items() if count)
    counts = board.counts()
    text = f"{plural(board.contacts, 'contact')}, {plural(stages, 'stage')}"
    text += f" ({kinds})" if kinds else ""
    text += (f": {plural(counts['error'], 'error')}, {plural(counts['warning'], 'warning')}, "
             f"{plural(counts['note'], 'note')}")
    if counts["suppressed"]:
        text += f", {counts['suppressed']} suppressed"
    if status is BoardStatus.NO_CONTACTS:
        text += "; no contacts found, so no input was checked"
    return text


def shown_path(path: str) -> str:
    """A path relative to the working folder when it lies below it, else as given."""
    import os
    try:
        relative = os.path.relpath(path)
    except ValueError:  # another drive
        return path
    return path if relative.startswith("..") else relative


def _finding_lines(finding: Finding, run: RunReport, rule_width: int) -> Iterator[Line]:
    severity = finding.severity
    head: list[tuple[str, str]] = [
        (f"{severity:<{_SEVERITY_WIDTH}}", SEVERITY_STYLE.get(severity, "")),
        (f"{finding.rule:<{rule_width}}  ", "bold"),
        (where_text(finding), "bold cyan")]
    figures = figure_text(finding, run)
    if figures:
        head.append(("  " + figures, ""))
    yield Line(tuple(head), 2, _SEVERITY_WIDTH)
    yield plain(finding.message, indent=_BODY)
    if finding.fix:
        yield Line((("fix: ", "green"), (finding.fix, "")), _BODY, 5)


def _error_lines(message: str) -> Iterator[Line]:
    """A bad-input message: its first line wraps; the source line and caret stay as they are."""
    first, *rest = message.rstrip("\n").split("\n")
    yield Line((("error", "bold red"), (f": cannot check: {first}", "")), 2, 4)
    for line in rest:
        yield plain(line, indent=2, wrap=False)


def board_lines(board: BoardReport, run: RunReport, quiet: bool) -> Iterator[Line]:
    shown = [f for f in board.active() if not quiet or f.severity == "error"]
    status = board.status()
    if quiet and not shown and status in (BoardStatus.WARNINGS, BoardStatus.NOTES, BoardStatus.CLEAN):
        return
    header: list[tuple[str, str]] = [(printable(board.path), "bold")]
    if board.config_path:
        header.append((f"  (config: {printable(shown_path(board.config_path))})", "dim"))
    yield Line(tuple(header), 0, 4)
    if board.error:
        yield from _error_lines(board.error)
    if not quiet and board.inventory is not None:
        yield plain(board.inventory.text(), "dim", indent=2, hang=2)
    if not quiet:
        for diagnostic in board.diagnostics:
            yield Line((("warning", "yellow"), (f": {diagnostic}", "")), 2, 4)
        for note in board.notes:
            yield Line((("note", "cyan"), (f": {note}", "")), 2, 4)
    rule_width = max((len(f.rule) for f in shown), default=0)
    for finding in shown:
        yield from _finding_lines(finding, run, rule_width)
    if board.coverage is not None:
        yield from _coverage_lines(board.coverage, quiet)
    quiet_summary = status in (BoardStatus.CLEAN, BoardStatus.NOTES) or not board.active()
    yield plain(board_summary(board), "dim" if quiet_summary else STATUS_STYLE[status], indent=2, hang=2)


def _coverage_lines(coverage: Coverage, quiet: bool) -> Iterator[Line]:
    """"contacts: 3 checked, 1 not checked; non-logic loads: SW9 drives lamp LP1" (dim when all checked)."""
    text = coverage.text() if quiet else coverage.text_with_loads()
    yield plain(text, "" if coverage.not_checked else "dim", indent=2, hang=2)


def total_line(run: RunReport) -> str:
    """"4 boards checked: 22 errors, 13 warnings, 10 notes; fail level error", naming
    the boards that were not read or held nothing to check."""
    statuses = [b.status() for b in run.boards]
    unchecked = [(BoardStatus.NOT_READ, "not read"), (BoardStatus.NO_PARTS, "with no parts"),
                 (BoardStatus.NO_CONTACTS, "with no contacts")]
    missing = [f"{statuses.count(status)} {words}" for status, words in unchecked if status in statuses]
    checked = len(statuses) - sum(statuses.count(status) for status, _ in unchecked)
    counts = run.counts()
    findings = ", ".join(plural(counts[s], s) for s in ("error", "warning", "note"))
    if missing:
        text = f"{plural(len(statuses), 'board')}, {checked} checked, {', '.join(missing)}: {findings}"
    else:
        text = f"{plural(len(statuses), 'board')} checked: {findings}"
    if counts["suppressed"]:
        text += f" ({counts['suppressed']} suppressed)"
    return text + f"; fail level {run.fail_level}"


def baseline_lines(run: RunReport) -> Iterator[Line]:
    base = run.baseline
    if base is None:
        return
    if base.written:
        yield plain(f"baseline {base.path} written: {plural(base.new, 'finding')} recorded")
        return
    waived = f", {len(run.baseline_waived)} now waived" if run.baseline_waived else ""
    yield plain(f"baseline {base.path} applied: {base.matched} accepted, {base.new} new{waived}, "
                f"{len(run.fixed)} fixed", hang=2)
    for state, entries, style in (("waived", run.baseline_waived, "yellow"), ("fixed", run.fixed, "green")):
        for entry in entries:
            who = (f"{entry.contact} {ARROW} {entry.receiver}" if entry.contact and entry.receiver
                   else entry.contact or entry.receiver or ", ".join(entry.parts))
            yield plain(f"{state}: {entry.board} {entry.rule} {who}", style, indent=2, hang=4)


def report_lines(run: RunReport, quiet: bool = False, sort: BoardOrder = BoardOrder.WORST,
                 width: int | None = None) -> Iterator[Line]:
    """The whole text report: every board, the run's notes and total, and with several
    boards the archive view."""
    for board in run.boards:
        yield from board_lines(board, run, quiet)
    if not quiet:
        for note in run.waiver_notes:
            yield Line((("waiver", "yellow"), (f": {note}", "")), 0, 2)
        yield from baseline_lines(run)
    yield plain(total_line(run), "bold", hang=2)
    coverage = run.coverage()
    if len(run.boards) > 1 or coverage.not_checked:
        yield plain(f"{coverage.text()} (all boards)", "bold" if coverage.not_checked else "", hang=2)
    yield plain(CAUTION_SHORT, "dim", hang=2)
    if len(run.boards) > 1:
        yield plain("")
        yield from archive_lines(run, sort, width)


# ------------------------------------------------------------------ the archive view

class _Column(NamedTuple):
    header: str
    narrow: str | None  # its header in the narrow layout; None: left out there
    align: str


_COLUMNS = (_Column("status", "status", "<"), _Column("contacts", "contacts", ">"),
            _Column("not checked", "unchecked", ">"), _Column("stages", "stages", ">"),
            _Column("errors", "errors", ">"), _Column("warnings", "warnings", ">"),
            _Column("notes", None, ">"), _Column("worst margin", "margin", ">"))
FLAG = "!"  # marks a board that needs attention
LEGEND = (f"{FLAG} needs attention: not read, no parts or no contacts, an error, a contact not "
          "checked, or a negative margin")

Cells = list[tuple[str, str]]


def _margin_text(margin: float | None) -> str:
    return format_quantity(margin, "V") if margin is not None else "-"


def sorted_boards(run: RunReport, sort: BoardOrder = BoardOrder.WORST) -> list[BoardReport]:
    """The boards worst first (not checked, then errors, then warnings...) or by path."""
    return list(run.boards) if sort is BoardOrder.PATH else sorted(run.boards, key=BoardReport.worst_first_key)


def _board_cells(board: BoardReport) -> Cells:
    status = board.status()
    counts = board.counts()
    read = status not in (BoardStatus.NOT_READ, BoardStatus.NO_PARTS)
    unchecked = board.contacts_not_checked()
    margin = board.worst_margin_v()

    def count(value: int, style: str = "") -> tuple[str, str]:
        return (str(value), style if value else "") if read else ("-", "")

    return [(str(status), STATUS_STYLE[status]), count(board.contacts), count(unchecked, "bold red"),
            count(len(board.stages)), count(counts["error"], "bold red"), count(counts["warning"], "yellow"),
            count(counts["note"]), (_margin_text(margin), "red" if margin is not None and margin < 0 else "")]


def _total_cells(run: RunReport) -> Cells:
    counts = run.counts()
    margins = [m for m in (b.worst_margin_v() for b in run.boards) if m is not None]
    return [("total", "bold"), (str(sum(b.contacts for b in run.boards)), "bold"),
            (str(sum(b.contacts_not_checked() for b in run.boards)), "bold"),
            (str(sum(len(b.stages) for b in run.boards)), "bold"),
            (str(counts["error"]), "bold"), (str(counts["warning"]), "bold"), (str(counts["note"]), "bold"),
            (_margin_text(min(margins) if margins else None), "bold")]


def _total_words(run: RunReport) -> str:
    attention = sum(1 for b in run.boards if b.needs_attention())
    text = plural(len(run.boards), "board")
    return text + (f", {attention} need{'s' if attention == 1 else ''} attention" if attention else "")


class _Table(NamedTuple):
    """The archive table laid out: which columns, their widths, narrow (paths above rows) or not."""

    keep: list[int]
    widths: list[int]
    narrow: bool

    def cells(self, cells: Cells) -> list[tuple[str, str]]:
        spans: list[tuple[str, str]] = []
        for width, i in zip(self.widths, self.keep, strict=True):
            text, style = cells[i]
            spans += [(f"{text:{_COLUMNS[i].align}{width}}", style), ("  ", "")]
        return spans

    def header(self) -> Cells:
        return [((c.narrow or "") if self.narrow else c.header, "bold") for c in _COLUMNS]


def _layout(rows: list[tuple[str, str, Cells]], width: int | None) -> _Table:
    """Full width, or narrow when a full row would not fit a terminal of `width`."""
    def widths(keep: list[int], narrow: bool) -> list[int]:
        return [max(len((_COLUMNS[i].narrow or "") if narrow else _COLUMNS[i].header),
                    *(len(cells[i][0]) for _f, _p, cells in rows)) for i in keep]

    every = list(range(len(_COLUMNS)))
    full = widths(every, False)
    longest = max(len(path) for _f, path, _c in rows)
    if width is None or 2 + sum(full) + 2 * len(full) + longest <= width:
        return _Table(every, full, False)
    keep = [i for i in every if _COLUMNS[i].narrow is not None]
    return _Table(keep, widths(keep, True), True)


def archive_lines(run: RunReport, sort: BoardOrder = BoardOrder.WORST, width: int | None = None) -> Iterator[Line]:
    """The table of boards, a total row and the flag's legend. Whole rows with the path
    last, so a long path never pushes or breaks a column; on a terminal narrower than
    a row, each board's path on a line of its own above its figures."""
    rows: list[tuple[str, str, Cells]] = [
        (FLAG if b.needs_attention() else " ", printable(b.path), _board_cells(b)) for b in sorted_boards(run, sort)]
    rows.append((" ", _total_words(run), _total_cells(run)))
    table = _layout(rows, width)
    indent = 4 if table.narrow else 2
    board_column = 0 if table.narrow else min(40, max(len(path) for _f, path, _c in rows))
    rule = plain("─" * (sum(table.widths) + 2 * len(table.widths) + board_column),
                 "dim", indent=indent, wrap=False)
    yield Line(tuple(table.cells(table.header()) + ([] if table.narrow else [("board", "bold")])),
               indent=indent, wrap=False)
    yield rule
    for index, (flag, path, cells) in enumerate(rows):
        total = index == len(rows) - 1
        if total:
            yield rule
        flag_span = (f"{flag} ", "bold red")
        if table.narrow:
            yield Line((flag_span, (path, "bold" if total else "")), wrap=False)
            yield Line(tuple(table.cells(cells)), indent=4, wrap=False)
        else:
            yield Line(tuple([flag_span] + table.cells(cells) + [(path, "")]), wrap=False)
    if any(flag == FLAG for flag, _p, _c in rows):
        yield plain(LEGEND, "dim", hang=2)


# ------------------------------------------------------------------ writers

def render_text(run: RunReport, console, *, quiet: bool = False) -> None:
    """Print the report on a rich Console (colour, wrapped between phrases to its width)."""
    print_lines(console, report_lines(run, quiet, width=console.width))


class TextFormatter:
    """The "text" format of `drc check`: whole plain lines, or colour on a terminal."""

    name = "text"

    def print_to(self, console, run: RunReport, options: RenderOptions) -> None:
        print_lines(console, report_lines(run, options.quiet, options.sort, console.width))

    def render(self, run: RunReport, options: RenderOptions) -> str:
        """The report as whole lines of plain text (a file, a pipe, a CI log)."""
        return plain_text(report_lines(run, options.quiet, options.sort))
