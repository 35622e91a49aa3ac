"""What each `drc` sub-command does, given its parsed arguments.

Kept apart from the argument parser so that the parser stays cheap to build
and each command imports only what it needs. Each `run_NAME(args)` returns
the exit status; errors are raised as DrcError for `drc.cli.parser.main`.
"""

from __future__ import annotations

import math
import sys
from contextlib import contextmanager
from datetime import date
from pathlib import Path

from drc.errors import ConfigError, DrcError, ExitStatus, UsageError
from drc.report.formats import FORMATS, BoardOrder, ConsoleFormatter, RenderOptions, formatter

# `drc simulate --trials`: each trial holds its bounce train and waveforms in
# memory (about 12 kB; 100,000 trials took 0.7 GB), so more are lowered to this.
MAX_TRIALS = 10_000

# ------------------------------------------------------------------ option values

def _ids(values: list[str] | None) -> tuple[str, ...]:
    """Rule ids from repeated comma lists: ["a,b", "c"] -> ("a", "b", "c")."""
    out: list[str] = []
    for v in values or ():
        out.extend(x.strip() for x in v.split(",") if x.strip())
    return tuple(out)


def _quantity(text: str, dimension: str, option: str) -> float:
    """A command-line quantity through the one validator (drc.units.checked_quantity):
    "5ms", "10 kΩ"; R and C also in SPICE form ("4.7k", "470n"); positive and finite."""
    from drc.units import checked_quantity
    try:
        return checked_quantity(text, dimension, option)
    except ConfigError as exc:
        if dimension in ("resistance", "capacitance"):
            from drc.netlist.values import parse_value
            from drc.units import unevaluable
            value = parse_value(text.strip())
            if value is not None and math.isfinite(value.si) and value.si > 0:
                outside = unevaluable(value.si, dimension)
                if outside is not None:
                    raise UsageError(f"{option}: {text!r}: {outside}") from None
                return value.si
        message = exc.message
        if message.startswith(option + ":"):
            message = message[len(option) + 1:].strip()
        raise UsageError(f"{option}: {message}") from None


def _count(value: int, option: str, minimum: int = 1) -> int:
    """A whole-number option through the one validator (drc.units.checked_count)."""
    from drc.units import checked_count
    try:
        return checked_count(value, option, minimum=minimum)
    except ConfigError as exc:
        raise UsageError(exc.message) from None


# ------------------------------------------------------------------ output

def stdout_is_terminal() -> bool:
    """True when standard output is a terminal (not a pipe, a file or a CI log)."""
    try:
        return sys.stdout.isatty()
    except (AttributeError, ValueError):
        return False


def write_stdout(text: str) -> None:
    """Write `text` to standard output as its encoding can carry it ("→" as "->" on ASCII)."""
    from drc.report.layout import fit_encoding
    sys.stdout.write(fit_encoding(text, getattr(sys.stdout, "encoding", None)))
    sys.stdout.flush()


@contextmanager
def stdout_console():
    """A rich Console for standard output. On a terminal: colour, the terminal's width.
    On a pipe or a CI log: plain whole lines (a log has no width), without the cells'
    trailing padding. Either way in the output's encoding (ASCII signs where needed)."""
    from io import StringIO

    from rich.console import Console

    from drc.report.layout import encoding_is_unicode
    encoding = getattr(sys.stdout, "encoding", None)
    if stdout_is_terminal():
        console = Console(highlight=False)
        if encoding_is_unicode(encoding):
            yield console
            return
        buffer = StringIO()
        yield Console(file=buffer, width=console.width, force_terminal=True, highlight=False,
                      color_system="auto", no_color=console.no_color)
        write_stdout(buffer.getvalue())
        return
    buffer = StringIO()
    yield Console(file=buffer, width=WHOLE_LINES, force_terminal=False, color_system=None, highlight=False)
    write_stdout("".join(line.rstrip() + "\n" for line in buffer.getvalue().splitlines()))


WHOLE_LINES = 100_000  # the width of a pipe's "console": no line is ever wrapped


# ------------------------------------------------------------------ check

def _reader_limits(args) -> tuple[tuple[str, int], ...]:
    names = ("max_elements", "max_include_depth", "max_subckt_depth", "max_file_bytes",
             "max_line_length", "max_expression_depth", "max_expression_work")
    out = []
    for name in names:
        value = getattr(args, name, None)
        if value is not None:
            out.append((name, _count(value, f"--{name.replace('_', '-')}")))
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


def _eseries(name: str | None, option: str) -> str | None:
    """An E-series name (IEC 60063), checked here rather than deep in the fix search."""
    if name is None:
        return None
    from drc.errors import unknown_name_message
    from drc.library.eseries import SERIES
    if name.upper() not in SERIES:
        raise UsageError(f"{option}: {unknown_name_message('E-series', name, SERIES)}")
    return name.upper()


def _check_options(args):
    from drc.pipeline import CheckOptions
    if args.jobs < 1:
        raise UsageError("--jobs must be at least 1")
    if args.config and not Path(args.config).is_file():
        raise UsageError(f"--config {args.config}: no such file")
    return CheckOptions(
        config_path=args.config,
        default_bounce_s=_quantity(args.bounce, "time", "--bounce") if args.bounce else None,
        only_rules=_ids(args.only_rules), skip_rules=_ids(args.skip_rules),
        propose_fixes=not args.no_fixes, eseries=_eseries(args.eseries, "--eseries"),
        include_folders=tuple(args.include_folder), reader_limits=_reader_limits(args),
        today=_as_of(args.as_of), result_cache=not args.no_cache, thorough_fixes=args.thorough_fixes)


def _run_fail_level(args, options, files: list[Path]) -> str:
    """The command line's, else the (explicit or first discovered) config's, else error."""
    from drc.gate.decision import run_fail_level
    if args.fail_level:
        return run_fail_level(args.fail_level, None)
    from drc.pipeline import find_config
    try:
        config = find_config(str(files[0]) if files else None, options)
    except (DrcError, OSError):
        return run_fail_level(None, None)  # the board's own check reports a bad config
    return run_fail_level(None, config.fail_level)


def _progress(total: int):
    """A rich progress bar on a terminal for folder runs; None elsewhere."""
    if total < 2 or not sys.stderr.isatty():
        return None, None
    from rich.progress import Progress
    progress = Progress(transient=True)
    task = progress.add_task("checking boards", total=total)
    return progress, (lambda _path: progress.advance(task))


def _board_files(paths: list[str]) -> list[Path]:
    """The netlists to check; a missing path or a folder without netlists is a usage error."""
    from drc.pipeline import board_files
    for p in paths:
        if not Path(p).exists():
            raise UsageError(f"{p}: no such file or folder")
    files = board_files(paths)
    if not files:
        raise UsageError(f"no netlists (*.cir *.sp *.spice *.net *.ckt) under {' '.join(paths)}")
    return files


def _changed_boards(paths: list[str], options) -> list[Path]:
    """The boards a change to `paths` must re-check: the netlists among them and every
    board under the current folder that includes one of them (at any depth)."""
    from drc.pipeline import boards_reading
    return boards_reading([p for p in paths if Path(p).is_file()], ".", options)


def processors() -> int:
    """The processors this process may run on."""
    import os
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


def worker_count(jobs: int, boards: int) -> tuple[int, str | None]:
    """Workers for `--jobs N` over `boards` boards: never more than the boards or the
    processors; with a note on standard error when the request was lowered."""
    cpus = processors()
    workers = max(1, min(jobs, boards, cpus))
    if workers >= jobs:
        return workers, None
    reasons = []
    if boards < jobs:
        reasons.append(f"{boards} board{'s' if boards != 1 else ''}")
    if cpus < jobs:
        reasons.append(f"{cpus} processor{'s' if cpus != 1 else ''}")
    return workers, f"drc: --jobs {jobs} lowered to {workers} ({', '.join(reasons)})"


def _executor(workers: int):
    """A process pool of `workers` processes (started once; they pause the collector)."""
    if workers <= 1:
        return None
    from concurrent.futures import ProcessPoolExecutor

    from drc.cli.gcpause import pause_collection_in_worker
    from drc.pipeline import preload
    preload()  # workers forked from here start with the modules and the library loaded
    pool = ProcessPoolExecutor(max_workers=workers, initializer=pause_collection_in_worker)
    pool.submit(int).result()  # start the workers now, before any thread (the progress bar's) runs
    return pool


def _audit(files: list[Path], options, args, fail_level: str):
    """The run over every board, on a process pool for --jobs, with a progress bar on a terminal."""
    from drc.pipeline import audit
    workers, note = worker_count(args.jobs, len(files))
    if note:
        sys.stderr.write(note + "\n")
    executor = _executor(workers)
    progress, tick = _progress(len(files))
    try:
        if progress:
            progress.start()
        return audit(files, options, executor=executor, baseline_path=args.baseline,
                     fail_level=fail_level, progress=tick, workers=workers)
    finally:
        if progress:
            progress.stop()
        if executor is not None:
            executor.shutdown(cancel_futures=True)


def _write_baseline(path: str, run, inputs: list[str]):
    """Write the run's baseline to `path`; the run saying so, and the number recorded."""
    from dataclasses import replace

    from drc.gate.baseline import write_baseline
    from drc.report.run_report import BaselineInfo
    recorded = write_baseline(path, run, inputs=inputs)
    return replace(run, baseline=BaselineInfo(path, matched=0, new=recorded, written=True)), recorded


def _baseline_line(path: str, run, recorded: int) -> str:
    """The one line `--write-baseline` prints: what it recorded, and what it left out."""
    from drc.report.text import plural
    boards = [b for b in run.boards if not b.error]
    text = f"baseline {path} written: {plural(recorded, 'finding')} recorded from {plural(len(boards), 'board')}"
    waived = sum(1 for f in run.findings() if f.suppression is not None)
    unread = len(run.boards) - len(boards)
    if waived:
        text += f"; {waived} waived or annotated finding{'s' if waived != 1 else ''} left out"
    if unread:
        text += f"; {plural(unread, 'board')} could not be read and {'is' if unread == 1 else 'are'} not in it"
    return text + "\n"


def _print_report(name: str, run, options: RenderOptions) -> None:
    """The report in format `name` on standard output: in colour on a terminal where the
    format can, else its plain text (whole lines for text)."""
    chosen = formatter(name)
    if isinstance(chosen, ConsoleFormatter) and stdout_is_terminal():
        with stdout_console() as console:
            chosen.print_to(console, run, options)
        return
    render_utf8 = getattr(chosen, "render_utf8", None)
    write_utf8 = getattr(sys.stdout, "write_utf8", None)
    if render_utf8 is not None and write_utf8 is not None and write_utf8(render_utf8(run, options)):
        return  # the same bytes, never held as text (a large board's JSON is tens of MB)
    write_stdout(chosen.render(run, options))


def _same_place(first, second) -> bool:
    """True when two streams reach one place: one terminal, or one file or pipe (2>&1)."""
    import os
    try:
        if first.isatty() and second.isatty():
            return True
        a, b = os.fstat(first.fileno()), os.fstat(second.fileno())
    except (AttributeError, OSError, ValueError):
        return False
    return (a.st_dev, a.st_ino) == (b.st_dev, b.st_ino)


def _report_board_errors(run, report_format: str | None) -> None:
    """Bad input goes to standard error whatever the format, except where the text
    report on standard output already shows it in the same place (once, not twice)."""
    if report_format == "text" and _same_place(sys.stdout, sys.stderr):
        return
    for board in run.boards:
        if board.error:
            sys.stderr.write(board.error.rstrip("\n") + "\n")


def run_check(args) -> int:
    from drc.atomic import check_outputs, write_atomic
    from drc.gate.decision import exit_status, resolve_selection
    from drc.pipeline import rule_ids
    options = _check_options(args)
    outputs = _outputs(args.output)
    files = _changed_boards(args.paths, options) if args.changed else _board_files(args.paths)
    if not files:  # --changed: no board reads any of the changed files
        write_stdout(f"no board under this folder reads the {len(args.paths)} changed file"
                     f"{'s' if len(args.paths) != 1 else ''}; nothing to check\n")
        return ExitStatus.OK
    inputs = [str(f) for f in files] + ([args.config] if args.config else [])
    if args.baseline:
        inputs.append(args.baseline)
    check_outputs([(f"-o {fmt}:{file}", file) for fmt, file in outputs]
                  + ([("--write-baseline", args.write_baseline)] if args.write_baseline else []),
                  inputs)
    resolve_selection(rule_ids(), options.only_rules, options.skip_rules, where="command line", error=UsageError)
    fail_level = _run_fail_level(args, options, files)
    run = _audit(files, options, args, fail_level)
    # Nothing a board was read from (config found by discovery, included files) may be overwritten.
    inputs += [b.config_path for b in run.boards if b.config_path]
    inputs += [f for b in run.boards for f in b.files]
    render = RenderOptions(quiet=args.quiet, working_dir=Path.cwd(), sort=BoardOrder(args.sort))
    if args.write_baseline:  # a successful act: one line, exit 0 (2 if a board could not be read)
        run, recorded = _write_baseline(args.write_baseline, run, inputs)
        _report_board_errors(run, None)
        for fmt, file in outputs:
            write_atomic(file, formatter(fmt).render(run, render), inputs=inputs)
        write_stdout(_baseline_line(args.write_baseline, run, recorded))
        return ExitStatus.ERROR if any(b.error for b in run.boards) else ExitStatus.OK
    _report_board_errors(run, args.format)
    for fmt, file in outputs:
        write_atomic(file, formatter(fmt).render(run, render), inputs=inputs)
    _print_report(args.format, run, render)
    if any(b.error for b in run.boards):
        return ExitStatus.ERROR
    return exit_status(list(run.findings()), fail_level, args.report_only)


# ------------------------------------------------------------------ rules

def run_rules(args) -> int:
    from rich import box
    from rich.table import Table

    from drc.checks import all_rules
    table = Table(box=box.SIMPLE_HEAD, show_edge=False, header_style="bold")
    table.add_column("rule id", no_wrap=True)
    table.add_column("severity", no_wrap=True)
    table.add_column("checks", overflow="fold")
    for rule in all_rules():
        table.add_row(rule.id, rule.severity, rule.doc.title)
    with stdout_console() as console:
        console.print(table)
        console.print("`drc handbook ID` prints one rule in full.")
    return ExitStatus.OK


def run_handbook(args) -> int:
    from drc.checks import all_rules
    from drc.errors import unknown_name_message
    rules = {r.id: r for r in all_rules()}
    rule = rules.get(args.rule_id)
    if rule is None:
        raise UsageError(unknown_name_message("rule id", args.rule_id, rules))
    doc = rule.doc
    limits = ", ".join(doc.limits) if doc.limits else "none"
    bound = {"min": "a minimum", "max": "a maximum"}.get(doc.bound, "a limit")
    headline = f"\nHeadline figure: {doc.figure}, against {bound}" if doc.figure else ""
    text = (f"{doc.full_text()}\n\nDefault severity: {doc.severity}\nLimits (rules/limits.toml, "
            f"overridable in [limits]): {limits}{headline}\n\nFailing example\n{_indent(doc.failing_example)}\n"
            f"Passing example\n{_indent(doc.passing_example)}")
    write_stdout(text.rstrip() + "\n")
    return ExitStatus.OK


def _indent(text: str) -> str:
    return "".join("    " + line + "\n" for line in text.strip("\n").splitlines())


# ------------------------------------------------------------------ trace / simulate

def _board_stages(board_path: str, config_path: str | None, bounce: str | None):
    from drc.pipeline import CheckOptions, check_board_in_memory
    if not Path(board_path).is_file():
        raise UsageError(f"{board_path}: no such file")
    options = CheckOptions(config_path=config_path, propose_fixes=False,
                           default_bounce_s=_quantity(bounce, "time", "--bounce") if bounce else None)
    return check_board_in_memory(board_path, options)


def matching_results(results, ref: str):
    """Stages whose contact, receiver part or receiver pin is `ref` (case-insensitive)."""
    want = ref.casefold()
    return [r for r in results if want in (r.stage.contact.designator.casefold(),
                                           r.stage.receiver.part.casefold(),
                                           r.stage.receiver.ref.casefold())]


def _no_match(check, ref: str) -> UsageError:
    from drc.errors import unknown_name_message
    names = sorted({r.stage.contact.designator for r in check.results}
                   | {r.stage.receiver.ref for r in check.results}
                   | {c.designator for c in check.board.contacts})
    return UsageError(unknown_name_message(f"contact or receiver in {check.path}", ref, names))


def _matching_coverage(check, ref: str) -> tuple[list, list]:
    """The unchecked inputs and the outcomes (with loads) of contact or receiver `ref`."""
    if check.survey is None:
        return [], []
    want = ref.casefold()
    items = [u for u in check.survey.unchecked
             if want in (u.contact.designator.casefold(), (u.receiver or "").casefold(),
                         (u.receiver or "").split(":")[0].casefold())]
    outcomes = [o for o in check.survey.outcomes if o.contact.casefold() == want and o.loads]
    return items, outcomes


def run_trace(args) -> int:
    from drc.report.trace_view import print_trace, print_unchecked
    check = _board_stages(args.board, args.config, args.bounce)
    results = matching_results(check.results, args.ref)
    items, outcomes = _matching_coverage(check, args.ref)
    if not (results or items or outcomes):
        raise _no_match(check, args.ref)
    with stdout_console() as console:
        if results:
            print_trace(console, check, results)
        print_unchecked(console, items, outcomes)
    return ExitStatus.OK


def run_simulate(args) -> int:
    import json

    from drc.library.catalogue import load_library
    from drc.report.simulation_view import render_simulation_text, simulation_json
    from drc.simulation.injection import chatter_deck, latch_gates, simulate_stage
    trials = _count(args.trials, "--trials", minimum=1)
    if trials > MAX_TRIALS:
        sys.stderr.write(f"drc: --trials {trials} is above the limit of {MAX_TRIALS} "
                         f"(memory grows with every trial); simulating {MAX_TRIALS} trials\n")
        trials = MAX_TRIALS
    seed = _count(args.seed, "--seed", minimum=0)
    check = _board_stages(args.board, args.config, args.bounce)
    results = matching_results(check.results, args.ref)
    if not results:
        raise _no_match(check, args.ref)
    result = results[0]
    rx = result.receiver_electrical
    latch = latch_gates(result.stage, load_library()) if result.stage.kind == "latch" else None
    from drc.config.settings import Config
    from drc.pipeline import effective_limits
    # The shortest make or break: the [limits] min-closure the check's closure-and-opening reading uses.
    min_closure = effective_limits(check.config or Config()).get("min_closure")
    sim = simulate_stage(result.stage, rx, trials=trials, seed=seed, latch=latch,
                         min_closure_s=min_closure)
    if args.spice and not sim.simulated:
        raise UsageError(f"cannot write a chatter deck for {result.stage.name}: it was not simulated")
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
    return ExitStatus.OK


# ------------------------------------------------------------------ design

def run_design(args) -> int:
    from drc.design.forward import DesignError, DesignRequest, design_stage
    from drc.library.catalogue import load_library
    from drc.report.design_view import GUIDANCE, design_lines, design_netlist
    lib = load_library()
    rail = _quantity(args.rail, "voltage", "--rail")
    if args.bounce:
        bounce = _quantity(args.bounce, "time", "--bounce")
    else:
        name = (args.contact or "tactile").lower()
        if name not in lib.contact_classes:
            from drc.errors import unknown_name_message
            raise UsageError(unknown_name_message("contact class", name, lib.contact_classes))
        bounce = lib.contact_classes[name].bounce_s
    latency = _quantity(args.latency, "time", "--latency")
    capacitor = _quantity(args.capacitor, "capacitance", "--capacitor") if args.capacitor else None
    resistor = _quantity(args.resistor, "resistance", "--resistor") if args.resistor else None
    try:
        family = lib.family(args.family).name
    except KeyError:
        from drc.errors import unknown_name_message
        raise UsageError(unknown_name_message("logic family", args.family, lib.families)) from None
    contact_class = (args.contact or "tactile").lower()
    if contact_class not in lib.contact_classes:
        from drc.errors import unknown_name_message
        raise UsageError(unknown_name_message("contact class", contact_class, lib.contact_classes))
    series = _eseries(args.series, "--series") or "E24"
    request = DesignRequest(rail, family, not args.plain, bounce, latency, series=series,
                            capacitor=capacitor, resistor=resistor,
                            topology="pull-down" if args.pull_down else "pull-up",
                            contact_class=contact_class, bounce_given=bool(args.bounce))
    try:
        result = design_stage(request)
    except DesignError as exc:
        raise UsageError(f"drc design: {exc}") from None
    if args.netlist:  # a netlist that reads back: whole lines, the summary as comments
        write_stdout(design_netlist(result))
        return ExitStatus.OK if result.ok else ExitStatus.FINDINGS
    from drc.report.layout import plain, print_lines
    verdict, *figures = design_lines(result)
    with stdout_console() as console:
        print_lines(console, [plain(verdict, "bold green" if result.ok else "bold red", hang=2)]
                    + [plain(line, hang=2) for line in figures] + [plain(GUIDANCE, "dim")])
    return ExitStatus.OK if result.ok else ExitStatus.FINDINGS
