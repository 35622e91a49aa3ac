"""The `drc` command line: check boards, show the rule handbook, trace a stage, design one.

Exit status: 0 nothing at or above the fail level; 1 findings at or above
it; 2 bad input, bad config or usage, a report that could not be written
out (and any internal error); 130 when interrupted, 143 on SIGTERM, 129 on
SIGHUP (drc.errors.ExitStatus; drc.cli.process owns the streams and
signals). Errors are one located message, never a
traceback (unless --traceback asks for it): `main` is the one place that
catches every exception. Heavy modules are imported inside the commands
(drc.cli.commands) so that `drc --version` and a small check start fast.
Python's cyclic collector is paused for the whole of a command (see
drc.cli.gcpause); the Python API leaves it alone.
"""

from __future__ import annotations

import argparse
import sys

from drc import __version__
from drc.cli.gcpause import collection_paused
from drc.cli.process import OutputError, Terminated, discard_stdout, flush_stdout, owned_process
from drc.errors import DrcError, ExitStatus, UsageError
from drc.report.formats import FORMATS, BoardOrder

LEVELS = ("error", "warning", "note")  # the severities, most serious first


class _Parser(argparse.ArgumentParser):
    """argparse, but a usage error is our UsageError (exit 2, one message)."""

    def error(self, message: str):  # noqa: D401 - argparse's name
        raise UsageError(f"{self.prog}: {message} (see `{self.prog} --help`)")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="drc", description="Design-rule checker for the switch inputs of boards, "
                                             "read from SPICE-style netlists.")
    parser.add_argument("--version", action="version", version=f"drc {__version__}")
    parser.add_argument("--traceback", action="store_true",
                        help="on an internal error, show the Python traceback")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    check = sub.add_parser("check", help="check boards (files or folders)")
    check.add_argument("paths", nargs="+", metavar="PATH")
    check.add_argument("--changed", action="store_true",
                       help="the PATHs are changed files (a commit's): check the netlists among them and "
                            "every board under the current folder that includes one of them")
    check.add_argument("--format", choices=FORMATS, default="text",
                       help="what to print on standard output (default: text)")
    check.add_argument("--output", "-o", action="append", default=[], metavar="FORMAT:FILE",
                       help="also write FORMAT to FILE (repeatable), e.g. sarif:drc.sarif")
    check.add_argument("--fail-level", choices=LEVELS, default=None,
                       help="lowest severity that fails the run (default: the config's, else error)")
    check.add_argument("--report-only", action="store_true", help="report findings but always exit 0 "
                       "unless the input is bad")
    check.add_argument("--only-rules", action="append", metavar="IDS",
                       help="run only these rule ids (comma list, repeatable)")
    check.add_argument("--skip-rules", action="append", metavar="IDS",
                       help="leave these rule ids out (comma list, repeatable)")
    check.add_argument("--config", metavar="FILE", help="config file (default: drc.toml or "
                       "pyproject.toml [tool.drc] found upward from each board)")
    check.add_argument("--bounce", metavar="TIME", help="default bounce for contacts, e.g. 5ms")
    check.add_argument("--baseline", metavar="FILE", help="fail only on findings not in this baseline")
    check.add_argument("--write-baseline", metavar="FILE", help="record this run's findings as a baseline")
    check.add_argument("--jobs", "-j", type=int, default=1, metavar="N", help="boards checked in parallel")
    check.add_argument("--quiet", "-q", action="store_true", help="only errors and the summary")
    check.add_argument("--sort", choices=tuple(BoardOrder), default=BoardOrder.WORST.value,
                       help="order of the table of boards: worst first (default) or by path")
    check.add_argument("--eseries", metavar="SERIES", help="series for proposed values (E12, E24, E96...)")
    check.add_argument("--no-fixes", action="store_true", help="skip the search for standard-value fixes")
    check.add_argument("--thorough-fixes", action="store_true",
                       help="also search values for stages with diodes, several capacitors, TTL inputs or "
                       "conducting clamps (up to 100 analyses each: seconds per stage)")
    check.add_argument("--no-cache", action="store_true", help="check every board afresh: neither read nor "
                       "write the result cache (kept in the user's cache folder, or $DRC_CACHE_DIR)")
    check.add_argument("--include-folder", action="append", default=[], metavar="DIR",
                       help="a folder .include/.lib may read from (besides the board's own)")
    check.add_argument("--as-of", metavar="YYYY-MM-DD", help="the date waivers expire against (default today)")
    for name, help_text in (("max-elements", "flattened element count"),
                            ("max-include-depth", "include nesting"),
                            ("max-subckt-depth", "subcircuit nesting"),
                            ("max-file-bytes", "size of one netlist file"),
                            ("max-line-length", "length of one logical line"),
                            ("max-expression-depth", "expression nesting"),
                            ("max-expression-work", "expression size")):
        check.add_argument(f"--{name}", type=int, metavar="N", help=f"raise the limit on {help_text}")

    sub.add_parser("rules", help="list the rule catalogue")
    handbook = sub.add_parser("handbook", help="one rule's handbook page: what, why, how, fix, examples")
    handbook.add_argument("rule_id", metavar="ID")

    trace = sub.add_parser("trace", help="one contact's or receiver pin's paths, stages, levels and times")
    trace.add_argument("board", metavar="BOARD")
    trace.add_argument("ref", metavar="REF", help="a contact designator, a part, or PART:PIN")
    trace.add_argument("--config", metavar="FILE")
    trace.add_argument("--bounce", metavar="TIME")

    design = sub.add_parser("design", help="propose standard R and C values for a debounced input")
    design.add_argument("--rail", required=True, metavar="VOLTAGE", help="e.g. 5V or 3.3V")
    design.add_argument("--family", required=True, help="logic family, e.g. HC, LVC, 4000B, MCU-3V3")
    design.add_argument("--plain", action="store_true", help="the input has no Schmitt trigger")
    design.add_argument("--contact", metavar="CLASS", help="contact class (sets the bounce), e.g. tactile")
    design.add_argument("--bounce", metavar="TIME", help="bounce time (default: the contact class's)")
    design.add_argument("--latency", default="100 ms", metavar="TIME", help="latency limit (default 100 ms)")
    design.add_argument("--series", default="E24", help="E-series for the resistors (default E24)")
    design.add_argument("--capacitor", metavar="C", help="hold the capacitor at this value")
    design.add_argument("--resistor", metavar="R", help="hold the pull resistor at this value")
    design.add_argument("--pull-down", action="store_true", help="contact to the rail, pull-down resistor")
    design.add_argument("--netlist", action="store_true", help="print the stage as a netlist fragment")

    simulate = sub.add_parser("simulate", help="inject random contact chatter into one stage")
    simulate.add_argument("board", metavar="BOARD")
    simulate.add_argument("ref", metavar="REF", help="a contact designator or PART:PIN")
    simulate.add_argument("--trials", type=int, default=1000)
    simulate.add_argument("--seed", type=int, default=0)
    simulate.add_argument("--format", choices=("text", "json"), default="text")
    simulate.add_argument("--spice", metavar="FILE", help="write an ngspice deck of one chatter trial")
    simulate.add_argument("--config", metavar="FILE")
    simulate.add_argument("--bounce", metavar="TIME")
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run one `drc` command; the process's exit status. The last line of defence:
    every error becomes one message on standard error and a status, never a traceback."""
    argv = sys.argv[1:] if argv is None else argv
    show_traceback = "--traceback" in argv
    try:
        with owned_process():  # streams, signals, environment: see drc.cli.process
            status = _run(argv)
            flush_stdout()  # a report that cannot be written out fails here, not at exit
            return status
    except OutputError as exc:
        discard_stdout()
        _stderr(exc.render())
        return ExitStatus.ERROR
    except DrcError as exc:
        _stderr(exc.render())
        return ExitStatus.ERROR
    except KeyboardInterrupt:
        _stderr("drc: interrupted")
        return ExitStatus.INTERRUPTED
    except Terminated as exc:
        _stderr(f"drc: terminated by {exc.name}")
        return exc.status
    except Exception as exc:  # an internal error: one line unless asked for the traceback
        if show_traceback:
            raise
        _stderr(f"drc: internal error: {type(exc).__name__}: {exc} (rerun with --traceback for details)")
        return ExitStatus.ERROR


def _run(argv: list[str]) -> int:
    args = build_parser().parse_args(argv)
    if args.command is None:
        build_parser().print_help()
        return ExitStatus.ERROR
    from drc.cli import commands
    with collection_paused():  # the run builds many small records and frees few
        return getattr(commands, f"run_{args.command}")(args)


def _stderr(text: str) -> None:
    if sys.stderr is None:  # standard error closed (2>&-): nothing left to tell
        return
    try:
        sys.stderr.write(text.rstrip("\n") + "\n")
        sys.stderr.flush()
    except (OSError, ValueError):  # standard error full or gone: nothing left to tell
        pass

