"""What each `drc` sub-command does, given its parsed arguments.

Kept apart from the argument parser so that the parser stays cheap to build
and each command imports only what it needs.
"""

from __future__ import annotations

import sys
from contextlib import contextmanager
from datetime import date
from pathlib import Path

from drc.cli.parser import EXIT_ERROR, EXIT_OK, FORMATS, _ids, _quantity
from drc.errors import UsageError


# ------------------------------------------------------------------ output

@contextmanager
def stdout_console():
    """A rich Console for standard output: colour on a terminal; on a pipe or CI
    log, plain lines without the cells' trailing padding."""
    from io import StringIO
    from rich.console import Console
    console = Console(highlight=False)
    if console.is_terminal:
        yield console
        return
    buffer = StringIO()
    yield Console(file=buffer, width=console.width, force_terminal=False, color_system=None,
                  highlight=False)
    sys.stdout.write("".join(line.rstrip() + "\n" for line in buffer.getvalue().splitlines()))
    sys.stdout.flush()


# ------------------------------------------------------------------ check

def _reader_limits(args) -> tuple[tuple[str, int], ...]:
    names = ("max_elements", "max_include_depth", "max_subckt_depth", "max_file_bytes",
             "max_line_length", "max_expression_depth", "max_expression_work")
    out = []
    for name in names:
        value = getattr(args, name, None)
        if value is not None:
            if value <= 0:
                raise UsageError(f"--{name.replace('_', '-')} must be a positive whole number")
            out.append((name, value))
    return tuple(out)


def _outputs(specs: list[str]) -> list[tuple[str, Path]]:
    out = []
    for spec in specs:
        fmt, sep, file = spec.partition(":")
        if not sep or not file or fmt not in FORMATS:
            raise UsageError(f"--output {spec!r}: expected FORMAT:FILE with FORMAT one of "
                             f"{', '.join(FORMATS)}, e.g. sarif:drc.sarif")
        out.append((fmt, Path(file)))
    return out


def _as_of(text: str | None) -> date | None:
    if text is None:
        return None
    try:
        return date.fromisoformat(text)
    except ValueError:
        raise UsageError(f"--as-of {text!r}: expected a date as YYYY-MM-DD") from None


def _check_options(args):
    from drc.pipeline import CheckOptions
    if args.jobs < 1:
        raise UsageError("--jobs must be at least 1")
    if args.config and not Path(args.config).is_file():
        raise UsageError(f"--config {args.config}: no such file")
    return CheckOptions(
        config_path=args.config,
        default_bounce_s=_quantity(args.bounce, "time", "--bounce") if args.bounce else None,
        select=_ids(args.select), ignore=_ids(args.ignore),
        propose_fixes=not args.no_fixes, eseries=args.eseries.upper() if args.eseries else None,
        include_folders=tuple(args.include_folder), reader_limits=_reader_limits(args),
        today=_as_of(args.as_of))


def _run_fail_level(args, options, files) -> str:
    """The command line's, else the (explicit or first discovered) config's, else error."""
    if args.fail_level:
        return args.fail_level
    from drc.pipeline import find_config
    try:
        config = find_config(str(files[0]) if files else None, options)
    except Exception:
        return "error"  # the board's own check reports a bad config
    return config.fail_level or "error"


def _render(fmt: str, run, quiet: bool) -> str:
    if fmt == "json":
        from drc.report.json_report import render_json
        return render_json(run)
    if fmt == "sarif":
        from drc.report.sarif import render_sarif
        return render_sarif(run, Path.cwd())
    if fmt == "junit":
        from drc.report.junit import render_junit
        return render_junit(run, run.fail_level)
    if fmt == "html":
        from drc.report.html import render_html
        return render_html(run)
    return _plain_text(run, quiet, width=100)


def _plain_text(run, quiet: bool, width: int) -> str:
    """The text report without colour, lines stripped of rich's cell padding."""
    from io import StringIO
    from rich.console import Console
    buffer = StringIO()
    _print_text(run, Console(file=buffer, width=width, force_terminal=False, color_system=None,
                             highlight=False), quiet)
    return "".join(line.rstrip() + "\n" for line in buffer.getvalue().splitlines())


def _print_text(run, console, quiet: bool) -> None:
    from drc.report.text import render_folder_summary, render_text
    render_text(run, console, quiet=quiet)
    if len(run.boards) > 1:
        render_folder_summary(run, console)


def _progress(total: int):
    """A rich progress bar on a terminal for folder runs; None elsewhere."""
    if total < 2 or not sys.stderr.isatty():
        return None, None
    from rich.progress import Progress
    progress = Progress(transient=True)
    task = progress.add_task("checking boards", total=total)
    return progress, (lambda _path: progress.advance(task))


def run_check(args) -> int:
    from drc.atomic import write_atomic
    from drc.pipeline import audit, board_files
    from drc.gate.selection import exit_status
    options = _check_options(args)
    outputs = _outputs(args.output)
    for p in args.paths:
        if not Path(p).exists():
            raise UsageError(f"{p}: no such file or folder")
    files = board_files(args.paths)
    if not files:
        raise UsageError(f"no netlists (*.cir *.sp *.spice *.net *.ckt) under {' '.join(args.paths)}")
    inputs = [str(f) for f in files] + ([args.config] if args.config else [])
    if args.baseline:
        inputs.append(args.baseline)
    from drc.pipeline import rule_ids
    from drc.gate.selection import resolve_selection
    resolve_selection(rule_ids(), options.select, options.ignore, where="command line", error=UsageError)
    fail_level = _run_fail_level(args, options, files)
    executor = None
    if args.jobs > 1 and len(files) > 1:
        from concurrent.futures import ProcessPoolExecutor
        executor = ProcessPoolExecutor(max_workers=args.jobs)
    progress, tick = _progress(len(files))
    try:
        if progress:
            progress.start()
        run = audit(files, options, executor=executor, baseline_path=args.baseline,
                    fail_level=fail_level, progress=tick)
    finally:
        if progress:
            progress.stop()
        if executor is not None:
            executor.shutdown(cancel_futures=True)
    # Nothing a board was read from (config found by discovery, included files) may be overwritten.
    inputs += [b.config_path for b in run.boards if b.config_path]
    inputs += [f for b in run.boards for f in b.files]
    if args.write_baseline:
        from dataclasses import replace
        from drc.gate.baseline import write_baseline
        from drc.report.run_report import BaselineInfo
        write_baseline(args.write_baseline, run, inputs=inputs)
        active = sum(1 for f in run.findings() if f.suppression is None)
        run = replace(run, baseline=BaselineInfo(args.write_baseline, matched=0, new=active, written=True))
    for board in run.boards:
        if board.error:  # bad input is reported on standard error whatever the format
            sys.stderr.write(board.error.rstrip("\n") + "\n")
    for fmt, file in outputs:
        write_atomic(file, _render(fmt, run, args.quiet), inputs=inputs)
    if args.format == "text":
        with stdout_console() as console:
            _print_text(run, console, args.quiet)
    else:
        sys.stdout.write(_render(args.format, run, args.quiet))
        sys.stdout.flush()
    if any(b.error for b in run.boards):
        return EXIT_ERROR
    return exit_status(list(run.findings()), fail_level, args.report_only)


# ------------------------------------------------------------------ rules

def run_rules(args) -> int:
    from rich.table import Table
    from rich import box
    from drc.checks import all_rules
    table = Table(box=box.SIMPLE_HEAD, show_edge=False, header_style="bold")
    table.add_column("rule id", no_wrap=True)
    table.add_column("severity", no_wrap=True)
    table.add_column("checks", overflow="fold")
    for rule in all_rules():
        table.add_row(rule.id, rule.severity, rule.doc.title)
    with stdout_console() as console:
        console.print(table)
        console.print("`drc explain ID` prints one rule in full.")
    return EXIT_OK


def run_explain(args) -> int:
    from drc.checks import all_rules
    from drc.gate.selection import unknown_name_message
    rules = {r.id: r for r in all_rules()}
    rule = rules.get(args.rule_id)
    if rule is None:
        raise UsageError(unknown_name_message("rule id", args.rule_id, rules))
    doc = rule.doc
    limits = ", ".join(doc.limits) if doc.limits else "none"
    text = (f"{doc.full_text()}\n\nDefault severity: {doc.severity}\nLimits (rules/limits.toml, "
            f"overridable in [limits]): {limits}\n\nFailing example\n{_indent(doc.failing_example)}\n"
            f"Passing example\n{_indent(doc.passing_example)}")
    sys.stdout.write(text.rstrip() + "\n")
    return EXIT_OK


def _indent(text: str) -> str:
    return "".join("    " + line + "\n" for line in text.strip("\n").splitlines())


# ------------------------------------------------------------------ trace / simulate

def _board_stages(board_path: str, config_path: str | None, bounce: str | None):
    from drc.pipeline import CheckOptions, check_board_full
    if not Path(board_path).is_file():
        raise UsageError(f"{board_path}: no such file")
    options = CheckOptions(config_path=config_path, propose_fixes=False,
                           default_bounce_s=_quantity(bounce, "time", "--bounce") if bounce else None)
    return check_board_full(board_path, options)


def matching_results(results, ref: str):
    """Stages whose contact, receiver part or receiver pin is `ref` (case-insensitive)."""
    want = ref.casefold()
    return [r for r in results if want in (r.stage.contact.designator.casefold(),
                                           r.stage.receiver.part.casefold(),
                                           r.stage.receiver.ref.casefold())]


def _no_match(check, ref: str) -> UsageError:
    from drc.gate.selection import unknown_name_message
    names = sorted({r.stage.contact.designator for r in check.results}
                   | {r.stage.receiver.ref for r in check.results})
    return UsageError(unknown_name_message(f"contact or receiver in {check.path}", ref, names))


def run_trace(args) -> int:
    from drc.report.trace_view import print_trace
    check = _board_stages(args.board, args.config, args.bounce)
    results = matching_results(check.results, args.ref)
    if not results:
        raise _no_match(check, args.ref)
    with stdout_console() as console:
        print_trace(console, check, results)
    return EXIT_OK


def run_simulate(args) -> int:
    import json
    from drc.simulation.injection import chatter_deck, render_simulation_text, simulate_stage, simulation_json
    if args.trials < 1:
        raise UsageError("--trials must be at least 1")
    check = _board_stages(args.board, args.config, args.bounce)
    results = matching_results(check.results, args.ref)
    if not results:
        raise _no_match(check, args.ref)
    result = results[0]
    rx = result.receiver_electrical
    sim = simulate_stage(result.stage, rx, trials=args.trials, seed=args.seed)
    if args.spice:
        from drc.atomic import write_atomic
        deck = chatter_deck(result.stage, rx, sim.trial(sim.worst_trial))
        write_atomic(args.spice, deck, inputs=[args.board] + ([args.config] if args.config else []))
    if args.format == "json":
        sys.stdout.write(json.dumps(simulation_json(sim), indent=2, sort_keys=True) + "\n")
    else:
        with stdout_console() as console:
            if len(results) > 1:
                console.print(f"{args.ref} has {len(results)} stages; simulating {result.stage.name}")
            render_simulation_text(sim, console)
    return EXIT_OK


# ------------------------------------------------------------------ design

def run_design(args) -> int:
    from drc.design.forward import design_stage
    from drc.library.catalogue import load_library
    lib = load_library()
    rail = _quantity(args.rail, "voltage", "--rail")
    if args.bounce:
        bounce = _quantity(args.bounce, "time", "--bounce")
    else:
        name = (args.contact or "tactile").lower()
        if name not in lib.contact_classes:
            from drc.gate.selection import unknown_name_message
            raise UsageError(unknown_name_message("contact class", name, lib.contact_classes))
        bounce = lib.contact_classes[name].bounce_s
    latency = _quantity(args.latency, "time", "--latency")
    capacitor = _quantity(args.capacitor, "capacitance", "--capacitor") if args.capacitor else None
    resistor = _quantity(args.resistor, "resistance", "--resistor") if args.resistor else None
    try:
        family = lib.family(args.family).name
    except KeyError:
        from drc.gate.selection import unknown_name_message
        raise UsageError(unknown_name_message("logic family", args.family, lib.families)) from None
    try:
        result = design_stage(rail, family, not args.plain, bounce, latency, series=args.series,
                              capacitor=capacitor, resistor=resistor,
                              topology="pull-down" if args.pull_down else "pull-up")
    except (ValueError, KeyError) as exc:
        raise UsageError(f"drc design: {exc}") from None
    with stdout_console() as console:
        for line in result.lines():
            console.print(line, markup=False)
        if args.netlist:
            console.print(result.netlist_fragment(), markup=False)
        console.print("Guidance from models and typical data: verify on the real board.", style="dim")
    return EXIT_OK if result.ok else 1
