"""The board configuration as plain data (loaded by `config`, read by everyone).

Quantities are SI floats here; units are parsed at the edge by the loader.
Designator patterns are case-insensitive globs (fnmatch).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date
from enum import StrEnum
from typing import Literal

# Where a pin's internal resistor pulls it.
PullChoice = Literal["up", "down"]


@dataclass(frozen=True, slots=True)
class RailConfig:
    net: str
    voltage: float
    tolerance: float = 0.05


@dataclass(frozen=True, slots=True)
class ContactConfig:
    pattern: str  # designator glob, e.g. "SW*"
    contact_class: str | None = None
    bounce_s: float | None = None
    form: str | None = None
    boards: tuple[str, ...] | None = None  # board path globs it applies to; None = every board
    origin: str | None = None  # where it was written: file:line


@dataclass(frozen=True, slots=True)
class PartConfig:
    """Maps designators to a part type/family, for parts the library cannot name."""

    pattern: str
    part_number: str | None = None
    family: str | None = None
    # Pin names in the instance line's node order (per-gate instances): each
    # names a pin of the part type (`A`, `1Y`) or a role (`VCC`, `GND`).
    pins: tuple[str, ...] | None = None
    boards: tuple[str, ...] | None = None  # board path globs it applies to; None = every board
    origin: str | None = None  # where it was written: file:line


@dataclass(frozen=True, slots=True)
class McuPinConfig:
    """One microcontroller input pin: `part` designator, `pin` number (1-based)."""

    part: str
    pin: int
    family: str
    schmitt: bool = True
    pull: PullChoice | None = None
    pull_min_ohms: float | None = None
    pull_max_ohms: float | None = None
    debounce_s: float | None = None
    supply_v: float | None = None
    edge_sensitive: bool = False


@dataclass(frozen=True, slots=True)
class McuConfig:
    part: str  # designator
    family: str
    supply_v: float | None = None
    pins: tuple[McuPinConfig, ...] = ()
    supply_pins: tuple[int, ...] = ()
    ground_pins: tuple[int, ...] = ()
    boards: tuple[str, ...] | None = None  # board path globs it applies to; None = every board
    origin: str | None = None  # where it was written: file:line


class PartsMatch(StrEnum):
    """How a waiver's designator globs must meet a finding (config keys parts-any / parts-all)."""

    ANY = "any"  # one glob matching a designator of the finding is enough
    ALL = "all"  # every glob must match a designator of the one finding


@dataclass(frozen=True, slots=True)
class Waiver:
    rule: str
    parts: tuple[str, ...]  # designator globs, matched against a finding's designators by `match`
    reason: str
    author: str
    expires: date | None  # None: the date could not be read -> treated as expired
    board: str | None = None  # board path glob, None = any
    origin: str = "config"  # where it was written: file:line
    match: PartsMatch = PartsMatch.ALL


@dataclass(frozen=True, slots=True)
class Tolerances:
    resistor: float = 0.05
    capacitor: float = 0.20
    rail: float = 0.05


@dataclass(frozen=True, slots=True)
class Config:
    """One board's configuration, as loaded (or the defaults: `Config()`)."""

    path: str | None = None
    rails: tuple[RailConfig, ...] = ()
    contacts: tuple[ContactConfig, ...] = ()
    parts: tuple[PartConfig, ...] = ()
    mcus: tuple[McuConfig, ...] = ()
    tolerances: Tolerances = field(default_factory=Tolerances)
    default_bounce_s: float | None = None
    limits: dict[str, float] = field(default_factory=dict)  # overrides rules/limits.toml
    severities: dict[str, str] = field(default_factory=dict)  # rule id -> severity
    only_rules: tuple[str, ...] = ()  # rule ids to run (empty: all)
    skip_rules: tuple[str, ...] = ()  # rule ids not to run
    include_folders: tuple[str, ...] = ()
    waivers: tuple[Waiver, ...] = ()
    fail_level: str | None = None
    eseries: str = "E24"
