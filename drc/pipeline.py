"""The whole check of one board, and of many, as one pure pipeline.

read -> classify -> trace/recognise -> analyse -> check rules -> gate
(annotations, waivers) -> BoardReport; a run maps `check_board` over boards
(with any concurrent.futures Executor) and applies the baseline. Nothing here
prints: the command line and the Python API both call these functions.
"""

from __future__ import annotations

from collections import Counter
from concurrent.futures import Executor
from dataclasses import dataclass, field, replace
from datetime import date
from pathlib import Path
from typing import Iterable

from drc.config.settings import Config
from drc.cli.gcpause import collection_paused
from drc.errors import DrcError
from drc.checks.findings import Finding
from drc.analysis.results import StageResult

NETLIST_SUFFIXES = (".cir", ".sp", ".spice", ".net", ".ckt")


@dataclass(frozen=True)
class CheckOptions:
    """What a run asks for, beyond what each board's config says.

    config_path: an explicit config file (wins over discovery); None = discover.
    default_bounce_s: the `--bounce` option. select / ignore: rule ids from
    the command line (added to the config's). propose_fixes: search
    standard-value fixes for failing stages. reader_limits: ReaderOptions
    overrides as (name, value) pairs. today: the date waivers expire against.
    """

    config_path: str | None = None
    default_bounce_s: float | None = None
    select: tuple[str, ...] = ()
    ignore: tuple[str, ...] = ()
    propose_fixes: bool = True
    eseries: str | None = None
    include_folders: tuple[str, ...] = ()
    reader_limits: tuple[tuple[str, int], ...] = ()
    today: date | None = None


@dataclass
class BoardCheck:
    """Everything computed for one board, before it is frozen into a BoardReport."""

    path: str
    board: object
    results: list[StageResult] = field(default_factory=list)
    findings: list[Finding] = field(default_factory=list)
    config: Config | None = None
    waiver_outcome: object | None = None
    annotation_notes: tuple = ()
    files: tuple[str, ...] = ()
    reader_diagnostics: tuple = ()


def library():
    from drc.library.catalogue import load_library
    return load_library()


def rule_ids() -> list[str]:
    from drc.checks import all_rules
    return [r.id for r in all_rules()]


def _limit_keys() -> dict[str, str]:
    """Limit keys as users write them in config (kebab-case) -> their unit."""
    return {k.replace("_", "-"): v.unit for k, v in library().limits.items()}


def load_config_file(path: str | Path) -> Config:
    """Load a config, checking names against the rule catalogue and the library."""
    from drc.config import loading as loader
    lib = library()
    config = loader.load_config(path, rule_ids=rule_ids(), limit_keys=_limit_keys(),
                                contact_classes=tuple(lib.contact_classes),
                                families=_family_names(lib))
    return replace(config, limits={k.replace("-", "_"): v for k, v in config.limits.items()})


def _family_names(lib) -> tuple[str, ...]:
    names: list[str] = []
    for family in lib.families.values():
        names.append(family.name)
        names.extend(getattr(family, "aliases", ()) or ())
    return tuple(names)


def find_config(board_path: str | None, options: CheckOptions) -> Config:
    from drc.config import loading as loader
    if options.config_path:
        return load_config_file(options.config_path)
    if board_path and not board_path.startswith("<"):
        found = loader.discover_config(Path(board_path))
        if found is not None:
            return load_config_file(found)
    return Config()


def _reader_options(config: Config, options: CheckOptions):
    from drc.netlist.reader import ReaderOptions
    folders = tuple(options.include_folders) + tuple(config.include_folders)
    kwargs = dict(options.reader_limits)
    return ReaderOptions(include_folders=folders, **kwargs) if (folders or kwargs) else None


def analyse_board(board, config: Config) -> list[StageResult]:
    """Trace, recognise and analyse every input path of a classified board."""
    from drc.analysis.receiver import receiver_electrical
    from drc.analysis.stage_analysis import analyse_stages
    from drc.board.recognise import stages_for_board
    lib = library()
    cache: dict[tuple, object] = {}

    def rx_for(stage):
        rec = stage.receiver
        cache_key = (rec.family, round(rec.supply_v, 6), rec.schmitt)
        rx = cache.get(cache_key)
        if rx is None:
            rx = receiver_electrical(lib, rec.family, rec.supply_v, rec.schmitt)
            cache[cache_key] = rx
        return rx

    # One batch: stages of one circuit structure are solved together (physics.batch).
    return analyse_stages(list(stages_for_board(board, config)), rx_for)


def effective_limits(config: Config) -> dict[str, float]:
    limits = {k: v.value for k, v in library().limits.items()}
    limits.update(config.limits)
    return limits


def selected_rule_ids(config: Config, options: CheckOptions) -> set[str]:
    from drc.errors import UsageError
    from drc.gate.selection import resolve_selection
    ids = rule_ids()
    # Command-line ids are usage errors; the config's were checked when it loaded.
    resolve_selection(ids, options.select, options.ignore, where="command line", error=UsageError)
    return resolve_selection(ids, tuple(config.select) + tuple(options.select),
                             tuple(config.ignore) + tuple(options.ignore))


def _with_fixes(results, findings: list[Finding], limits, series: str) -> list[Finding]:
    """Upgrade the plain-words fix of each stage finding to concrete standard values.

    The search is bounded per stage and per board by a count of analyses
    (drc/fixes.py), so the result is the same on every machine.
    """
    from drc.design.fixes import propose_board_fixes
    fixed = propose_board_fixes(results, findings, limits, series)
    return [replace(f, fix=fixed[id(f)]) if id(f) in fixed else f for f in findings]


def check_netlist(netlist, config: Config, options: CheckOptions, path: str) -> BoardCheck:
    """Classify, analyse and check one read netlist; annotations and waivers applied."""
    from drc.netlist.annotations import read_annotations
    from drc.checks import run_rules
    from drc.board.classify import classify
    from drc.gate.waivers import apply_annotations, apply_waivers
    lib = library()
    annotations = read_annotations(netlist.files) if netlist.files else None
    if annotations and annotations.contacts:
        config = replace(config, contacts=tuple(config.contacts) + tuple(annotations.contacts))
    board = classify(netlist, lib, config, default_bounce_s=options.default_bounce_s
                     if options.default_bounce_s is not None else config.default_bounce_s,
                     debounces=annotations.debounces if annotations else None)
    results = analyse_board(board, config)
    limits = effective_limits(config)
    selected = selected_rule_ids(config, options)
    findings = run_rules(board, results, limits, dict(config.severities), selected)
    if options.propose_fixes and findings:
        findings = _with_fixes(results, findings, limits, options.eseries or config.eseries)
    notes: tuple = ()
    if annotations and annotations.waivers:
        outcome = apply_annotations(findings, [(w.rule, w.parts, w.reason, w.location)
                                               for w in annotations.waivers])
        findings, notes = list(outcome.findings), tuple(outcome.notes)
    waiver_outcome = None
    if config.waivers:
        waiver_outcome = apply_waivers(findings, config.waivers, path, options.today or date.today())
        findings = list(waiver_outcome.findings)
    return BoardCheck(path=path, board=board, results=results, findings=findings, config=config,
                      waiver_outcome=waiver_outcome, annotation_notes=notes,
                      files=tuple(netlist.files), reader_diagnostics=tuple(netlist.diagnostics))


def read_board(path: str, config: Config, options: CheckOptions):
    from drc.netlist.reader import read_netlist
    return read_netlist(path, options=_reader_options(config, options),
                        keep_as_part=library().is_known_subcircuit)


def check_board_full(path: str | Path, options: CheckOptions = CheckOptions()) -> BoardCheck:
    """Read and check one netlist file (errors propagate as DrcError)."""
    path = str(path)
    config = find_config(path, options)
    with collection_paused():  # the pipeline allocates many small records and frees few
        netlist = read_board(path, config, options)
        return check_netlist(netlist, config, options, path)


def board_report(check: BoardCheck):
    from drc.report.run_report import BoardReport
    board = check.board
    kinds: Counter[str] = Counter(r.stage.kind for r in check.results)
    seen: dict[str, None] = {}
    for d in (*check.reader_diagnostics, *getattr(board, "diagnostics", ())):
        seen.setdefault(f"{d.location}: {d.message}")
    return BoardReport(path=check.path, stages=tuple(check.results), findings=tuple(check.findings),
                       contacts=len(board.contacts), stage_kinds=dict(kinds),
                       diagnostics=tuple(seen), config_path=check.config.path if check.config else None,
                       files=check.files, inventory=inventory(board))


def inventory(board):
    """Parts by element letter, nets, rails and flattened instances of a classified board."""
    from drc.report.run_report import Inventory
    elements = board.netlist.elements
    leaves = {e.instance_path for e in elements if e.instance_path}
    instances = {path[:i + 1] for path in leaves for i in range(len(path))}
    return Inventory(parts=dict(Counter(e.kind for e in elements)), nets=len(board.netlist.nets()),
                     rails={r.net: r.voltage for r in board.rails.values()},
                     instances=len(instances))


@dataclass(frozen=True)
class BoardOutcome:
    """What a worker sends back for one board: its report and its gate notes."""

    report: object
    notes: tuple[str, ...] = ()
    waivers: tuple = ()
    waiver_outcome: object | None = None
    failed: bool = False


def check_board(path: str | Path, options: CheckOptions = CheckOptions()) -> BoardOutcome:
    """Check one board; a bad board becomes a report with an error, never an exception.

    Top-level and picklable, so a process pool or a cluster executor can run it.
    """
    from drc.report.run_report import BoardReport
    # The collector stays paused until the report is built: with a large
    # netlist alive, a full collection set off by the report's allocations
    # would walk every element of it (the records hold no cycles).
    with collection_paused():
        try:
            check = check_board_full(path, options)
        except DrcError as exc:
            return BoardOutcome(BoardReport(path=str(path), error=exc.render()), failed=True)
        notes = tuple(n.message for n in check.annotation_notes)
        waivers = tuple(check.config.waivers) if check.config else ()
        outcome = BoardOutcome(board_report(check), notes, waivers, check.waiver_outcome)
        # The netlist and board go now, by reference counting: the first collection
        # after the pause then walks only the report, not every element.
        del check
    return outcome


def check_text(text: str, path: str = "<example>", config: Config | None = None,
               options: CheckOptions = CheckOptions(propose_fixes=False)):
    """Check netlist text; returns (board, results, findings). For tests and the API."""
    from drc.netlist.reader import read_netlist_text
    netlist = read_netlist_text(text, path, keep_as_part=library().is_known_subcircuit)
    check = check_netlist(netlist, config or Config(), options, path)
    return check.board, check.results, check.findings


def board_files(paths: Iterable[str | Path]) -> list[Path]:
    """Expand folders (recursively) into the netlist files they hold; files as given."""
    out: list[Path] = []
    for p in paths:
        p = Path(p)
        if p.is_dir():
            out.extend(sorted((f for f in p.rglob("*")
                               if f.suffix.lower() in NETLIST_SUFFIXES and f.is_file()),
                              key=lambda f: str(f)))
        else:
            out.append(p)
    return out


def audit(paths: Iterable[str | Path], options: CheckOptions = CheckOptions(), *,
          executor: Executor | None = None, baseline_path: str | None = None,
          fail_level: str = "error", progress=None):
    """Check many boards and assemble a RunReport (results in a stable order).

    executor: any concurrent.futures.Executor (a process pool, a cluster's
    executor); None runs in this process. progress: called once per board.
    """
    from drc.checks import all_rules
    from drc.report.run_report import RunReport
    from drc.gate.waivers import combine_notes
    files = [str(f) for f in board_files(paths)]
    if executor is None:
        outcomes = []
        for f in files:
            outcomes.append(check_board(f, options))
            if progress:
                progress(f)
    else:
        futures = [executor.submit(check_board, f, options) for f in files]
        outcomes = []
        for fut in futures:
            outcomes.append(fut.result())
            if progress:
                progress(None)
    notes: list[str] = [n for o in outcomes for n in o.notes]
    waiver_sets = {}
    for o in outcomes:
        if o.waivers:
            waiver_sets.setdefault(o.waivers, []).append(o.waiver_outcome)
    for waivers, wo in waiver_sets.items():
        notes.extend(n.message for n in combine_notes(waivers, [w for w in wo if w is not None],
                                                      options.today or date.today()))
    reports = [o.report for o in outcomes]
    baseline_info, fixed = None, ()
    if baseline_path:
        reports, baseline_info, fixed = _apply_baseline(reports, baseline_path)
    docs = tuple(r.doc for r in all_rules())
    return RunReport(boards=tuple(reports), rule_docs=docs, fail_level=fail_level,
                     waiver_notes=tuple(notes), baseline=baseline_info, fixed=tuple(fixed))


def _apply_baseline(reports, baseline_path: str):
    from drc.gate.baseline import apply_baseline, load_baseline
    from drc.report.run_report import BaselineInfo
    baseline = load_baseline(baseline_path)
    out, fixed, matched, new = [], [], 0, 0
    for report in reports:
        if report.error:
            out.append(report)
            continue
        findings, gone = apply_baseline(report.findings, baseline, report.path)
        matched += sum(1 for f in findings if f.suppression == "baseline")
        new += sum(1 for f in findings if f.suppression is None)
        fixed.extend(gone)
        out.append(replace(report, findings=tuple(findings)))
    return out, BaselineInfo(path=baseline_path, matched=matched, new=new), fixed
