"""The rule registry: how a rule declares itself and how the engine finds it.

A rule is a plain function plus its `RuleDoc`, registered with the `rule`
decorator. Stage rules read one `StageResult`; board rules read the `Board`
(its netlist's elements). Built-in rules register exactly the way an outside
rule pack would: import the pack's module and its decorators run. The
catalogue order is the registration order, so the built-in modules are
imported in the order of the published catalogue.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass

from drc.checks.findings import SEVERITIES
from drc.checks.ruledoc import RuleDoc

RULE_KINDS = ("stage", "board")


@dataclass(frozen=True, slots=True)
class Rule:
    """One registered rule: its documentation, its kind and its check function.

    check(subject, ctx) -> iterable of Findings, where subject is a
    StageResult for a "stage" rule and a Board for a "board" rule, and ctx a
    `checks.context.RuleContext`.
    """

    doc: RuleDoc
    kind: str
    check: Callable

    @property
    def id(self) -> str:
        return self.doc.id

    @property
    def severity(self) -> str:
        return self.doc.severity

    @property
    def limits(self) -> tuple[str, ...]:
        return self.doc.limits


_REGISTRY: dict[str, Rule] = {}


def rule(doc: RuleDoc, kind: str = "stage") -> Callable[[Callable], Callable]:
    """Decorator: register `check` under `doc.id` as a rule of `kind`.

    Refuses a second rule with the same id (two packs colliding is a bug to
    see, not to resolve silently) and an unknown kind or severity.
    """
    if kind not in RULE_KINDS:
        raise ValueError(f"rule {doc.id!r}: kind must be one of {RULE_KINDS}, got {kind!r}")
    if doc.severity not in SEVERITIES:
        raise ValueError(f"rule {doc.id!r}: severity must be one of {SEVERITIES}, got {doc.severity!r}")

    def register(check: Callable) -> Callable:
        if doc.id in _REGISTRY and _REGISTRY[doc.id].check is not check:
            raise ValueError(f"rule id {doc.id!r} is already registered")
        _REGISTRY[doc.id] = Rule(doc=doc, kind=kind, check=check)
        return check

    return register


def registered_rules() -> tuple[Rule, ...]:
    """Every registered rule, in registration (catalogue) order."""
    return tuple(_REGISTRY.values())


def unregister(ids: Iterable[str]) -> None:
    """Remove rules by id (for tests of outside packs; built-ins stay put otherwise)."""
    for rule_id in ids:
        _REGISTRY.pop(rule_id, None)
