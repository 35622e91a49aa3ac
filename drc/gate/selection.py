"""Which rules run, which severities fail the gate, and the exit status.

All selection logic lives here so that the config loader, the command line
and the reports agree: rule ids are checked against the catalogue (an
unknown id is an error that suggests the nearest known one), `select` and
`ignore` narrow the set, and `exit_status` turns the findings of a run into
the process status (0 clean, 1 findings at or above the fail level; 2, for
errors, is the caller's).
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable

from drc.errors import ConfigError, DrcError, SourceLocation
from drc.checks.findings import SEVERITIES, SEVERITY_RANK, Finding

DEFAULT_FAIL_LEVEL = "error"


def suggest(name: str, candidates: Iterable[str]) -> str | None:
    """The candidate nearest to `name` (difflib), or None when nothing is close."""
    matches = difflib.get_close_matches(name, sorted(candidates), n=1, cutoff=0.6)
    return matches[0] if matches else None


def unknown_name_message(kind: str, name: str, candidates: Iterable[str]) -> str:
    """`unknown rule id 'bounce-windw'; did you mean 'bounce-window'?`"""
    candidates = list(candidates)
    nearest = suggest(name, candidates)
    hint = f"; did you mean {nearest!r}?" if nearest else f"; known: {', '.join(sorted(candidates))}"
    return f"unknown {kind} {name!r}{hint}"


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


def check_severity(level: str, *, where: str = "", error: type[DrcError] = ConfigError) -> str:
    """`level` if it is a severity name, else `error` naming the choices."""
    if level not in SEVERITY_RANK:
        message = f"severity must be one of {', '.join(SEVERITIES)}, got {level!r}"
        raise error(f"{where}: {message}" if where else message)
    return level


def severity_at_least(severity: str, level: str) -> bool:
    """True when `severity` is `level` or more serious (note < warning < error)."""
    return SEVERITY_RANK[severity] >= SEVERITY_RANK[level]


def failing_findings(findings: Iterable[Finding], fail_level: str | None) -> list[Finding]:
    """The unsuppressed findings at or above the fail level (default "error")."""
    level = fail_level or DEFAULT_FAIL_LEVEL
    return [f for f in findings if f.suppression is None and severity_at_least(f.severity, level)]


def exit_status(findings: Iterable[Finding], fail_level: str | None, never_fail: bool) -> int:
    """0 when nothing unsuppressed is at or above the fail level (or never_fail), else 1.

    fail_level None means the default, "error". Suppressed findings (waiver,
    annotation, baseline) never fail. Status 2 (bad input, config, usage) is
    decided by the caller, which catches DrcError.
    """
    if fail_level is not None:
        check_severity(fail_level, where="fail level")
    if never_fail:
        return 0
    return 1 if failing_findings(findings, fail_level) else 0
