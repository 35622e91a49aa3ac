"""The whole check of one board, as one pure pipeline.

read -> classify -> trace/recognise -> analyse -> check -> (gate: waivers,
annotations, baseline) -> BoardReport. Each step is a function of what came
before; nothing here prints. The command line and the Python API both call
`check_board`; a batch audit maps it over boards with any Executor.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from datetime import date
from pathlib import Path
from typing import Iterable

from .config_model import Config
from .errors import DrcError
from .findings import Finding
from .results import StageResult


@dataclass(frozen=True)
class CheckOptions:
    """What a run asks for, beyond what the board's config says.

    config_path: an explicit config file (wins over discovery); None = discover.
    default_bounce_s: the `--bounce` option.
    select / ignore: rule ids from the command line (added to the config's).
    propose_fixes: search standard-value fixes for failing stages.
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
    baseline_path: str | None = None


@dataclass
class BoardOutcome:
    """Everything computed for one board (the report model adds the summary)."""

    path: str
    board: object | None
    results: list[StageResult] = field(default_factory=list)
    findings: list[Finding] = field(default_factory=list)
    config: Config | None = None


def _library():
    from .library import load_library
    return load_library()


def load_board_config(board_path: str | None, options: CheckOptions) -> Config:
    from . import config as config_loader
    if options.config_path:
        return config_loader.load_config(options.config_path)
    if board_path and not board_path.startswith("<"):
        found = config_loader.discover_config(Path(board_path))
        if found is not None:
            return config_loader.load_config(found)
    return Config()


def _reader_options(config: Config, options: CheckOptions, board_path: str | None):
    from .reader import ReaderOptions
    folders = tuple(options.include_folders) + tuple(config.include_folders)
    kwargs = dict(options.reader_limits)
    return ReaderOptions(include_folders=folders, **kwargs) if (folders or kwargs) else None


def analyse_board(board, config: Config) -> list[StageResult]:
    """Trace, recognise and analyse every input path of a classified board."""
    from .analysis import analyse_stage
    from .recognise import stages_for_board
    lib = _library()
    cache: dict[tuple, object] = {}
    results: list[StageResult] = []
    for stage in stages_for_board(board, config):
        rec = stage.receiver
        cache_key = (rec.family, round(rec.supply_v, 6), rec.schmitt)
        rx = cache.get(cache_key)
        if rx is None:
            rx = lib.receiver_electrical(rec.family, rec.supply_v, rec.schmitt)
            cache[cache_key] = rx
        result = analyse_stage(stage, rx)
        if result.receiver_electrical is None:
            result = replace(result, receiver_electrical=rx)
        results.append(result)
    return results


def effective_limits(config: Config) -> dict[str, float]:
    lib = _library()
    limits = {k: v.value for k, v in lib.limits.items()}
    limits.update(config.limits)
    return limits


def check_netlist(netlist, config: Config, options: CheckOptions, path: str) -> BoardOutcome:
    from .checks import run_rules, all_rules
    from .classify import classify
    lib = _library()
    board = classify(netlist, lib, config, default_bounce_s=options.default_bounce_s)
    results = analyse_board(board, config)
    limits = effective_limits(config)
    selected = selected_rule_ids(config, options)
    findings = run_rules(board, results, limits, dict(config.severities), selected)
    if options.propose_fixes and findings:
        findings = _with_fixes(results, findings, limits, options.eseries or config.eseries)
    return BoardOutcome(path=path, board=board, results=results, findings=findings, config=config)


def selected_rule_ids(config: Config, options: CheckOptions) -> set[str]:
    from .checks import all_rules
    from .selection import resolve_selection
    ids = [r.id for r in all_rules()]
    select = tuple(config.select) + tuple(options.select)
    ignore = tuple(config.ignore) + tuple(options.ignore)
    return resolve_selection(ids, select, ignore)


def _with_fixes(results, findings: list[Finding], limits, series: str) -> list[Finding]:
    from .fixes import propose_fixes
    by_stage: dict[tuple, list[Finding]] = {}
    for f in findings:
        by_stage.setdefault((f.contact, f.receiver), []).append(f)
    out: list[Finding] = []
    seen: set[int] = set()
    for result in results:
        key = (result.stage.contact.designator, result.stage.receiver.ref)
        stage_findings = by_stage.get(key)
        if not stage_findings:
            continue
        fixes = propose_fixes(result, stage_findings, limits, series)
        for f in stage_findings:
            seen.add(id(f))
            text = fixes.get(f)
            out.append(replace(f, fix=text) if text else f)
    out.extend(f for f in findings if id(f) not in seen)
    return out


def check_board(path: str | Path, options: CheckOptions = CheckOptions()) -> BoardOutcome:
    """Read and check one netlist file."""
    from .reader import read_netlist
    path = str(path)
    config = load_board_config(path, options)
    lib = _library()
    netlist = read_netlist(path, options=_reader_options(config, options, path),
                           keep_as_part=lib.is_known_subcircuit)
    return check_netlist(netlist, config, options, path)


def check_text(text: str, path: str = "<example>", config: Config | None = None,
               options: CheckOptions = CheckOptions(propose_fixes=False)):
    """Check netlist text; returns (board, results, findings). For tests and the API."""
    from .reader import read_netlist_text
    lib = _library()
    config = config or Config()
    netlist = read_netlist_text(text, path, keep_as_part=lib.is_known_subcircuit)
    outcome = check_netlist(netlist, config, options, path)
    return outcome.board, outcome.results, outcome.findings


def iter_board_files(paths: Iterable[str | Path]) -> list[Path]:
    """Expand folders into the netlist files they hold, sorted; files as given."""
    suffixes = {".cir", ".sp", ".spice", ".net", ".ckt"}
    out: list[Path] = []
    for p in paths:
        p = Path(p)
        if p.is_dir():
            out.extend(sorted(f for f in p.rglob("*") if f.suffix.lower() in suffixes and f.is_file()))
        else:
            out.append(p)
    return out
