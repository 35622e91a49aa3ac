"""The rule registry: how a rule declares itself and how the engine finds it.

A rule is a plain function plus its `RuleDoc`, registered with the `rule`
decorator. Stage rules read one `StageResult`; board rules read the `Board`
(its netlist's elements); input rules read one contact input the checker
could not check (`UncheckedInput`, drc/board/coverage.py). The catalogue order is the registration order, so
the built-in modules are imported (by drc.checks) in the order of the
published catalogue.

Outside rule packs register exactly the same way. A pack is an installed
distribution that declares an entry point in the group "drc.rules" naming a
module; that module uses `@rule(RuleDoc(...))`. The first time the registry
is read, every such module is imported once, after the built-ins; a pack
that cannot be imported, or that registers a bad rule, is a located
RulePackError (exit status 2 on the command line), never a traceback.
"""

from __future__ import annotations

import traceback
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from enum import StrEnum
from pathlib import Path

from drc.checks.findings import SEVERITIES, Severity
from drc.checks.ruledoc import RuleDoc
from drc.errors import RulePackError, SourceLocation

ENTRY_POINT_GROUP = "drc.rules"


class RuleKind(StrEnum):
    """What a rule reads."""

    STAGE = "stage"  # one StageResult
    BOARD = "board"  # the whole Board
    INPUT = "input"  # one contact input that could not be checked (board.coverage.UncheckedInput)


RULE_KINDS: tuple[str, ...] = tuple(kind.value for kind in RuleKind)
_SEVERITY_NAMES: tuple[str, ...] = tuple(severity.value for severity in SEVERITIES)


@dataclass(frozen=True, slots=True)
class Rule:
    """One registered rule: its documentation, its kind and its check function.

    check(subject, ctx) -> iterable of Findings, where subject is a
    StageResult for a "stage" rule, a Board for a "board" rule and an
    UncheckedInput for an "input" rule, and ctx a `checks.context.RuleContext`.
    """

    doc: RuleDoc
    kind: RuleKind
    check: Callable
    # Stage rules only, optional: prepare(results, ctx) is called once with all the
    # board's StageResults before `check` sees any of them, so that a rule can work
    # out what it needs for all stages at once (in one batch) and read it per stage.
    # It returns nothing and must not change what `check` finds, only how fast.
    prepare: Callable | None = None

    @property
    def id(self) -> str:
        return self.doc.id

    @property
    def severity(self) -> Severity:
        return Severity(self.doc.severity)

    @property
    def limits(self) -> tuple[str, ...]:
        return self.doc.limits


_REGISTRY: dict[str, Rule] = {}
# Bumped on every change, so that whatever is built from the registered rules
# can tell, by value, whether it is still current.
_GENERATION = 0


def rule(doc: RuleDoc, kind: str = "stage", prepare: Callable | None = None) -> Callable[[Callable], Callable]:
    """Decorator: register `check` under `doc.id` as a rule of `kind` (a stage rule may
    have a `prepare`, see `Rule`).

    Refuses a second rule with the same id (two packs colliding is a bug to
    see, not to resolve silently) and an unknown kind or severity.
    """
    if kind not in RULE_KINDS:
        raise ValueError(f"rule {doc.id!r}: kind must be one of {RULE_KINDS}, got {kind!r}")
    if doc.severity not in _SEVERITY_NAMES:
        raise ValueError(f"rule {doc.id!r}: severity must be one of {_SEVERITY_NAMES}, got {doc.severity!r}")
    if prepare is not None and kind != RuleKind.STAGE:
        raise ValueError(f"rule {doc.id!r}: only a stage rule has a prepare step")

    def register(check: Callable) -> Callable:
        global _GENERATION
        if doc.id in _REGISTRY and _REGISTRY[doc.id].check is not check:
            raise ValueError(f"rule id {doc.id!r} is already registered")
        _REGISTRY[doc.id] = Rule(doc=doc, kind=RuleKind(kind), check=check, prepare=prepare)
        _GENERATION += 1
        return check

    return register


def registered_rules() -> tuple[Rule, ...]:
    """Every registered rule, in registration (catalogue) order, outside packs last."""
    if not _packs_loaded:
        load_rule_packs()
    return tuple(_REGISTRY.values())


def registry_generation() -> int:
    """A number that changes whenever a rule is registered or removed."""
    if not _packs_loaded:
        load_rule_packs()
    return _GENERATION


def unregister(ids: Iterable[str]) -> None:
    """Remove rules by id (for tests of outside packs; built-ins stay put otherwise)."""
    global _GENERATION
    for rule_id in ids:
        if _REGISTRY.pop(rule_id, None) is not None:
            _GENERATION += 1


# ------------------------------------------------------------------ outside rule packs

_packs_loaded = False
# What a pack's import can raise for a broken pack: a missing or misspelt module,
# a syntax error, a slip in its code, or a rule the decorator refuses.
_PACK_FAILURES = (ImportError, SyntaxError, ValueError, TypeError, NameError, AttributeError,
                  LookupError)


def load_rule_packs() -> None:
    """Import every module of the "drc.rules" entry-point group (once per process).

    A pack that fails is a RulePackError naming the entry point, located at
    the line of the pack that failed when there is one; loading is tried
    again on the next use, so the error does not go away silently.
    """
    global _packs_loaded
    _packs_loaded = True  # a pack that reads the registry while it loads sees the rules so far
    try:
        for entry_point in pack_entry_points():
            try:
                entry_point.load()
            except _PACK_FAILURES as exc:
                raise _pack_error(entry_point, exc) from exc
    except RulePackError:
        _packs_loaded = False
        raise


def pack_entry_points() -> list:
    """The entry points of the "drc.rules" group (importlib.metadata's), in its order.

    Where no installed distribution can declare one (the usual case), the
    answer is found without importing importlib.metadata, which costs a small
    check more than all its rules (see `may_declare_packs`)."""
    if not may_declare_packs():
        return []
    from importlib.metadata import entry_points
    return list(entry_points(group=ENTRY_POINT_GROUP))


def may_declare_packs() -> bool:
    """False only when no distribution importlib.metadata would find can declare a
    "drc.rules" entry point: only the standard finders find distributions, and no
    `*.dist-info` or `*.egg-info` folder on sys.path has an entry_points.txt naming
    the group. Anything else (a zip on the path, a file that cannot be read, another
    finder) answers True, and importlib.metadata decides."""
    import os
    import sys
    if any(hasattr(finder, "find_distributions") and not _scans_the_path(finder) for finder in sys.meta_path):
        return True
    for entry in sys.path:
        try:
            with os.scandir(entry or ".") as listing:
                names = [e.path for e in listing if e.name.lower().endswith((".dist-info", ".egg-info"))]
        except NotADirectoryError:
            return True  # a zip or an egg: importlib.metadata reads it
        except OSError:
            continue  # a folder that is not there holds no distribution
        for folder in names:
            try:
                with open(os.path.join(folder, "entry_points.txt"), "rb") as handle:
                    if ENTRY_POINT_GROUP.encode() in handle.read():
                        return True
            except (FileNotFoundError, NotADirectoryError):
                continue  # no entry points (or an egg-info file: PKG-INFO only)
            except OSError:
                return True
    return False


def _scans_the_path(finder) -> bool:
    """The standard finder of distributions, or the importlib_metadata backport's (which
    takes its place when imported): both read the `*-info` folders on sys.path."""
    import importlib.machinery
    kind = finder if isinstance(finder, type) else type(finder)
    return finder is importlib.machinery.PathFinder or (
        kind.__name__ == "MetadataPathFinder" and kind.__module__.split(".")[0] in ("importlib", "importlib_metadata"))


def _pack_error(entry_point, exc: BaseException) -> RulePackError:
    dist = getattr(entry_point, "dist", None)
    origin = f" of {dist.name}" if dist is not None and getattr(dist, "name", None) else ""
    message = (f"rule pack {entry_point.name!r}{origin} (entry point {entry_point.value!r} in group "
               f"{ENTRY_POINT_GROUP!r}) cannot be loaded: {type(exc).__name__}: {_reason(exc)}")
    if isinstance(exc, SyntaxError) and exc.filename:
        return RulePackError(message, SourceLocation(exc.filename, exc.lineno or 0, exc.offset or 0),
                             exc.text)
    return RulePackError(message, *_pack_frame(exc))


def _reason(exc: BaseException) -> str:
    return exc.msg if isinstance(exc, SyntaxError) and exc.msg else str(exc)


def _pack_frame(exc: BaseException) -> tuple[SourceLocation | None, str | None]:
    """Where in the pack the import failed (and that line's text): the innermost frame
    that is neither drc's own nor importlib's."""
    package = Path(__file__).resolve().parents[1]
    for frame in reversed(traceback.extract_tb(exc.__traceback__)):
        name = frame.filename
        if name.startswith("<") or Path(name).resolve().is_relative_to(package):
            continue
        if "importlib" in Path(name).parts:
            continue
        return SourceLocation(name, frame.lineno or 0), frame.line
    return None, None
