"""Loading and finding the board configuration (`drc.toml` or `[tool.drc]` in pyproject.toml).

The loader turns TOML into the frozen `Config` record of `settings`,
parsing every quantity with its unit at this edge and refusing anything it
does not understand: an unknown key, a wrong type, a value without its unit
or a rule id not in the catalogue is a ConfigError naming the file, the line
(found by a light scan, since tomllib gives no positions) and the key path,
with the expected form and, for misspellings, the nearest valid name.

Schema (keys are kebab-case; quantities are strings with units, e.g. "5 ms";
voltages, resistances and fractions may also be plain numbers in V, Ω and ratio):

    fail-level = "error"          # note | warning | error: lowest severity that fails
    default-bounce = "5 ms"       # bounce for contacts no class or pattern describes
    eseries = "E24"               # E3 E6 E12 E24 E48 E96 E192, for proposed fixes
    only-rules = ["bounce-window"]    # rule ids to run (empty: all)
    skip-rules = ["resistance-range"] # rule ids not to run
    include = ["lib"]             # folders searched for .include/.lib (relative to this file)

    [tolerances]                  # defaults for parts the netlist gives no tolerance
    resistor = "5 %"
    capacitor = "20 %"
    rail = "5 %"

    [[rails]]                     # nets held at a voltage (besides DC sources)
    net = "+3V3"
    voltage = "3.3 V"
    tolerance = "5 %"             # optional, default tolerances.rail

    [[contacts]]                  # contacts by designator glob
    designator = "SW*"
    class = "tactile"             # a class of rules/contacts.toml
    bounce = "10 ms"              # optional, overrides the class
    form = "SPST-NO"              # optional: SPST-NO | SPST-NC | SPDT
    board = "panels/*.cir"        # optional: the boards it applies to (a glob or a list of
                                  # globs, relative to this file's folder); also in [[parts]]
                                  # and [[mcu]]. Without it an entry applies to every board.

    [[parts]]                     # logic parts the library cannot name
    designator = "U7"
    part-number = "74HC14"        # optional
    family = "HC"                 # optional
    pins = ["A", "Y", "VCC", "GND"]   # optional: pin names in node order (one gate per instance)

    [[mcu]]                       # microcontroller input pins
    designator = "U1"
    family = "CMOS-3V3"
    supply = "3.3 V"              # optional
    supply-pins = [1]             # optional
    ground-pins = [8]             # optional
      [[mcu.pins]]
      pin = 5                     # 1-based, in the instance line's node order
      family = "..."              # optional, default the MCU's family
      schmitt = true              # optional, default true
      pull = "up"                 # optional: up | down; then pull-min and pull-max
      pull-min = "30 kΩ"
      pull-max = "50 kΩ"
      debounce = "20 ms"          # optional firmware debounce
      supply = "3.3 V"            # optional, default the MCU's supply
      edge-sensitive = false      # optional (interrupt, counter, clock)

    [limits]                      # overrides of rules/limits.toml: number or quantity
    bounce-margin = 1.5

    [severity]                    # rule id -> note | warning | error
    pullup-waste = "note"

    [[waivers]]                   # accepted findings
    rule = "pullup-waste"
    parts-all = ["SW3", "R1*"]    # designator globs that must all be in one finding, or
                                  # parts-any = ["SW1", "SW4"]: any finding with one of them
    reason = "battery-free bench unit"
    author = "A. Designer"
    expires = 2026-06-30          # TOML date or "YYYY-MM-DD"; unreadable counts as expired
    board = "boards/panel-*.cir"  # optional board path glob

Discovery walks up from the board's folder to the repository root (a folder
holding .git) or the filesystem root; in each folder drc.toml wins over a
pyproject.toml that has a [tool.drc] table. An explicit path is the caller's
choice and bypasses discovery.
"""

from __future__ import annotations

import os
import re
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, replace
from datetime import date, datetime
from pathlib import Path
from typing import Any, cast

from drc.config.settings import (
    Config,
    ContactConfig,
    McuConfig,
    McuPinConfig,
    PartConfig,
    PartsMatch,
    PullChoice,
    RailConfig,
    Tolerances,
    Waiver,
)
from drc.errors import ConfigError, SourceLocation, long_number, suggest, unknown_name_message
from drc.netlist.lines import read_regular
from drc.severity import SEVERITIES
from drc.units import Range, checked_count, checked_quantity

CONFIG_NAME = "drc.toml"
# A config is a few kilobytes; anything near this is not one (a fixed limit).
MAX_CONFIG_BYTES = 16 * 1024 * 1024
PYPROJECT_NAME = "pyproject.toml"
CONTACT_FORMS = ("SPST-NO", "SPST-NC", "SPDT")
PULL_DIRECTIONS = ("up", "down")
ESERIES = ("E3", "E6", "E12", "E24", "E48", "E96", "E192")

_TOP_KEYS = ("fail-level", "default-bounce", "eseries", "only-rules", "skip-rules", "include",
             "tolerances", "rails", "contacts", "parts", "mcu", "limits", "severity", "waivers")
_TOLERANCE_KEYS = ("resistor", "capacitor", "rail")
_RAIL_KEYS = ("net", "voltage", "tolerance")
_CONTACT_KEYS = ("designator", "class", "bounce", "form", "board")
_PART_KEYS = ("designator", "part-number", "family", "pins", "board")
_MCU_KEYS = ("designator", "family", "supply", "supply-pins", "ground-pins", "pins", "board")
_PIN_KEYS = ("pin", "family", "schmitt", "pull", "pull-min", "pull-max", "debounce", "supply",
             "edge-sensitive")
_WAIVER_KEYS = ("rule", "parts-any", "parts-all", "reason", "author", "expires", "board")
_PARTS_KEYS = {"parts-any": PartsMatch.ANY, "parts-all": PartsMatch.ALL}
_OLD_PARTS = ("'parts' does not say whether it means any or all of its designators: write "
              "parts-any = [...] to waive each finding that involves one of them, or "
              "parts-all = [...] to waive only a finding that involves every one")

KeyPath = tuple[str | int, ...]
# The limit keys a config may set: each mapped to a dimension or unit, or to a
# (unit, range) pair (drc.units.Range); a plain list leaves the units open.
LimitKeys = Mapping[str, str | tuple[str, str]] | tuple[str, ...] | None

# limit_keys may map a key to a dimension or to the unit rules/limits.toml gives it
# (or to a (unit, range) pair); ratios ("1", a fraction of VCC) read as fractions.
_UNIT_DIMENSIONS = {"s": "time", "A": "current", "V": "voltage", "ohm": "resistance",
                    "Ω": "resistance", "F": "capacitance", "1": "ratio", "VCC": "ratio",
                    "": "ratio", "number": "ratio"}


# ---------------------------------------------------------------- discovery

def _has_tool_drc(pyproject: Path) -> bool:
    import tomllib

    try:
        text = _decode(read_regular(str(pyproject), str(pyproject), MAX_CONFIG_BYTES,
                                    ConfigError, None), str(pyproject))
        data = tomllib.loads(text)
    except ConfigError:
        return False
    except (tomllib.TOMLDecodeError, RecursionError, ValueError):
        # A broken pyproject that mentions our table is ours to report, not to skip.
        return "tool.drc" in text
    return isinstance(data.get("tool"), dict) and "drc" in data["tool"]


def discover_config(board_path: str | os.PathLike) -> Path | None:
    """The config governing `board_path`: nearest drc.toml or pyproject.toml with [tool.drc].

    Walks up from the board's folder and stops after the repository root (a
    folder holding .git) or at the filesystem root. None when there is none.
    """
    start = Path(board_path).resolve()
    folder = start if start.is_dir() else start.parent
    for candidate in (folder, *folder.parents):
        config = candidate / CONFIG_NAME
        if config.is_file():
            return config
        pyproject = candidate / PYPROJECT_NAME
        if pyproject.is_file() and _has_tool_drc(pyproject):
            return pyproject
        if (candidate / ".git").exists():
            return None
    return None


# ---------------------------------------------------------------- positions

_HEADER = re.compile(r"^\s*(\[\[|\[)\s*([^\]]+?)\s*\]\]?\s*(#.*)?$")
_KEY_PART = r"""(?:"[^"]*"|'[^']*'|[A-Za-z0-9_\-]+)"""
_ASSIGN = re.compile(rf"^\s*({_KEY_PART}(?:\s*\.\s*{_KEY_PART})*)\s*=")


def _split_dotted(text: str) -> list[str]:
    parts = re.findall(r"""\s*("[^"]*"|'[^']*'|[A-Za-z0-9_\-]+)\s*\.?""", text)
    return [p[1:-1] if p[:1] in "\"'" else p for p in parts]


def key_lines(text: str) -> dict[KeyPath, int]:
    """Map each table header and key assignment of a TOML text to its 1-based line.

    Arrays of tables get their element index in the path, so ("rails", 1,
    "voltage") is the voltage of the second [[rails]]. A light scan, not a
    parser: values spanning several lines or inline tables map to their first line.
    """
    lines: dict[KeyPath, int] = {}
    last_index: dict[KeyPath, int] = {}
    current: KeyPath = ()
    in_multiline = False
    for number, line in enumerate(text.splitlines(), 1):
        stripped = line.strip()
        if in_multiline:
            if stripped.count('"""') % 2 == 1 or stripped.count("'''") % 2 == 1:
                in_multiline = False
            continue
        if not stripped or stripped.startswith("#"):
            continue
        header = _HEADER.match(line)
        if header and not _ASSIGN.match(line):
            names = _split_dotted(header.group(2))
            path: list[str | int] = []
            for i, name in enumerate(names):
                path.append(name)
                if i < len(names) - 1 and tuple(path) in last_index:
                    path.append(last_index[tuple(path)])
            if header.group(1) == "[[":
                key = tuple(path)
                last_index[key] = last_index.get(key, -1) + 1
                path.append(last_index[key])
            current = tuple(path)
            lines.setdefault(current, number)
            continue
        assign = _ASSIGN.match(line)
        if assign:
            lines.setdefault(current + tuple(_split_dotted(assign.group(1))), number)
            rest = line[assign.end():]
            if rest.count('"""') == 1 or rest.count("'''") == 1:
                in_multiline = True
    return lines


def dotted(path: KeyPath) -> str:
    """("rails", 0, "voltage") -> "rails[0].voltage"."""
    out = ""
    for part in path:
        out += f"[{part}]" if isinstance(part, int) else (f".{part}" if out else str(part))
    return out


# ---------------------------------------------------------------- reading

class _ConfigReader:
    """Typed access to one config table tree, with located errors."""

    def __init__(self, path: str, text: str, prefix: KeyPath) -> None:
        self.path = path
        self.prefix = prefix
        self.lines = key_lines(text)

    def location(self, path: KeyPath) -> SourceLocation:
        full = self.prefix + path
        while full:
            if full in self.lines:
                return SourceLocation(self.path, self.lines[full])
            full = full[:-1]
        return SourceLocation(self.path)

    def error(self, path: KeyPath, message: str) -> ConfigError:
        return ConfigError(f"{dotted(self.prefix + path)}: {message}", self.location(path))

    def table(self, value: Any, path: KeyPath, allowed: Iterable[str]) -> dict:
        allowed = tuple(allowed)
        if not isinstance(value, dict):
            raise self.error(path, f"expected a table, got {_type_name(value)}")
        for key in value:
            if key not in allowed:
                nearest = suggest(key, allowed)
                hint = f"; did you mean {nearest!r}?" if nearest else f"; allowed: {', '.join(allowed)}"
                raise self.error(path + (key,), f"unknown key {key!r}{hint}")
        return value

    def tables(self, value: Any, path: KeyPath, allowed: Iterable[str]) -> list[dict]:
        if not isinstance(value, list):
            raise self.error(path, f"expected an array of tables ([[{dotted(path)}]]), got {_type_name(value)}")
        return [self.table(item, path + (i,), allowed) for i, item in enumerate(value)]

    def require(self, table: dict, path: KeyPath, key: str) -> Any:
        if key not in table:
            raise self.error(path, f"missing required key {key!r}")
        return table[key]

    def string(self, value: Any, path: KeyPath, choices: Iterable[str] | None = None,
               what: str = "value") -> str:
        if not isinstance(value, str) or not value.strip():
            raise self.error(path, f"expected a non-empty string, got {_type_name(value)}")
        if choices is not None:
            choices = tuple(choices)
            if value not in choices:
                nearest = suggest(value, choices)
                hint = f"; did you mean {nearest!r}?" if nearest else ""
                raise self.error(path, f"unknown {what} {value!r}; expected one of "
                                       f"{', '.join(choices)}{hint}")
        return value

    def strings(self, value: Any, path: KeyPath, *, non_empty: bool = False) -> tuple[str, ...]:
        if not isinstance(value, list) or not all(isinstance(v, str) and v.strip() for v in value):
            raise self.error(path, f"expected a list of strings, e.g. [\"SW1\"], got {_type_name(value)}")
        if non_empty and not value:
            raise self.error(path, "expected at least one entry")
        return tuple(value)

    def boolean(self, value: Any, path: KeyPath) -> bool:
        if not isinstance(value, bool):
            raise self.error(path, f"expected true or false, got {_type_name(value)}")
        return value

    def integer(self, value: Any, path: KeyPath, minimum: int = 1) -> int:
        try:
            return checked_count(value, minimum=minimum)
        except ConfigError as exc:
            raise self.error(path, exc.message) from None

    def integers(self, value: Any, path: KeyPath) -> tuple[int, ...]:
        if not isinstance(value, list):
            raise self.error(path, f"expected a list of pin numbers, got {_type_name(value)}")
        return tuple(self.integer(v, path + (i,)) for i, v in enumerate(value))

    def quantity(self, value: Any, path: KeyPath, dimension: str,
                 allowed: Range = Range.POSITIVE) -> float:
        """A quantity through the one validator (drc.units.checked_quantity)."""
        if isinstance(value, bool) or not isinstance(value, (int, float, str)):
            raise self.error(path, f"expected a {dimension} such as \"5 ms\" or \"3.3 V\", "
                                   f"got {_type_name(value)}")
        try:
            return checked_quantity(value, dimension, allowed=allowed)
        except ConfigError as exc:
            raise self.error(path, exc.message) from None


def _type_name(value: Any) -> str:
    names = {bool: "a boolean", int: "an integer", float: "a number", str: "a string",
             list: "an array", dict: "a table"}
    return names.get(type(value), type(value).__name__)


# ---------------------------------------------------------------- sections

def _tolerances(r: _ConfigReader, value: Any) -> Tolerances:
    table = r.table(value, ("tolerances",), _TOLERANCE_KEYS)
    defaults = Tolerances()
    return Tolerances(**{
        key: (r.quantity(table[key], ("tolerances", key), "fraction", Range.FRACTION)
              if key in table else getattr(defaults, key))
        for key in _TOLERANCE_KEYS})


def _rails(r: _ConfigReader, value: Any, tolerances: Tolerances) -> tuple[RailConfig, ...]:
    out: list[RailConfig] = []
    seen: set[str] = set()
    for i, t in enumerate(r.tables(value, ("rails",), _RAIL_KEYS)):
        p = ("rails", i)
        net = r.string(r.require(t, p, "net"), p + ("net",))
        if net.casefold() in seen:
            raise r.error(p + ("net",), f"rail {net!r} is declared twice")
        seen.add(net.casefold())
        volts = r.quantity(r.require(t, p, "voltage"), p + ("voltage",), "voltage", Range.FINITE)
        tol = (r.quantity(t["tolerance"], p + ("tolerance",), "fraction", Range.FRACTION)
               if "tolerance" in t else tolerances.rail)
        out.append(RailConfig(net=net, voltage=volts, tolerance=tol))
    return tuple(out)


def _contacts(r: _ConfigReader, value: Any, classes: tuple[str, ...] | None) -> tuple[ContactConfig, ...]:
    out = []
    for i, t in enumerate(r.tables(value, ("contacts",), _CONTACT_KEYS)):
        p = ("contacts", i)
        pattern = r.string(r.require(t, p, "designator"), p + ("designator",))
        cls = (r.string(t["class"], p + ("class",), classes, what="contact class")
               if "class" in t else None)
        bounce = r.quantity(t["bounce"], p + ("bounce",), "time") if "bounce" in t else None
        form = r.string(t["form"], p + ("form",), CONTACT_FORMS, what="contact form") if "form" in t else None
        if cls is None and bounce is None and form is None:
            raise r.error(p, "a contact entry needs at least one of 'class', 'bounce', 'form'")
        out.append(ContactConfig(pattern=pattern, contact_class=cls, bounce_s=bounce, form=form,
                                 boards=_boards(r, t, p), origin=str(r.location(p))))
    return tuple(out)


def _boards(r: _ConfigReader, t: dict, p: KeyPath) -> tuple[str, ...] | None:
    """An entry's `board`: one board path glob or a list of them (None: every board)."""
    if "board" not in t:
        return None
    value = t["board"]
    if isinstance(value, str):
        return (r.string(value, p + ("board",)),)
    return r.strings(value, p + ("board",), non_empty=True)


def _parts(r: _ConfigReader, value: Any, families: tuple[str, ...] | None) -> tuple[PartConfig, ...]:
    out = []
    for i, t in enumerate(r.tables(value, ("parts",), _PART_KEYS)):
        p = ("parts", i)
        pattern = r.string(r.require(t, p, "designator"), p + ("designator",))
        number = r.string(t["part-number"], p + ("part-number",)) if "part-number" in t else None
        family = (r.string(t["family"], p + ("family",), families, what="logic family")
                  if "family" in t else None)
        pins = r.strings(t["pins"], p + ("pins",), non_empty=True) if "pins" in t else None
        if number is None and family is None and pins is None:
            raise r.error(p, "a part entry needs 'part-number', 'family' or 'pins'")
        out.append(PartConfig(pattern=pattern, part_number=number, family=family, pins=pins,
                              boards=_boards(r, t, p), origin=str(r.location(p))))
    return tuple(out)


def _mcu_pin(r: _ConfigReader, t: dict, p: KeyPath, mcu_family: str, mcu_supply: float | None,
             families: tuple[str, ...] | None) -> McuPinConfig:
    pin = r.integer(r.require(t, p, "pin"), p + ("pin",))
    family = r.string(t["family"], p + ("family",), families, what="logic family") if "family" in t else mcu_family
    # Checked against PULL_DIRECTIONS: one of the PullChoice literals.
    pull = cast("PullChoice | None", r.string(t["pull"], p + ("pull",), PULL_DIRECTIONS, what="pull direction")
                if "pull" in t else None)
    pull_min = r.quantity(t["pull-min"], p + ("pull-min",), "resistance") if "pull-min" in t else None
    pull_max = r.quantity(t["pull-max"], p + ("pull-max",), "resistance") if "pull-max" in t else None
    if pull is not None and (pull_min is None or pull_max is None):
        raise r.error(p + ("pull",), "an internal pull needs its range: 'pull-min' and 'pull-max'")
    if pull is None and (pull_min is not None or pull_max is not None):
        raise r.error(p, "'pull-min'/'pull-max' given without 'pull' (\"up\" or \"down\")")
    if pull_min is not None and pull_max is not None and pull_min > pull_max:
        raise r.error(p + ("pull-min",), "pull-min is larger than pull-max")
    return McuPinConfig(
        part="", pin=pin, family=family,
        schmitt=r.boolean(t["schmitt"], p + ("schmitt",)) if "schmitt" in t else True,
        pull=pull, pull_min_ohms=pull_min, pull_max_ohms=pull_max,
        debounce_s=r.quantity(t["debounce"], p + ("debounce",), "time") if "debounce" in t else None,
        supply_v=r.quantity(t["supply"], p + ("supply",), "voltage") if "supply" in t else mcu_supply,
        edge_sensitive=r.boolean(t["edge-sensitive"], p + ("edge-sensitive",)) if "edge-sensitive" in t else False,
    )


def _mcus(r: _ConfigReader, value: Any, families: tuple[str, ...] | None) -> tuple[McuConfig, ...]:
    out = []
    for i, t in enumerate(r.tables(value, ("mcu",), _MCU_KEYS)):
        p = ("mcu", i)
        part = r.string(r.require(t, p, "designator"), p + ("designator",))
        family = r.string(r.require(t, p, "family"), p + ("family",), families, what="logic family")
        supply = r.quantity(t["supply"], p + ("supply",), "voltage") if "supply" in t else None
        pins = []
        seen: set[int] = set()
        for j, pt in enumerate(r.tables(t.get("pins", []), p + ("pins",), _PIN_KEYS)):
            pin = _mcu_pin(r, pt, p + ("pins", j), family, supply, families)
            if pin.pin in seen:
                raise r.error(p + ("pins", j, "pin"), f"pin {pin.pin} of {part} is declared twice")
            seen.add(pin.pin)
            pins.append(replace(pin, part=part))
        out.append(McuConfig(
            part=part, family=family, supply_v=supply, pins=tuple(pins),
            supply_pins=r.integers(t["supply-pins"], p + ("supply-pins",)) if "supply-pins" in t else (),
            ground_pins=r.integers(t["ground-pins"], p + ("ground-pins",)) if "ground-pins" in t else (),
            boards=_boards(r, t, p), origin=str(r.location(p)),
        ))
    return tuple(out)


def _limits(r: _ConfigReader, value: Any, limit_keys: LimitKeys) -> dict[str, float]:
    """[limits] overrides, each through the validator of its quantity and within its
    range (rules/limits.toml): a negative or zero margin must not turn a rule off."""
    table = r.table(value, ("limits",), limit_keys if limit_keys is not None else value.keys()
                    if isinstance(value, dict) else ())
    out: dict[str, float] = {}
    for key, raw in table.items():
        spec = limit_keys.get(key) if isinstance(limit_keys, Mapping) else None
        unit, allowed = spec if isinstance(spec, tuple) else (spec, Range.POSITIVE.value)
        dimension = _UNIT_DIMENSIONS.get(unit, unit) if unit is not None else "ratio"
        if isinstance(raw, bool) or not isinstance(raw, (int, float, str)):
            raise r.error(("limits", key), f"expected a number or a quantity such as \"20 ms\", "
                                           f"got {_type_name(raw)}")
        out[key] = r.quantity(raw, ("limits", key), dimension, Range(allowed))
    return out


def _severities(r: _ConfigReader, value: Any, rule_ids: tuple[str, ...] | None) -> dict[str, str]:
    table = r.table(value, ("severity",), value.keys() if isinstance(value, dict) else ())
    out = {}
    for key, raw in table.items():
        if rule_ids is not None and key not in rule_ids:
            raise r.error(("severity", key), unknown_name_message("rule id", key, rule_ids))
        out[key] = r.string(raw, ("severity", key), SEVERITIES, what="severity")
    return out


def _rule_list(r: _ConfigReader, value: Any, key: str, rule_ids: tuple[str, ...] | None) -> tuple[str, ...]:
    ids = r.strings(value, (key,))
    for i, rule_id in enumerate(ids):
        if rule_ids is not None and rule_id not in rule_ids:
            raise r.error((key, i), unknown_name_message("rule id", rule_id, rule_ids))
    return ids


def read_date(value: Any) -> date | None:
    """A TOML date, datetime or "YYYY-MM-DD" string as a date; None when unreadable."""
    if isinstance(value, datetime):
        return value.date()
    if isinstance(value, date):
        return value
    if isinstance(value, str):
        try:
            return date.fromisoformat(value.strip())
        except ValueError:
            return None
    return None


def _waivers(r: _ConfigReader, value: Any, rule_ids: tuple[str, ...] | None) -> tuple[Waiver, ...]:
    out = []
    for i, raw in enumerate(value if isinstance(value, list) else ()):
        if isinstance(raw, dict) and "parts" in raw:  # the old, ambiguous key: say what to write
            raise r.error(("waivers", i, "parts"), _OLD_PARTS)
    for i, t in enumerate(r.tables(value, ("waivers",), _WAIVER_KEYS)):
        p = ("waivers", i)
        rule = r.string(r.require(t, p, "rule"), p + ("rule",))
        given = [key for key in _PARTS_KEYS if key in t]
        if len(given) != 1:
            raise r.error(p, "a waiver needs exactly one of 'parts-any' (any one of the designators) "
                             "and 'parts-all' (every designator in the one finding)")
        if rule_ids is not None and rule not in rule_ids:
            raise r.error(p + ("rule",), unknown_name_message("rule id", rule, rule_ids))
        expires_raw = r.require(t, p, "expires")
        location = r.location(p)
        out.append(Waiver(
            rule=rule,
            parts=r.strings(t[given[0]], p + (given[0],), non_empty=True), match=_PARTS_KEYS[given[0]],
            reason=r.string(r.require(t, p, "reason"), p + ("reason",)),
            author=r.string(r.require(t, p, "author"), p + ("author",)),
            expires=read_date(expires_raw),  # unreadable -> None -> counts as expired
            board=r.string(t["board"], p + ("board",)) if "board" in t else None,
            origin=str(location),
        ))
    return tuple(out)


# ---------------------------------------------------------------- loading

def _decode(data: bytes, shown: str) -> str:
    """Config text: UTF-8 (a BOM is dropped) or BOM-marked UTF-16; else a located error."""
    import codecs

    if data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        try:
            return data.decode("utf-16")
        except UnicodeDecodeError as exc:
            raise ConfigError(f"the config file has a UTF-16 byte-order mark but is not valid "
                              f"UTF-16 ({exc.reason})", SourceLocation(shown)) from None
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        before = data[:exc.start]
        line = before.count(b"\n") + 1
        column = exc.start - (before.rfind(b"\n") + 1) + 1
        raw = data.splitlines()[line - 1].decode("utf-8", "replace") if data else None
        raise ConfigError(f"the file is not UTF-8 text (byte 0x{data[exc.start]:02x}); "
                          "save it as UTF-8", SourceLocation(shown, line, column), raw) from None


def _read_toml(path: Path) -> tuple[str, dict]:
    import tomllib

    text = _decode(read_regular(str(path), str(path), MAX_CONFIG_BYTES, ConfigError, None),
                   str(path))
    if "\x00" in text:
        for number, raw in enumerate(text.splitlines(), 1):
            if "\x00" in raw:
                raise ConfigError("NUL byte in the config file (is this a binary file?)",
                                  SourceLocation(str(path), number, raw.index("\x00") + 1), raw)
    try:
        return text, tomllib.loads(text)
    except RecursionError:
        raise ConfigError("not valid TOML: arrays or inline tables nest too deeply",
                          SourceLocation(str(path))) from None
    except tomllib.TOMLDecodeError as exc:
        raise _toml_error(path, text, exc) from None
    except ValueError:  # an integer too long to convert (tomllib lets int() raise)
        message, location, source = long_number(text, str(path))
        raise ConfigError(f"not valid TOML: {message}", location, source) from None


def _toml_error(path: Path, text: str, exc: Exception) -> ConfigError:
    """The located error of a TOML syntax error."""
    message = str(exc)
    found = re.search(r"\(at line (\d+), column (\d+)\)", message)
    line, column = (int(found.group(1)), int(found.group(2))) if found else (0, 0)
    message = re.sub(r"\s*\(at (line \d+, column \d+|end of document)\)", "", message)
    lines = text.splitlines()
    source = lines[line - 1] if 0 < line <= len(lines) else None
    return ConfigError(f"not valid TOML: {message}", SourceLocation(str(path), line, column), source)


def load_config(path: str | os.PathLike, *, rule_ids: Iterable[str] | None = None,
                limit_keys: Mapping[str, str | tuple[str, str]] | Iterable[str] | None = None,
                contact_classes: Iterable[str] | None = None,
                families: Iterable[str] | None = None) -> Config:
    """Read `drc.toml` (or the [tool.drc] table of a pyproject.toml) into a Config.

    The optional vocabularies are what the caller's library knows: rule ids
    (only-rules, skip-rules, severity, waivers), limit keys (a list, or a mapping
    key -> dimension such as "time" or "number"), contact classes and logic
    families. Where one is None, those names are not checked here.
    """
    file = Path(path)
    text, data = _read_toml(file)
    data, prefix = _drc_table(file, data)
    reader = _ConfigReader(str(file), text, prefix)
    vocabulary = _Vocabulary(
        rule_ids=tuple(sorted(rule_ids)) if rule_ids is not None else None,
        limit_keys=(limit_keys if limit_keys is None or isinstance(limit_keys, Mapping)
                    else tuple(limit_keys)),
        contact_classes=tuple(contact_classes) if contact_classes is not None else None,
        families=tuple(families) if families is not None else None)
    return _config(reader, reader.table(data, (), _TOP_KEYS), file, vocabulary)


@dataclass(frozen=True, slots=True)
class _Vocabulary:
    """The names a config may use, where the caller knows them (None: not checked)."""

    rule_ids: tuple[str, ...] | None
    limit_keys: LimitKeys
    contact_classes: tuple[str, ...] | None
    families: tuple[str, ...] | None


def _drc_table(file: Path, data: dict) -> tuple[Any, KeyPath]:
    """The drc settings of a file and their key path: all of drc.toml, or pyproject's [tool.drc]."""
    if file.name != PYPROJECT_NAME:
        return data, ()
    tool = data.get("tool", {})
    if not isinstance(tool, dict) or "drc" not in tool:
        raise ConfigError("pyproject.toml has no [tool.drc] table", SourceLocation(str(file)))
    return tool["drc"], ("tool", "drc")


def _config(r: _ConfigReader, data: dict, file: Path, v: _Vocabulary) -> Config:
    """The Config of a checked top-level table; sections read in the order of the record."""

    def section(key: str, read: Callable[[Any], Any], default: Any) -> Any:
        return read(data[key]) if key in data else default

    tolerances = section("tolerances", lambda t: _tolerances(r, t), Tolerances())
    base = file.parent
    return Config(
        path=str(file),
        rails=section("rails", lambda t: _rails(r, t, tolerances), ()),
        contacts=section("contacts", lambda t: _contacts(r, t, v.contact_classes), ()),
        parts=section("parts", lambda t: _parts(r, t, v.families), ()),
        mcus=section("mcu", lambda t: _mcus(r, t, v.families), ()),
        tolerances=tolerances,
        default_bounce_s=section("default-bounce",
                                 lambda t: r.quantity(t, ("default-bounce",), "time"), None),
        limits=section("limits", lambda t: _limits(r, t, v.limit_keys), {}),
        severities=section("severity", lambda t: _severities(r, t, v.rule_ids), {}),
        only_rules=section("only-rules", lambda t: _rule_list(r, t, "only-rules", v.rule_ids), ()),
        skip_rules=section("skip-rules", lambda t: _rule_list(r, t, "skip-rules", v.rule_ids), ()),
        include_folders=section(
            "include", lambda t: tuple(str(base / p) for p in r.strings(t, ("include",))), ()),
        waivers=section("waivers", lambda t: _waivers(r, t, v.rule_ids), ()),
        fail_level=section("fail-level",
                           lambda t: r.string(t, ("fail-level",), SEVERITIES, what="severity"), None),
        eseries=section("eseries", lambda t: r.string(t, ("eseries",), ESERIES, what="E-series"), "E24"),
    )
