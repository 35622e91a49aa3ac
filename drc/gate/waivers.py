"""Waivers and inline annotations: accepted findings, with a reason, matched by designators.

A waiver (config `[[waivers]]`) names a rule, designator globs, a reason, an
author and an expiry date. It suppresses a finding of that rule when every
one of its globs matches one of the finding's designators (passive parts,
the contact, the receiver part or pin "U1:3") and, if it names a board glob,
the board path matches. Matching is by designators, never line numbers, so
waivers survive edits to the netlist. An expired waiver, or one whose date
could not be read, stops suppressing and is reported; a live waiver that
matches nothing is reported as stale so dead waivers do not pile up.
Inline annotations written in the netlist work the same way but have no
expiry; they mark findings with suppression "annotation".
"""

from __future__ import annotations

import fnmatch
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, replace
from datetime import date
from pathlib import PurePath

from drc.config.settings import Waiver
from drc.errors import SourceLocation
from drc.checks.findings import Finding


@dataclass(frozen=True, slots=True)
class WaiverNote:
    """Something the run must say about a waiver or annotation.

    kind: "expired" (date passed or unreadable; no longer suppresses),
    "stale" (live but matched no finding), "unused-annotation".
    """

    kind: str
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


def finding_designators(finding: Finding) -> tuple[str, ...]:
    """Every name a waiver part glob may match: parts, contact, receiver part and pin."""
    names = list(finding.parts)
    if finding.contact:
        names.append(finding.contact)
    if finding.receiver:
        names.append(finding.receiver)
        names.append(finding.receiver.split(":", 1)[0])
    return tuple(names)


def parts_match(globs: Iterable[str], finding: Finding) -> bool:
    """True when every glob matches at least one designator of the finding (case-insensitive)."""
    names = [n.casefold() for n in finding_designators(finding)]
    globs = tuple(globs)
    return bool(globs) and all(any(fnmatch.fnmatchcase(n, g.casefold()) for n in names) for g in globs)


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
    return f"{waiver.reason} ({waiver.author}, until {waiver.expires.isoformat()})"


def _describe(waiver: Waiver) -> str:
    return f"waiver at {waiver.origin} ({waiver.rule} {', '.join(waiver.parts)})"


def apply_waivers(findings: Sequence[Finding], waivers: Sequence[Waiver], board_path: str,
                  today: date) -> WaiverOutcome:
    """Mark the findings of one board that a live waiver covers (suppression "waiver").

    Findings already suppressed keep their suppression but still count as
    matched. Notes: one per expired waiver covering this board (with how many
    findings it no longer waives) and one per live waiver that matched
    nothing here; use `combine_notes` to merge the boards of a run.
    """
    applicable = frozenset(i for i, w in enumerate(waivers) if board_matches(w.board, board_path))
    used: set[int] = set()
    expired_hits: dict[int, int] = {}
    out: list[Finding] = []
    for finding in findings:
        chosen: Waiver | None = None
        for i in sorted(applicable):
            waiver = waivers[i]
            if waiver.rule != finding.rule or not parts_match(waiver.parts, finding):
                continue
            if not is_live(waiver, today):
                expired_hits[i] = expired_hits.get(i, 0) + 1
                continue
            used.add(i)
            chosen = chosen or waiver
        if chosen is not None and finding.suppression is None:
            finding = replace(finding, suppression="waiver", justification=_justification(chosen))
        out.append(finding)
    notes = [_expired_note(waivers[i], expired_hits.get(i, 0))
             for i in sorted(applicable) if not is_live(waivers[i], today)]
    notes += [_stale_note(waivers[i]) for i in sorted(applicable)
              if is_live(waivers[i], today) and i not in used]
    return WaiverOutcome(tuple(out), tuple(notes), frozenset(used), applicable)


def _expired_note(waiver: Waiver, hits: int) -> WaiverNote:
    when = (f"expired on {waiver.expires.isoformat()}" if waiver.expires
            else "has an unreadable expiry date (write YYYY-MM-DD) and counts as expired")
    effect = f"; {hits} finding{'s' if hits != 1 else ''} no longer waived" if hits else ""
    return WaiverNote("expired", waiver.origin, waiver.rule, waiver.parts,
                      f"{_describe(waiver)} {when}{effect}", hits)


def _stale_note(waiver: Waiver) -> WaiverNote:
    return WaiverNote("stale", waiver.origin, waiver.rule, waiver.parts,
                      f"{_describe(waiver)} matches no finding; remove it if the cause is fixed")


def combine_notes(waivers: Sequence[Waiver], outcomes: Iterable[WaiverOutcome],
                  today: date) -> tuple[WaiverNote, ...]:
    """The notes of a whole run: expired waivers once (summing their hits), stale only
    when no board used them (a waiver for board B is not stale on board A)."""
    outcomes = list(outcomes)
    used = frozenset().union(*(o.used for o in outcomes)) if outcomes else frozenset()
    hits: dict[str, int] = {}
    for outcome in outcomes:
        for note in outcome.notes:
            if note.kind == "expired":
                hits[note.origin] = hits.get(note.origin, 0) + note.hits
    notes: list[WaiverNote] = []
    for i, waiver in enumerate(waivers):
        if not is_live(waiver, today):
            notes.append(_expired_note(waiver, hits.get(waiver.origin, 0)))
        elif i not in used:
            notes.append(_stale_note(waiver))
    return tuple(notes)


Annotation = tuple[str, Sequence[str], str, SourceLocation]


def apply_annotations(findings: Sequence[Finding],
                      annotations: Iterable[Annotation]) -> WaiverOutcome:
    """Mark findings accepted by netlist annotations (rule, parts, reason, location).

    Same matching as waivers, no expiry; suppression "annotation" and the
    reason as justification. An annotation matching nothing is noted.
    """
    annotations = [(rule, tuple(parts), reason, location) for rule, parts, reason, location in annotations]
    used: set[int] = set()
    out: list[Finding] = []
    for finding in findings:
        for i, (rule, parts, reason, location) in enumerate(annotations):
            if rule == finding.rule and parts_match(parts, finding):
                used.add(i)
                if finding.suppression is None:
                    finding = replace(finding, suppression="annotation",
                                      justification=f"{reason} (annotation at {location})")
        out.append(finding)
    notes = tuple(WaiverNote("unused-annotation", str(location), rule, parts,
                             f"annotation at {location} ({rule} {', '.join(parts)}) matches no finding")
                  for i, (rule, parts, reason, location) in enumerate(annotations) if i not in used)
    return WaiverOutcome(tuple(out), notes, frozenset(used), frozenset(range(len(annotations))))
