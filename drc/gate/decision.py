"""The gate: every decision about what a finding counts for, and what the run exits with.

A rule states what it found and how serious that is by default; everything
after that is decided here, in one module, so that the pipeline, the command
line and every report agree:

- which rules run: `only-rules` and `skip-rules`, checked against the catalogue (an
  unknown id is an error that suggests the nearest known one);
- the severity of each finding: the user's `[severity]` overrides;
- which findings are accepted, each marked with its `Suppression`: netlist
  annotations (`*@drc waive`, no expiry), config waivers (until their
  expiry date, matched by designator globs and an optional board glob) and
  the baseline (matched by identity, one entry per finding);
- the fail level: the command line's, else the config's, else "error";
- per finding, a `Decision`: it counts (it fails the run), it is below the
  fail level, or it was waived, waived in the netlist or baselined;
- the exit status: 0 when nothing counts, 1 when something does (2, for
  errors, is the caller's: it catches DrcError).

Reading the files behind these decisions stays with the files: waivers and
severities in drc.config.loading, annotations in drc.config.annotations,
the baseline file in drc.gate.baseline. Matching is by designators and
finding identity, never by line numbers, so decisions survive edits that
shift lines. A waiver that has expired (or whose date could not be read)
stops suppressing and is reported; a live waiver that matches nothing is
reported as stale, so dead waivers do not pile up.
"""

from __future__ import annotations

import fnmatch
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, replace
from datetime import date
from enum import StrEnum
from pathlib import PurePath

from drc.checks.findings import SEVERITIES, SEVERITY_RANK, Finding, Severity, Suppression
from drc.config.settings import PartsMatch, Waiver
from drc.errors import ConfigError, DrcError, ExitStatus, SourceLocation, unknown_name_message
from drc.gate.baseline import Baseline, BaselineEntry, board_key, entry_sort_key

DEFAULT_FAIL_LEVEL = Severity.ERROR


class Decision(StrEnum):
    """What one finding counts for in a run."""

    COUNTS = "counts"  # not accepted, at or above the fail level: it fails the run
    BELOW_FAIL_LEVEL = "below-fail-level"  # not accepted, but below the fail level
    WAIVED = "waived"  # a live config waiver accepts it
    WAIVED_IN_NETLIST = "waived-in-netlist"  # a `*@drc waive` annotation accepts it
    BASELINED = "baselined"  # the baseline accepts it


_ACCEPTED_BY = {Suppression.WAIVER: Decision.WAIVED,
                Suppression.ANNOTATION: Decision.WAIVED_IN_NETLIST,
                Suppression.BASELINE: Decision.BASELINED}


# ------------------------------------------------------------------ rule selection

def check_rule_ids(ids: Iterable[str], all_ids: Iterable[str], *, where: str = "",
                   location: SourceLocation | None = None,
                   error: type[DrcError] = ConfigError) -> None:
    """Raise `error` for the first id not in the catalogue, suggesting the nearest."""
    known = set(all_ids)
    for rule_id in ids:
        if rule_id not in known:
            message = unknown_name_message("rule id", rule_id, known)
            raise error(f"{where}: {message}" if where else message, location)


def resolve_selection(all_ids: Iterable[str], select: Iterable[str] = (),
                      ignore: Iterable[str] = (), *, where: str = "",
                      location: SourceLocation | None = None,
                      error: type[DrcError] = ConfigError) -> set[str]:
    """The rule ids to run: `select` (or every id when empty) minus `ignore`.

    Unknown ids in either list raise `error` (ConfigError for a config file;
    the command line passes UsageError) with the nearest known id suggested.
    """
    known = set(all_ids)
    select, ignore = tuple(select), tuple(ignore)
    check_rule_ids(select, known, where=where, location=location, error=error)
    check_rule_ids(ignore, known, where=where, location=location, error=error)
    chosen = set(select) if select else set(known)
    return chosen - set(ignore)


# ------------------------------------------------------------------ severity and fail level

def check_severity(level: str, *, where: str = "", error: type[DrcError] = ConfigError) -> Severity:
    """`level` as a Severity if it names one, else `error` naming the choices."""
    if level not in SEVERITY_RANK:
        message = f"severity must be one of {', '.join(SEVERITIES)}, got {level!r}"
        raise error(f"{where}: {message}" if where else message)
    return Severity(level)


def severity_at_least(severity: str, level: str) -> bool:
    """True when `severity` is `level` or more serious (note < warning < error)."""
    return SEVERITY_RANK[severity] >= SEVERITY_RANK[level]


def with_severities(findings: Iterable[Finding], overrides: Mapping[str, str]) -> list[Finding]:
    """The findings with the user's severity (rule id -> severity) wherever one is set."""
    if not overrides:
        return list(findings)
    return [replace(f, severity=Severity(overrides[f.rule]))
            if f.rule in overrides and f.severity != overrides[f.rule] else f for f in findings]


def run_fail_level(command_line: str | None, config_level: str | None) -> Severity:
    """The lowest severity that fails a run: the command line's, else the config's, else error."""
    return Severity(command_line or config_level or DEFAULT_FAIL_LEVEL)


# ------------------------------------------------------------------ decisions and exit status

def decide(finding: Finding, fail_level: str) -> Decision:
    """What `finding` counts for at `fail_level`."""
    if finding.suppression is not None:
        return _ACCEPTED_BY[finding.suppression]
    if severity_at_least(finding.severity, fail_level):
        return Decision.COUNTS
    return Decision.BELOW_FAIL_LEVEL


def failing_findings(findings: Iterable[Finding], fail_level: str | None) -> list[Finding]:
    """The findings that count: unsuppressed, at or above the fail level (default "error")."""
    level = fail_level or DEFAULT_FAIL_LEVEL
    return [f for f in findings if decide(f, level) is Decision.COUNTS]


def exit_status(findings: Iterable[Finding], fail_level: str | None, never_fail: bool) -> ExitStatus:
    """OK when no finding counts at the fail level (or never_fail), else FINDINGS.

    fail_level None means the default, "error". Suppressed findings (waiver,
    annotation, baseline) never fail. ExitStatus.ERROR (bad input, config,
    usage) is decided by the caller, which catches DrcError.
    """
    if fail_level is not None:
        check_severity(fail_level, where="fail level")
    if never_fail:
        return ExitStatus.OK
    return ExitStatus.FINDINGS if failing_findings(findings, fail_level) else ExitStatus.OK


# ------------------------------------------------------------------ waivers and annotations

class NoteKind(StrEnum):
    """Why the run mentions a waiver or an annotation."""

    EXPIRED = "expired"  # the date passed or could not be read: no longer suppresses
    STALE = "stale"  # live, but matched no finding
    UNUSED_ANNOTATION = "unused-annotation"  # a `*@drc waive` line that matched no finding


@dataclass(frozen=True, slots=True)
class WaiverNote:
    """Something the run must say about a waiver or annotation."""

    kind: NoteKind
    origin: str
    rule: str
    parts: tuple[str, ...]
    message: str
    hits: int = 0  # expired: findings it would have waived


@dataclass(frozen=True, slots=True)
class WaiverOutcome:
    """The findings with suppressions applied, the notes, and which waivers matched.

    used: indices (into the waivers or annotations given) that matched at
    least one finding; `combine_notes` uses them across several boards.
    """

    findings: tuple[Finding, ...]
    notes: tuple[WaiverNote, ...]
    used: frozenset[int]
    applicable: frozenset[int]  # indices whose board glob covers this board
    near: tuple[tuple[int, str], ...] = ()  # (index, how a finding almost matched) for unused ones


def finding_designators(finding: Finding) -> tuple[str, ...]:
    """Every name a waiver part glob may match: parts, contact, receiver part and pin."""
    names = list(finding.parts)
    if finding.contact:
        names.append(finding.contact)
    if finding.receiver:
        names.append(finding.receiver)
        names.append(finding.receiver.split(":", 1)[0])
    return tuple(names)


def matching_globs(globs: Iterable[str], finding: Finding) -> tuple[str, ...]:
    """The globs that match at least one designator of the finding (case-insensitive)."""
    names = [n.casefold() for n in finding_designators(finding)]
    return tuple(g for g in globs if any(fnmatch.fnmatchcase(n, g.casefold()) for n in names))


def parts_match(globs: Iterable[str], finding: Finding, match: PartsMatch = PartsMatch.ALL) -> bool:
    """True when the globs meet the finding's designators: every one of them (ALL, the
    annotations' meaning) or at least one (ANY)."""
    globs = tuple(globs)
    hits = matching_globs(globs, finding)
    return bool(globs) and (len(hits) == len(globs) if match is PartsMatch.ALL else bool(hits))


def board_matches(glob: str | None, board_path: str) -> bool:
    """A waiver's board glob against a board path (posix form; a bare glob also tries the file name)."""
    if glob is None:
        return True
    path = PurePath(board_path).as_posix()
    pattern = glob.replace("\\", "/")
    candidates = [path, path.removeprefix("./")]
    if "/" not in pattern:
        candidates.append(PurePath(path).name)
    return any(fnmatch.fnmatchcase(c.casefold(), pattern.casefold()) for c in candidates)


def is_live(waiver: Waiver, today: date) -> bool:
    """A waiver suppresses until the end of its expiry day; an unreadable date is expired."""
    return waiver.expires is not None and today <= waiver.expires


def _justification(waiver: Waiver) -> str:
    expires = waiver.expires.isoformat() if waiver.expires else "?"
    return f"{waiver.reason} ({waiver.author}, until {expires})"


def _describe(waiver: Waiver) -> str:
    return f"waiver at {waiver.origin} ({waiver.rule}, {waiver.match} of {', '.join(waiver.parts)})"


def _near_miss(waiver: Waiver, finding: Finding) -> str | None:
    """How a finding almost met a waiver: some of its globs (parts-all), or all of them
    on another rule; None when it is not close."""
    hits = matching_globs(waiver.parts, finding)
    if not hits:
        return None
    where = f"{finding.rule} at {_finding_where(finding)}"
    if waiver.rule != finding.rule:
        return f"{where} involves {', '.join(hits)} but is another rule"
    if waiver.match is PartsMatch.ALL and len(hits) < len(waiver.parts):
        missing = [g for g in waiver.parts if g not in hits]
        return f"{where} involves {', '.join(hits)} but not {', '.join(missing)}"
    return None


def _finding_where(finding: Finding) -> str:
    if finding.contact and finding.receiver:
        return f"{finding.contact} → {finding.receiver}"
    return finding.contact or finding.receiver or ", ".join(finding.parts) or finding.board


def _covering_waiver(finding: Finding, waivers: Sequence[Waiver], applicable: Iterable[int],
                     today: date, used: set[int], expired_hits: dict[int, int]) -> Waiver | None:
    """The first live waiver covering `finding`; records every live match in `used`
    and counts the expired ones in `expired_hits`."""
    chosen: Waiver | None = None
    for i in applicable:
        waiver = waivers[i]
        if waiver.rule != finding.rule or not parts_match(waiver.parts, finding, waiver.match):
            continue
        if not is_live(waiver, today):
            expired_hits[i] = expired_hits.get(i, 0) + 1
            continue
        used.add(i)
        chosen = chosen or waiver
    return chosen


def apply_waivers(findings: Sequence[Finding], waivers: Sequence[Waiver], board_path: str,
                  today: date) -> WaiverOutcome:
    """Mark the findings of one board that a live waiver covers (suppression "waiver").

    Findings already suppressed keep their suppression but still count as
    matched. Notes: one per expired waiver covering this board (with how many
    findings it no longer waives) and one per live waiver that matched
    nothing here; use `combine_notes` to merge the boards of a run.
    """
    applicable = frozenset(i for i, w in enumerate(waivers) if board_matches(w.board, board_path))
    in_order = sorted(applicable)
    used: set[int] = set()
    expired_hits: dict[int, int] = {}
    out: list[Finding] = []
    for finding in findings:
        chosen = _covering_waiver(finding, waivers, in_order, today, used, expired_hits)
        if chosen is not None and finding.suppression is None:
            finding = replace(finding, suppression=Suppression.WAIVER, justification=_justification(chosen))
        out.append(finding)
    near = tuple((i, miss) for i in in_order if is_live(waivers[i], today) and i not in used
                 for miss in _misses(waivers[i], findings))
    notes = [_expired_note(waivers[i], expired_hits.get(i, 0))
             for i in in_order if not is_live(waivers[i], today)]
    notes += [_stale_note(waivers[i], [m for j, m in near if j == i])
              for i in in_order if is_live(waivers[i], today) and i not in used]
    return WaiverOutcome(tuple(out), tuple(notes), frozenset(used), applicable, near)


_MAX_NEAR_MISSES = 3  # a note names a few, then counts the rest


def _misses(waiver: Waiver, findings: Sequence[Finding]) -> list[str]:
    return [m for m in (_near_miss(waiver, f) for f in findings) if m is not None]


def _expired_note(waiver: Waiver, hits: int) -> WaiverNote:
    when = (f"expired on {waiver.expires.isoformat()}" if waiver.expires
            else "has an unreadable expiry date (write YYYY-MM-DD) and counts as expired")
    effect = f"; {hits} finding{'s' if hits != 1 else ''} no longer waived" if hits else ""
    return WaiverNote(NoteKind.EXPIRED, waiver.origin, waiver.rule, waiver.parts,
                      f"{_describe(waiver)} {when}{effect}", hits)


def _stale_note(waiver: Waiver, near: Sequence[str] = ()) -> WaiverNote:
    message = f"{_describe(waiver)} matches no finding"
    if near:
        shown = list(dict.fromkeys(near))
        more = len(shown) - _MAX_NEAR_MISSES
        message += "; near misses: " + "; ".join(shown[:_MAX_NEAR_MISSES]) + (f"; {more} more" if more > 0 else "")
        if waiver.match is PartsMatch.ALL and any("but not" in m for m in shown):
            message += " (parts-all needs every designator in one finding; parts-any waives each finding with one)"
    else:
        message += "; remove it if the cause is fixed"
    return WaiverNote(NoteKind.STALE, waiver.origin, waiver.rule, waiver.parts, message)


def combine_notes(waivers: Sequence[Waiver], outcomes: Iterable[WaiverOutcome],
                  today: date) -> tuple[WaiverNote, ...]:
    """The notes of a whole run: expired waivers once (summing their hits), stale only
    when no board used them (a waiver for board B is not stale on board A)."""
    outcomes = list(outcomes)
    used: frozenset[int] = frozenset().union(*(o.used for o in outcomes)) if outcomes else frozenset()
    near: dict[int, list[str]] = {}
    for outcome in outcomes:
        for i, miss in outcome.near:
            near.setdefault(i, []).append(miss)
    hits: dict[str, int] = {}
    for outcome in outcomes:
        for note in outcome.notes:
            if note.kind == NoteKind.EXPIRED:
                hits[note.origin] = hits.get(note.origin, 0) + note.hits
    notes: list[WaiverNote] = []
    for i, waiver in enumerate(waivers):
        if not is_live(waiver, today):
            notes.append(_expired_note(waiver, hits.get(waiver.origin, 0)))
        elif i not in used:
            notes.append(_stale_note(waiver, near.get(i, ())))
    return tuple(notes)


def run_waiver_notes(boards: Iterable[tuple[Sequence[Waiver], WaiverOutcome | None]],
                     today: date) -> list[str]:
    """The waiver messages of a run: boards that share one config's waivers are combined."""
    by_waivers: dict[tuple[Waiver, ...], list[WaiverOutcome]] = {}
    for waivers, outcome in boards:
        if waivers:
            found = by_waivers.setdefault(tuple(waivers), [])
            if outcome is not None:
                found.append(outcome)
    return [note.message for waivers, outcomes in by_waivers.items()
            for note in combine_notes(waivers, outcomes, today)]


Annotation = tuple[str, Sequence[str], str, SourceLocation]


def apply_annotations(findings: Sequence[Finding],
                      annotations: Iterable[Annotation]) -> WaiverOutcome:
    """Mark findings accepted by netlist annotations (rule, parts, reason, location).

    Same matching as waivers, no expiry; suppression "annotation" and the
    reason as justification. An annotation matching nothing is noted.
    """
    given = [(rule, tuple(parts), reason, location) for rule, parts, reason, location in annotations]
    used: set[int] = set()
    out: list[Finding] = []
    for finding in findings:
        for i, (rule, parts, reason, location) in enumerate(given):
            if rule == finding.rule and parts_match(parts, finding):
                used.add(i)
                if finding.suppression is None:
                    finding = replace(finding, suppression=Suppression.ANNOTATION,
                                      justification=f"{reason} (annotation at {location})")
        out.append(finding)
    notes = tuple(WaiverNote(NoteKind.UNUSED_ANNOTATION, str(location), rule, parts,
                             f"annotation at {location} ({rule} {', '.join(parts)}) matches no finding")
                  for i, (rule, parts, reason, location) in enumerate(given) if i not in used)
    return WaiverOutcome(tuple(out), notes, frozenset(used), frozenset(range(len(given))))


@dataclass(frozen=True, slots=True)
class BoardJudgement:
    """One board's findings after the gate, with what it has to say about its waivers."""

    findings: tuple[Finding, ...]
    annotation_notes: tuple[WaiverNote, ...] = ()
    waiver_outcome: WaiverOutcome | None = None


def judge_board(findings: Sequence[Finding], board_path: str, today: date, *,
                severities: Mapping[str, str] | None = None,
                annotations: Sequence[Annotation] = (),
                waivers: Sequence[Waiver] = ()) -> BoardJudgement:
    """One board's findings with the user's severities, then its annotations, then its
    config waivers applied (in that order: an annotation wins over a waiver)."""
    judged = with_severities(findings, severities or {})
    notes: tuple[WaiverNote, ...] = ()
    if annotations:
        annotated = apply_annotations(judged, annotations)
        judged, notes = list(annotated.findings), annotated.notes
    waiver_outcome = None
    if waivers:
        waiver_outcome = apply_waivers(judged, waivers, board_path, today)
        judged = list(waiver_outcome.findings)
    return BoardJudgement(tuple(judged), notes, waiver_outcome)


# ------------------------------------------------------------------ baseline

@dataclass(frozen=True, slots=True)
class BaselineOnBoard:
    """A baseline applied to one board: its findings marked, and what became of the
    entries no active finding took: fixed (the finding is gone) or waived (the
    finding is still there, now accepted by a waiver or an annotation)."""

    findings: tuple[Finding, ...]
    fixed: tuple[BaselineEntry, ...]
    waived: tuple[BaselineEntry, ...]


def apply_baseline(findings: Sequence[Finding], baseline: Baseline, board: str) -> BaselineOnBoard:
    """Mark the findings of `board` that the baseline accepts.

    Each baseline entry accepts one finding with the same board, rule,
    contact, receiver and parts (so a second identical finding is new).
    Findings already waived or annotated keep that suppression, and their
    entry counts as waived, never fixed: fixed means gone.
    """
    key = board_key(board, baseline.root)
    pool: dict[tuple, list[BaselineEntry]] = {}
    for entry in baseline.entries:
        if entry.board == key:
            pool.setdefault(entry.identity(), []).append(entry)
    out = []
    waived: list[BaselineEntry] = []
    for finding in findings:
        matches = pool.get(finding.identity())
        if matches and finding.suppression is None:
            matches.pop()
            finding = replace(finding, suppression=Suppression.BASELINE,
                              justification=f"accepted in baseline {baseline.path}")
        elif matches and finding.suppression in (Suppression.WAIVER, Suppression.ANNOTATION):
            waived.append(matches.pop())
        out.append(finding)
    fixed = tuple(sorted((e for rest in pool.values() for e in rest), key=entry_sort_key))
    return BaselineOnBoard(tuple(out), fixed, tuple(sorted(waived, key=entry_sort_key)))


@dataclass(frozen=True, slots=True)
class BaselineJudgement:
    """A baseline applied to the boards of a run.

    findings: per board, in the order given. matched: findings the baseline
    accepted; new: findings still active; fixed: entries no finding matched
    (gone); waived: entries whose finding a waiver or annotation now accepts.
    """

    findings: tuple[tuple[Finding, ...], ...]
    matched: int
    new: int
    fixed: tuple[BaselineEntry, ...]
    waived: tuple[BaselineEntry, ...] = ()


def judge_against_baseline(boards: Iterable[tuple[str, Sequence[Finding]]],
                           baseline: Baseline) -> BaselineJudgement:
    """Apply `baseline` to every (board path, findings) of a run."""
    per_board: list[tuple[Finding, ...]] = []
    fixed: list[BaselineEntry] = []
    waived: list[BaselineEntry] = []
    matched = new = 0
    for path, findings in boards:
        on_board = apply_baseline(findings, baseline, path)
        matched += sum(1 for f in on_board.findings if f.suppression == Suppression.BASELINE)
        new += sum(1 for f in on_board.findings if f.suppression is None)
        fixed.extend(on_board.fixed)
        waived.extend(on_board.waived)
        per_board.append(on_board.findings)
    return BaselineJudgement(tuple(per_board), matched, new, tuple(fixed), tuple(waived))
