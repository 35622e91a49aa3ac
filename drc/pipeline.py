"""The whole check of one board, and of many, as one pure pipeline.

read -> classify -> trace/recognise -> analyse -> check rules -> gate
(severities, annotations, waivers) -> report record; a run maps `check_board`
over boards (with any concurrent.futures Executor) and applies the baseline.
Nothing here prints: the command line and the Python API both call these
functions.

Three results, three names. `CheckedBoard` is everything one check computed,
in memory (the board, its netlist, stage results, findings, config):
`check_board_in_memory` (a file), `check_netlist_in_memory` (a netlist already
read) and `check_netlist_text` (text, for tests and examples) return it or its
parts. `BoardSummary` is what the public `check_board` returns, small and
picklable so a worker process can send it back: the board's `BoardReport`
(the record every report format reads) and its gate notes.
"""

from __future__ import annotations

import os
from collections import Counter
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field, replace
from datetime import date
from pathlib import Path
from typing import TYPE_CHECKING

from drc.analysis.results import StageResult
from drc.caching import Memo, memoized
from drc.checks.findings import Finding
from drc.config.settings import Config, Waiver
from drc.errors import DrcError
from drc.severity import Severity

if TYPE_CHECKING:
    from concurrent.futures import Executor

    from drc.board.board import Board
    from drc.board.coverage import Survey
    from drc.gate.decision import WaiverNote, WaiverOutcome
    from drc.report.run_report import BaselineInfo, BoardReport, Inventory, RunReport

NETLIST_SUFFIXES = (".cir", ".sp", ".spice", ".net", ".ckt")


@dataclass(frozen=True)
class CheckOptions:
    """What a run asks for, beyond what each board's config says.

    config_path: an explicit config file (wins over discovery); None = discover.
    default_bounce_s: the `--bounce` option. only_rules / skip_rules: rule ids
    from the command line (added to the config's). propose_fixes: search
    standard-value fixes for failing stages (thorough_fixes: those on the
    exact event solver too, seconds each). reader_limits: ReaderOptions
    overrides as (name, value) pairs. today: the date waivers expire against.
    result_cache: keep each board's result on disk and reuse it while nothing
    it depends on changed (drc.diskcache; the command line's default).
    """

    config_path: str | None = None
    default_bounce_s: float | None = None
    only_rules: tuple[str, ...] = ()
    skip_rules: tuple[str, ...] = ()
    propose_fixes: bool = True
    eseries: str | None = None
    include_folders: tuple[str, ...] = ()
    reader_limits: tuple[tuple[str, int], ...] = ()
    today: date | None = None
    result_cache: bool = False
    thorough_fixes: bool = False  # also search stages on the exact event solver (seconds each)


@dataclass(frozen=True)
class CheckedBoard:
    """Everything one check computed for one board, in memory (netlist included).

    What `drc trace`, the tests and the fix search read; `board_report`
    turns it into the BoardReport record the reports format.
    """

    path: str
    board: Board
    results: list[StageResult] = field(default_factory=list)
    findings: list[Finding] = field(default_factory=list)
    config: Config | None = None
    waiver_outcome: WaiverOutcome | None = None
    annotation_notes: tuple[WaiverNote, ...] = ()
    files: tuple[str, ...] = ()
    reader_diagnostics: tuple = ()
    survey: Survey | None = None  # what became of every contact (drc/board/coverage.py)
    config_diagnostics: tuple = ()  # config entries that override a part number in the netlist
    # The board's inventory, counted right after tracing, while the least else is held
    # (the count of distinct nets of a million elements is a set of them); None: count it later.
    inventory: Inventory | None = None


# What checking a board imports, beyond this module: `preload` imports it ahead.
_CHECK_MODULES = ("drc.netlist.reader", "drc.config.annotations", "drc.board.classify", "drc.board.recognise",
                  "drc.analysis.receiver", "drc.analysis.stage_analysis", "drc.checks", "drc.gate.decision",
                  "drc.design.fixes", "drc.report.run_report")


def preload() -> None:
    """Import everything a check uses and read the rule library, so that worker
    processes forked after this start ready (each would otherwise pay for it)."""
    import importlib
    for name in _CHECK_MODULES:
        importlib.import_module(name)
    library()
    rule_ids()


def library():
    from drc.library.catalogue import load_library
    return load_library()


def rule_ids() -> list[str]:
    from drc.checks import all_rules
    return [r.id for r in all_rules()]


def _limit_keys() -> dict[str, str | tuple[str, str]]:
    """Limit keys as users write them in config (kebab-case) -> (unit, allowed range)."""
    return {k.replace("_", "-"): (v.unit, v.range) for k, v in library().limits.items()}


# Configs read in this process, by (resolved path, bytes' digest, rule ids, library): a
# folder of boards shares one drc.toml, read and validated once.
_CONFIGS: Memo[tuple, Config] = Memo("pipeline.configs", 256)


def load_config_file(path: str | Path) -> Config:
    """Load a config, checking names against the rule catalogue and the library."""
    from drc.config import loading as loader
    from drc.diskcache import file_digest
    lib = library()
    ids = rule_ids()
    try:
        key: tuple | None = (str(Path(path).resolve()), file_digest(path), tuple(ids), lib.fingerprint)
    except (OSError, ValueError):
        key = None  # the loader says what is wrong with the file
    known = _CONFIGS.get(key) if key is not None else None
    if known is not None:
        return known
    config = loader.load_config(path, rule_ids=ids, limit_keys=_limit_keys(),
                                contact_classes=tuple(lib.contact_classes),
                                families=_family_names(lib))
    config = replace(config, limits={k.replace("-", "_"): v for k, v in config.limits.items()})
    return _CONFIGS.put(key, config) if key is not None else config


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


def analyse_board(board, config: Config, paths=None) -> list[StageResult]:
    """Trace, recognise and analyse the input paths of a classified board (all of them,
    or `paths`: the ones the survey found checkable)."""
    from drc.analysis.receiver import receiver_electrical
    from drc.analysis.reuse import analyse_stages_reusing
    from drc.board.recognise import stages_for_board
    lib = library()
    cache: dict[tuple, object] = {}

    def rx_for(stage):
        rec = stage.receiver
        cache_key = (rec.family, round(rec.supply_v, 6), rec.schmitt, rec.part_type, rec.supply_tolerance,
                     rec.thresholds)
        rx = cache.get(cache_key)
        if rx is None:
            rx = receiver_electrical(lib, rec.family, rec.supply_v, rec.schmitt, rec.part_type,
                                     rec.supply_tolerance)
            if rec.thresholds is not None:
                # A comparator's thresholds follow from its own resistors (drc/board/comparator.py).
                rising, falling = rec.thresholds
                rx = replace(rx, rising_threshold=rising, falling_threshold=falling,
                             vih_min=rising[2], vil_max=falling[0])
            cache[cache_key] = rx
        return rx

    def analyse(stages, rxs):
        # One batch: stages of one circuit structure are solved together (physics.batch).
        from drc.analysis.stage_analysis import analyse_stages
        return analyse_stages(stages, rxs)

    # A stage seen before (on this board or an earlier one of the run) is not solved again.
    return analyse_stages_reusing(list(stages_for_board(board, config, paths)), rx_for, analyse)


def effective_limits(config: Config) -> dict[str, float]:
    limits = {k: v.value for k, v in library().limits.items()}
    limits.update(config.limits)
    return limits


def selected_rule_ids(config: Config, options: CheckOptions) -> set[str]:
    from drc.errors import UsageError
    from drc.gate.decision import resolve_selection
    ids = rule_ids()
    # Command-line ids are usage errors; the config's were checked when it loaded.
    resolve_selection(ids, options.only_rules, options.skip_rules, where="command line", error=UsageError)
    return resolve_selection(ids, tuple(config.only_rules) + tuple(options.only_rules),
                             tuple(config.skip_rules) + tuple(options.skip_rules))


def _with_fixes(results, findings: list[Finding], limits, series: str, thorough: bool = False) -> list[Finding]:
    """Upgrade the plain-words fix of each stage finding to concrete standard values.

    The search is bounded per stage and per board by a count of analyses
    (drc/design/fixes.py), so the result is the same on every machine.
    """
    from drc.design.fixes import EXACT_FIX_BUDGET, propose_board_fixes
    fixed = propose_board_fixes(results, findings, limits, series, exact_budget=EXACT_FIX_BUDGET if thorough else 0)
    return [replace(f, fix=fixed[f]) if f in fixed else f for f in findings]


def check_netlist_in_memory(netlist, config: Config, options: CheckOptions, path: str) -> CheckedBoard:
    """Classify, analyse and check one read netlist; the gate's severities, annotations
    and waivers applied."""
    from drc.board.classify import classify
    from drc.board.coverage import survey_board
    from drc.board.overrides import override_warnings
    from drc.checks import run_rules
    from drc.config.annotations import read_annotations
    from drc.config.scope import for_board
    from drc.gate.decision import judge_board
    lib = library()
    config = for_board(config, path)  # entries scoped to other boards left out
    annotations = read_annotations(netlist.annotation_lines) if netlist.annotation_lines else None
    if annotations and annotations.contacts:
        config = replace(config, contacts=tuple(config.contacts) + tuple(annotations.contacts))
    board = classify(netlist, lib, config, default_bounce_s=options.default_bounce_s
                     if options.default_bounce_s is not None else config.default_bounce_s,
                     debounces=annotations.debounces if annotations else None)
    survey = survey_board(board, lib)
    counted = inventory(board)
    results = analyse_board(board, config, survey.paths)
    limits = effective_limits(config)
    selected = selected_rule_ids(config, options)
    near = (e for path in survey.paths for e in path.elements)  # what findings are about
    findings = run_rules(board, results, limits, selected, survey.unchecked, near)
    if options.propose_fixes and findings:
        findings = _with_fixes(results, findings, limits, options.eseries or config.eseries,
                               options.thorough_fixes)
    waived = [(w.rule, w.parts, w.reason, w.location) for w in annotations.waivers] if annotations else []
    judged = judge_board(findings, path, options.today or date.today(), severities=config.severities,
                         annotations=waived, waivers=config.waivers)
    return CheckedBoard(path=path, board=board, results=results, findings=list(judged.findings),
                        config=config, waiver_outcome=judged.waiver_outcome,
                        annotation_notes=judged.annotation_notes, files=tuple(netlist.files),
                        reader_diagnostics=tuple(netlist.diagnostics)
                        + _annotation_diagnostics(annotations, board), survey=survey,
                        config_diagnostics=tuple(override_warnings(netlist, lib, config)),
                        inventory=counted)


def _annotation_diagnostics(annotations, board) -> tuple:
    """A located note for each `*@drc` line naming a contact, part or pin the board
    does not have (such a line does nothing, and would otherwise do it silently)."""
    if not annotations:
        return ()
    from drc.config.annotations import unmatched_names
    from drc.netlist.elements import Diagnostic
    parts = [e.designator for e in board.netlist.elements] + [p.designator for p in board.parts.values()]
    notes = unmatched_names(annotations, [c.designator for c in board.contacts], parts,
                            [r.ref for r in board.receivers])
    return tuple(Diagnostic(message, where) for where, message in notes)


def read_board(path: str, config: Config, options: CheckOptions):
    from drc.netlist.reader import read_netlist
    return read_netlist(path, options=_reader_options(config, options),
                        keep_as_part=library().is_known_subcircuit)


def check_board_in_memory(path: str | Path, options: CheckOptions = CheckOptions()) -> CheckedBoard:
    """Read and check one netlist file, keeping everything (errors propagate as DrcError)."""
    path = str(path)
    config = find_config(path, options)
    netlist = read_board(path, config, options)
    return check_netlist_in_memory(netlist, config, options, path)


def board_report(check: CheckedBoard) -> BoardReport:
    """The report record of a checked board: what every report format reads."""
    from drc.report.run_report import BoardReport
    board = check.board
    kinds: Counter[str] = Counter(r.stage.kind for r in check.results)
    coverage = contact_coverage(check.survey) if check.survey is not None else None
    seen: dict[str, None] = {}
    notes: dict[str, None] = {}   # what was not read and is not needed (a simulator's library)
    for d in (*check.reader_diagnostics, *check.config_diagnostics, *getattr(board, "diagnostics", ())):
        told = notes if getattr(d, "severity", None) == Severity.NOTE else seen
        told.setdefault(f"{d.location}: {d.message}")
    return BoardReport(path=check.path, stages=tuple(check.results), findings=tuple(check.findings),
                       contacts=len(board.contacts), stage_kinds=dict(kinds),
                       diagnostics=tuple(seen), notes=tuple(notes),
                       config_path=check.config.path if check.config else None,
                       files=check.files, inventory=check.inventory or inventory(board), coverage=coverage)


def contact_coverage(survey: Survey):
    """The report record of what became of a board's contacts."""
    from drc.board.coverage import ContactStatus
    from drc.report.run_report import Coverage
    loads = tuple((o.contact, o.loads) for o in survey.outcomes if o.loads)
    return Coverage(checked=survey.count(ContactStatus.CHECKED),
                    not_checked=survey.count(ContactStatus.NOT_CHECKED),
                    load_only=survey.count(ContactStatus.LOAD_ONLY), loads=loads)


def inventory(board: Board) -> Inventory:
    """Parts by element letter, nets, rails and flattened instances of a classified board."""
    from operator import attrgetter

    from drc.report.run_report import Inventory
    elements = board.netlist.elements
    # Loops in C (map, set, Counter): this is the one pass over every element a report makes.
    leaves = set(map(attrgetter("instance_path"), elements))
    leaves.discard(())
    instances = {path[:i + 1] for path in leaves for i in range(len(path))}
    return Inventory(parts=dict(Counter(map(attrgetter("kind"), elements))), nets=len(board.netlist.nets()),
                     rails={r.net: r.voltage for r in board.rails.values()},
                     instances=len(instances))


@dataclass(frozen=True)
class BoardSummary:
    """What `check_board` returns (and a worker sends back) for one board: its report
    record and its gate notes; no netlist, so it is small and picklable."""

    report: BoardReport
    notes: tuple[str, ...] = ()
    waivers: tuple[Waiver, ...] = ()
    waiver_outcome: WaiverOutcome | None = None
    failed: bool = False


def check_board(path: str | Path, options: CheckOptions = CheckOptions()) -> BoardSummary:
    """Check one board; a bad board becomes a report with an error, never an exception.

    Top-level and picklable, so a process pool or a cluster executor can run it.
    With `options.result_cache`, an unchanged board's result comes from disk.
    """
    key = _result_key(str(path), options) if options.result_cache else None
    if key is not None:
        from drc import diskcache
        kept = diskcache.load("board", key)
        if isinstance(kept, BoardSummary):
            return kept
    summary = _check_board_now(path, options)
    if key is not None and not summary.failed:
        from drc import diskcache
        diskcache.store("board", key, summary, files=[f for f in summary.report.files if f != str(path)])
    return summary


def _check_board_now(path: str | Path, options: CheckOptions) -> BoardSummary:
    from drc.report.run_report import BoardReport
    try:
        check = check_board_in_memory(path, options)
    except DrcError as exc:
        return BoardSummary(BoardReport(path=str(path), error=exc.render()), failed=True)
    notes = tuple(n.message for n in check.annotation_notes)
    waivers = tuple(check.config.waivers) if check.config else ()
    return BoardSummary(board_report(check), notes, waivers, check.waiver_outcome)


def _result_key(path: str, options: CheckOptions) -> str | None:
    """The disk cache key of a board's result: the board's path and bytes, the folder
    it is read from, the config in force (path and bytes), the options (today's date
    included: waivers expire), the rules data and the rule packs installed (the
    tool's own fingerprint is added by drc.diskcache). Its included files are
    checked when an entry is loaded. None when the board cannot be read."""
    import os

    from drc import diskcache
    from drc.config import loading as loader
    try:
        config = options.config_path or (loader.discover_config(Path(path)) if not path.startswith("<") else None)
        config_digest = (str(config), diskcache.file_digest(config)) if config else None
        material = (path, os.getcwd(), diskcache.file_digest(path), config_digest,
                    replace(options, today=options.today or date.today()), _rules_digest(), _rule_packs())
    except (OSError, DrcError, ValueError):
        return None
    return diskcache.make_key("board", material)


@memoized(1)
def _rules_digest() -> str:
    from drc import diskcache
    from drc.datafiles import data_folder
    return diskcache.folder_digest(data_folder("rules"))


@memoized(1)
def _rule_packs() -> tuple[tuple[str, str, str], ...]:
    """Rule packs installed (entry point name, module, distribution version): their rules
    change results."""
    from drc.checks.registry import pack_entry_points
    found = []
    for point in pack_entry_points():
        dist = getattr(point, "dist", None)
        found.append((point.name, point.value, getattr(dist, "version", "") if dist else ""))
    return tuple(sorted(found))


def check_netlist_text(text: str, path: str = "<example>", config: Config | None = None,
                       options: CheckOptions = CheckOptions(propose_fixes=False)
                       ) -> tuple[Board, list[StageResult], list[Finding]]:
    """Check netlist text; returns (board, results, findings). For tests and examples."""
    from drc.netlist.reader import read_netlist_text
    netlist = read_netlist_text(text, path, keep_as_part=library().is_known_subcircuit)
    check = check_netlist_in_memory(netlist, config or Config(), options, path)
    return check.board, check.results, check.findings


def boards_reading(changed: Iterable[str | Path], under: str | Path = ".",
                   options: CheckOptions = CheckOptions()) -> list[Path]:
    """The boards under `under` that read one of the `changed` files (the board itself or
    any file it includes, at any depth), in path order: what a change to those files
    must re-check. A board that cannot be read is left out (its own check reports it)."""
    wanted = {os.path.realpath(p) for p in changed}
    out: list[Path] = []
    for board in board_files([under]):
        if os.path.realpath(board) in wanted:
            out.append(board)
            continue
        try:
            netlist = read_board(str(board), find_config(str(board), options), options)
        except (DrcError, OSError):
            continue
        if any(os.path.realpath(f) in wanted for f in netlist.files):
            out.append(board)
    return out


def board_files(paths: Iterable[str | Path]) -> list[Path]:
    """Expand folders (recursively) into the netlist names they hold; files as given.

    Every name with a netlist suffix that is not a folder is a board, also
    when it cannot be read (a dangling symbolic link, a FIFO, a device, a
    file without read permission): its check then fails with the reason, so
    a folder scan never skips a board in silence.
    """
    out: list[Path] = []
    for p in paths:
        p = Path(p)
        if p.is_dir():
            out.extend(sorted((f for f in p.rglob("*")
                               if f.suffix.lower() in NETLIST_SUFFIXES and not f.is_dir()),
                              key=lambda f: str(f)))
        else:
            out.append(p)
    return out


def audit(paths: Iterable[str | Path], options: CheckOptions = CheckOptions(), *,
          executor: Executor | None = None, baseline_path: str | None = None,
          fail_level: str = "error", progress: Callable[[str | None], object] | None = None,
          workers: int = 2) -> RunReport:
    """Check many boards and assemble a RunReport (results in a stable order).

    executor: any concurrent.futures.Executor (a process pool, a cluster's
    executor); None runs in this process. workers: how many workers the
    executor runs (boards go to it in about four chunks per worker).
    progress: called once per board.
    """
    from drc.checks import all_rules
    from drc.gate.decision import run_waiver_notes
    from drc.report.run_report import RunReport
    files = [str(f) for f in board_files(paths)]
    summaries = _check_boards(files, options, executor, progress, workers)
    notes: list[str] = [n for s in summaries for n in s.notes]
    notes += run_waiver_notes(((s.waivers, s.waiver_outcome) for s in summaries),
                              options.today or date.today())
    reports = [s.report for s in summaries]
    baseline_info, fixed, waived = None, (), ()
    if baseline_path:
        reports, baseline_info, fixed, waived = _apply_baseline(reports, baseline_path)
    docs = tuple(r.doc for r in all_rules())
    return RunReport(boards=tuple(reports), rule_docs=docs, fail_level=fail_level,
                     waiver_notes=tuple(notes), baseline=baseline_info, fixed=tuple(fixed),
                     baseline_waived=tuple(waived))


def check_boards(paths: list[str], options: CheckOptions = CheckOptions()) -> list[BoardSummary]:
    """`check_board` over several boards, in their order: one task of a worker
    (top-level and picklable; one round trip per chunk of boards, not per board)."""
    return [check_board(p, options) for p in paths]


def _content_digest(path: str) -> str:
    """A digest of the file's bytes (its path when it is not a regular file or cannot
    be read: the check reports that)."""
    from drc.diskcache import file_digest
    try:
        return file_digest(path)
    except OSError:
        return "unreadable:" + path


def chunks(items: list[str], workers: int, group=_content_digest) -> list[list[int]]:
    """Indices of `items` cut into chunks, about four per worker (so that a slow
    board does not leave the other workers idle for long).

    Items of one group (by default: files with the same bytes) go to one chunk
    where they fit in twice a chunk's share, so that one worker checks all the
    copies of a board and analyses its stages once (`analysis.reuse`).
    """
    if not items:
        return []
    target = max(1, -(-len(items) // (4 * max(1, workers))))
    groups: dict[str, list[int]] = {}
    for i, item in enumerate(items):
        groups.setdefault(group(item), []).append(i)
    out: list[list[int]] = []
    current: list[int] = []
    for members in groups.values():
        pieces = [members] if len(members) <= 2 * target else \
            [members[k:k + target] for k in range(0, len(members), target)]
        for piece in pieces:
            if current and len(current) + len(piece) > target:
                out.append(current)
                current = []
            current = current + piece
            if len(current) >= target:
                out.append(current)
                current = []
    if current:
        out.append(current)
    return out


def _check_boards(files: list[str], options: CheckOptions, executor: Executor | None,
                  progress: Callable[[str | None], object] | None, workers: int) -> list[BoardSummary]:
    """`check_board` over the files, in their order, here or on the executor
    (chunks of consecutive boards, one task each)."""
    if executor is None:
        summaries: list[BoardSummary] = []
        for f in files:
            summaries.append(check_board(f, options))
            if progress:
                progress(f)
        return summaries
    parts = chunks(files, workers)
    futures = [executor.submit(check_boards, [files[i] for i in part], options) for part in parts]
    by_index: dict[int, BoardSummary] = {}
    for part, future in zip(parts, futures, strict=True):
        for i, summary in zip(part, future.result(), strict=True):
            by_index[i] = summary
            if progress:
                progress(summary.report.path)
    return [by_index[i] for i in range(len(files))]


def _apply_baseline(reports: list[BoardReport], baseline_path: str
                    ) -> tuple[list[BoardReport], BaselineInfo, tuple, tuple]:
    """The reports with the baseline's decisions applied (boards that failed stay as
    they are), the baseline's tally, its fixed entries (gone) and its waived ones."""
    from drc.gate.baseline import load_baseline
    from drc.gate.decision import judge_against_baseline
    from drc.report.run_report import BaselineInfo
    judged = judge_against_baseline(((r.path, r.findings) for r in reports if not r.error),
                                    load_baseline(baseline_path))
    marked = iter(judged.findings)
    out = [r if r.error else replace(r, findings=next(marked)) for r in reports]
    info = BaselineInfo(path=baseline_path, matched=judged.matched, new=judged.new, waived=len(judged.waived))
    return out, info, judged.fixed, judged.waived
